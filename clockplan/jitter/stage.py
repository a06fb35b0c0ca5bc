"""The jitter budget stage: RMS jitter per consumer, against its budget, with the dominant contributor.

:func:`jitter_stage` runs in :data:`clockplan.analysis.STAGES`. For every
consumer whose chain has the noise data (:mod:`clockplan.jitter.tree`):

- **band**: the consumer's budget band (its standard's ``jitter_band``, or the
  board's); without one, the default 12 kHz..20 MHz (the band clock datasheets
  usually quote, common practice) with its upper edge capped at half the
  consumer's frequency, stated in the result's notes;
- **budget**: the RMS limit of the budget, or its peak-to-peak limit read as
  Gaussian at a bit error ratio of 1e-12 (:meth:`StandardBudget.jitter_rms_limit_s`);
  a consumer without one still gets its jitter, with no verdict;
- the :class:`~clockplan.jitter.consumer.ConsumerJitter` goes on
  ``ConsumerResult.jitter``.

Findings:

``jitter-budget`` (error, on the consumer)
    the RMS jitter exceeds the budget; names the dominant contributor and
    what would lower it.
``jitter-data`` (info, on the part lacking data)
    jitter not computed (no reference phase noise, no PLL loop) for consumers
    that have a budget, or computed without a part's own noise (a PLL without
    its noise figures, a buffer without additive jitter), so it is optimistic.
``jitter-extrapolated`` (warning, on the reference or PLL whose listed phase noise ends)
    a consumer's band, or the loop shaping the noise, reaches outside a
    reference's or a VCO's listed offsets, and what is read there (the
    ``"conservative"`` extension of :mod:`clockplan.jitter.profile`) carries
    at least :data:`EXTRAPOLATED_SHARE` of the consumer's jitter variance; names
    the part, its listed range, each consumer's band and the share.

Every figure is a planning estimate: the part datasheets and the governing
standard decide.
"""

from __future__ import annotations

import dataclasses
import math
from fractions import Fraction
from typing import TYPE_CHECKING, Any

import numpy as np

from clockplan.findings import Finding, Severity
from clockplan.jitter.chain import log_grid
from clockplan.jitter.consumer import ConsumerJitter, format_band
from clockplan.jitter.tree import BoardNoise, MissingNoiseData, NodeNoise
from clockplan.standards.model import gaussian_pp_per_rms
from clockplan.units import format_frequency, format_time

if TYPE_CHECKING:
    from clockplan.analysis import Analysis, AnalysisOptions
    from clockplan.parts import Consumer

__all__ = [
    "DEFAULT_BAND_HZ",
    "EXTRAPOLATED_SHARE",
    "KIND_TEXT",
    "FIXES",
    "BandPlan",
    "band_plan",
    "jitter_stage",
]

#: Integration band when a consumer's budget gives none (common practice: the
#: band clock datasheets usually quote RMS jitter over).
DEFAULT_BAND_HZ = (12e3, 20e6)

#: Share of a consumer's jitter variance read from outside a profile's listed
#: offsets from which ``jitter-extrapolated`` warns (1 % of the variance, about
#: 0.5 % of the RMS jitter: below it the reading cannot move a planning verdict).
EXTRAPOLATED_SHARE = 0.01

#: Each kind of contributor in words.
KIND_TEXT = {
    "reference": "reference noise",
    "pll floor": "PLL in-band floor",
    "vco": "VCO noise",
    "modulator": "fractional-N modulator noise",
    "loop filter": "loop-filter resistor noise",
    "output floor": "PLL output noise floor",
    "divider floor": "divider noise floor",
    "buffer": "buffer additive jitter",
}

#: What lowers each kind of contributor (for the ``jitter-budget`` finding).
FIXES = {
    "reference": "a quieter reference oscillator, or a PLL with a narrow loop after it to clean it",
    "pll floor": "a PLL with a better figure of merit, a higher PFD frequency (smaller N), or a narrower loop bandwidth",
    "vco": "a quieter VCO, or a wider loop bandwidth (the loop suppresses VCO noise inside it)",
    "modulator": "a higher PFD frequency, a narrower loop or a higher-order loop filter, or an integer-N plan",
    "loop filter": "smaller loop-filter resistors (a higher charge-pump current lets the design use them)",
    "output floor": "an output stage with a lower noise floor (a flat floor counts over the whole band)",
    "divider floor": "a divider with a lower additive noise floor",
    "buffer": "a buffer with less additive jitter, or fewer buffer stages",
}


@dataclasses.dataclass(frozen=True)
class BandPlan:
    """How one consumer's jitter is judged: band, budget, where the band comes from, notes."""

    band_hz: tuple[float, float]
    budget_s: float | None
    source: str
    notes: tuple[str, ...] = ()


def band_plan(consumer: "Consumer", clock_hz: Fraction | None) -> BandPlan | None:
    """The band and budget ``consumer`` is judged by, or None when no band can be formed.

    Examples
    --------
    >>> from fractions import Fraction
    >>> from clockplan.parts import Consumer
    >>> plan = band_plan(Consumer("c", "src", Fraction(3_840_000)), Fraction(3_840_000))
    >>> plan.band_hz, plan.budget_s, plan.source
    ((12000.0, 1920000.0), None, 'default')
    """
    budget = consumer.budget
    limit = budget.jitter_rms_limit_s() if budget is not None else None
    notes: list[str] = []
    if budget is not None and budget.jitter_rms_s is None and budget.jitter_pp_s is not None:
        notes.append(
            f"The peak-to-peak limit {format_time(budget.jitter_pp_s)} is read as "
            f"{format_time(limit)} RMS (÷{gaussian_pp_per_rms():.2f}, Gaussian at a bit error ratio of 1e-12): "
            "right for random jitter only."
        )
    if budget is not None and budget.jitter_band_hz is not None:
        band = (float(budget.jitter_band_hz[0]), float(budget.jitter_band_hz[1]))
        source = "board" if budget.key == "inline" or "jitter_band" in budget.overridden else "standard"
        return BandPlan(band, limit, source, tuple(notes))
    high = min(DEFAULT_BAND_HZ[1], float(clock_hz if clock_hz is not None else consumer.frequency) / 2)
    if high <= DEFAULT_BAND_HZ[0]:
        return None
    band = (DEFAULT_BAND_HZ[0], high)
    notes.append(
        f"No jitter band given: integrated over {format_band(band)} (the default 12 kHz..20 MHz, "
        "capped at half the clock frequency); give jitter_band for the consumer's own band."
    )
    return BandPlan(band, limit, "default", tuple(notes))


def _analysis_grid(plans: dict[str, BandPlan | None]) -> Any:
    """The base grid every chain starts from: 50 points per decade and every band edge.

    It spans 1 Hz (or the lowest band edge) to the highest band edge (1 GHz
    without bands); each chain then adds what it carries (listed offsets, loop
    corners) and refines itself (:mod:`clockplan.jitter.chain`).
    """
    bands = [p.band_hz for p in plans.values() if p is not None]
    low = min([1.0] + [b[0] for b in bands])
    high = max(b[1] for b in bands) if bands else 1e9
    # 50 points per decade from a whole decade, so the grid holds 1, 10, 100 Hz...
    base = log_grid(10.0 ** math.floor(math.log10(low)), 10.0 ** math.ceil(math.log10(high)))
    base = base[(base > low) & (base < high)]
    return np.union1d(base, [low, high] + [edge for band in bands for edge in band])


def _budget_finding(consumer_id: str, jitter: ConsumerJitter) -> Finding:
    budget = jitter.budget_seconds
    assert budget is not None and jitter.margin_seconds is not None
    share = jitter.result.shares()[jitter.dominant]
    kind = jitter.dominant_kind
    message = (
        f"RMS jitter {format_time(jitter.rms_seconds)} over {format_band(jitter.band_hz)} exceeds the "
        f"{format_time(budget)} budget by {format_time(-jitter.margin_seconds)}; dominant: {jitter.dominant} "
        f"({KIND_TEXT.get(kind, kind)}, {share * 100:.0f} % of the jitter variance); "
        f"to fix: {FIXES.get(kind, 'a quieter part there')}"
    )
    return Finding(Severity.ERROR, "jitter-budget", consumer_id, message)


def _data_findings(
    missing: dict[str, tuple[MissingNoiseData, list[str]]], unmodelled: dict[str, tuple[str, list[str]]]
) -> list[Finding]:
    findings = []
    for part, (gap, consumers) in missing.items():
        findings.append(
            Finding(
                Severity.INFO,
                "jitter-data",
                part,
                f"{gap.message}: jitter not computed, so the jitter budgets of {', '.join(consumers)} "
                f"are not checked; {gap.hint}",
            )
        )
    for part, (text, consumers) in unmodelled.items():
        findings.append(
            Finding(
                Severity.INFO,
                "jitter-data",
                part,
                f"{text}, so the jitter of {', '.join(consumers)} is optimistic; "
                "give the figures from the datasheet (docs/jitter.md)",
            )
        )
    return findings


@dataclasses.dataclass
class _Outside:
    """What a part's listed phase noise leaves out, per consumer (for ``jitter-extrapolated``)."""

    kind: str
    listed_hz: tuple[float, float]
    consumers: list[tuple[str, tuple[float, float], float]] = dataclasses.field(default_factory=list)


def _extrapolated(noise: NodeNoise, jitter: ConsumerJitter) -> list[tuple[str, str, tuple[float, float], float]]:
    """``(part, kind, listed range, share of the variance)`` for each material extrapolated contributor."""
    chain = noise.chain
    listed = chain.listed_hz
    low, high = jitter.band_hz
    if not ((low < listed[:, 0]) | (high > listed[:, 1])).any():
        return []
    total = jitter.result.rms_phase_rad**2 / 2.0  # single-sideband power, spurs included
    if not total > 0:
        return []
    outside = chain.extrapolated_power(low, high) / total
    found = []
    for j in np.flatnonzero(outside >= EXTRAPOLATED_SHARE):
        name = chain.names[j]
        kind, part = noise.kinds.get(name, ("", name))
        found.append((part, kind, (float(listed[j, 0]), float(listed[j, 1])), float(outside[j])))
    return found


def _extrapolation_findings(outside: dict[str, _Outside]) -> list[Finding]:
    findings = []
    for part, gap in outside.items():
        what = "its VCO's phase noise" if gap.kind == "vco" else "its phase noise"
        reaches = "; ".join(
            f"{consumer} over {format_band(band)}: {share * 100:.1f} % of its jitter variance"
            for consumer, band, share in gap.consumers
        )
        message = (
            f"{part}: {what} is listed only from {format_frequency(gap.listed_hz[0])} "
            f"to {format_frequency(gap.listed_hz[1])}, "
            f"but the jitter bands (or the loop shaping the noise) reach outside it ({reaches}); there the noise is "
            "extrapolated (below the first point at the first segment's slope, rising at least 20 dB/decade toward "
            "the carrier; beyond the last point held, or still rising), an assumption; list the phase noise over "
            "the whole band from the datasheet (docs/jitter.md)"
        )
        findings.append(Finding(Severity.WARNING, "jitter-extrapolated", part, message))
    return findings


def _consumer_jitter(noise: NodeNoise, plan: BandPlan) -> ConsumerJitter:
    result = noise.chain.jitter(*plan.band_hz, budget_seconds=plan.budget_s)
    notes = plan.notes + tuple(dict.fromkeys(f"{text}." for _, text in noise.unmodelled))
    return ConsumerJitter(result, noise.chain, noise.kinds, plan.source, notes)


def jitter_stage(analysis: "Analysis", options: "AnalysisOptions") -> "Analysis":
    """Compute every consumer's RMS jitter and check it against its budget.

    Examples
    --------
    >>> from clockplan.analysis import AnalysisOptions, analyze  # doctest: +SKIP
    >>> analysis = jitter_stage(analyze(board), AnalysisOptions())  # doctest: +SKIP
    >>> analysis.consumer("adc_clk").jitter.dominant  # doctest: +SKIP
    'conv_synth VCO'
    """
    board = analysis.board
    plans = {r.id: band_plan(board.part(r.id), r.actual_hz) for r in analysis.consumers}
    graph = analysis.graph
    if graph is None:
        from clockplan.graph import build_graph

        graph = build_graph(board)
    bands = {consumer: plan.band_hz for consumer, plan in plans.items() if plan is not None}
    model = BoardNoise(board, graph, analysis.frequencies, _analysis_grid(plans), bands=bands)
    missing: dict[str, tuple[MissingNoiseData, list[str]]] = {}
    unmodelled: dict[str, tuple[str, list[str]]] = {}
    outside: dict[str, _Outside] = {}
    findings: list[Finding] = []
    for result in analysis.consumers:
        plan = plans[result.id]
        noise = model.at(result.id)
        if isinstance(noise, MissingNoiseData):
            if not noise.unset and plan is not None and plan.budget_s is not None:
                missing.setdefault(noise.part, (noise, []))[1].append(result.id)
            continue
        if plan is None:
            continue
        jitter = _consumer_jitter(noise, plan)
        analysis = analysis.with_consumer(dataclasses.replace(result, jitter=jitter))
        for part, kind, listed, share in _extrapolated(noise, jitter):
            gap = outside.setdefault(part, _Outside(kind, listed))
            gap.consumers.append((result.id, jitter.band_hz, share))
        for part, text in noise.unmodelled:
            unmodelled.setdefault(part, (text, []))[1].append(result.id)
        if jitter.passes is False:
            findings.append(_budget_finding(result.id, jitter))
    return analysis.with_findings(findings + _extrapolation_findings(outside) + _data_findings(missing, unmodelled))
