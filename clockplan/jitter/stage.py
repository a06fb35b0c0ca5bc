"""The jitter budget stage: RMS jitter per consumer, against its budget, with the dominant contributor.

:func:`jitter_stage` runs in :data:`clockplan.analysis.STAGES`. For every
consumer whose chain has the noise data (:mod:`clockplan.jitter.tree`):

- **band**: the consumer's budget band (its standard's ``jitter_band``, or the
  board's); a sampling converter's clock (``converter = { snr, f_in }``)
  without one is integrated from :data:`CONVERTER_BAND_LOW_HZ` to half its
  sample rate (the clock's frequency), the band whose jitter limits the
  converter's SNR; any other clock without one over the default
  12 kHz..20 MHz (the band clock datasheets usually quote, common practice)
  with its upper edge capped at half the consumer's frequency; either way
  stated in the result's notes;
- **budget**: the RMS limit of the budget, or its peak-to-peak limit read as
  Gaussian at a bit error ratio of 1e-12 (:meth:`StandardBudget.jitter_rms_limit_s`);
  a consumer without one still gets its jitter, with no verdict;
- **spread**: a spread the consumer inherits counts with its time deviation in
  the band (:mod:`clockplan.jitter.spread`), unless the consumer's spread
  allowance covers it (its standard's jitter limit is defined with that spread
  on); a note says which;
- the :class:`~clockplan.jitter.consumer.ConsumerJitter` goes on
  ``ConsumerResult.jitter``.

Findings:

``jitter-budget`` (error, on the consumer)
    the RMS jitter exceeds the budget; names the dominant contributor and
    what would lower it.
``jitter-spread`` (error, on the consumer)
    the rest of the jitter cannot be computed, but the time deviation of a
    spread it inherits (and its allowance does not cover) already breaks the
    budget by itself; names the spreading part.
``jitter-data`` (on the part lacking data)
    info: jitter not computed (no reference phase noise, no PLL loop) for
    consumers that have a budget; warning: computed without a part's own
    noise (a PLL without its noise table, ``fom`` or VCO noise, a buffer
    without additive jitter), so it is optimistic.
``noise-assumed`` (warning, on the part)
    a figure the board leaves out (a PLL's ``output_floor`` or
    ``flicker_fom``, a divider's ``additive_noise``) is taken at its typical
    value (:data:`clockplan.jitter.tree.TYPICAL_FIGURES`), never as zero.
``loop-model`` (on a fractional-N PLL whose modulator noise is counted)
    which loop the modulator noise went through: a warning when the loop
    gives only a bandwidth and the usual third-order passive filter designed
    for it is assumed, info when the board names the model; ``loop_filter``
    gives the real parts.
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
from clockplan.jitter.result import JitterResult
from clockplan.jitter.spread import SQUARE_WAVE_FACTOR
from clockplan.jitter.tree import Assumption, BoardNoise, MissingNoiseData, NodeNoise
from clockplan.margins import format_margin_warning, is_thin
from clockplan.spreading import SpreadSource, spread_allowance, spreads_on_chain
from clockplan.standards.model import PEAK_TO_PEAK_BER, JitterLimit, gaussian_pp_per_rms
from clockplan.units import format_frequency, format_time

if TYPE_CHECKING:
    from clockplan.analysis import Analysis, AnalysisOptions
    from clockplan.parts import Consumer

__all__ = [
    "DEFAULT_BAND_HZ",
    "CONVERTER_BAND_LOW_HZ",
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

#: Low edge of a sampling converter's jitter band when it gives none. Phase noise
#: closer to the carrier than the analysis's frequency bin stays in the signal's
#: own bin and does not lower the measured SNR; 100 Hz sits below the bin of the
#: usual captures (tens of thousands of points at megasamples per second give bins
#: of hundreds of hertz and more), so the band errs on the side of counting too
#: much (common practice, stated here from memory). Its upper edge is half the
#: sample rate; clock noise beyond it folds back too and is not counted (a clock
#: with a high far-out floor needs a wider ``converter.jitter_band``).
CONVERTER_BAND_LOW_HZ = 100.0

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
    "spread": "spread-spectrum time deviation",
}

#: Each kind of jitter limit in words.
_LIMIT_TEXT = {"rms": "RMS", "peak-to-peak": "peak-to-peak"}

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
    "spread": (
        "feed this consumer from a clock that does not spread (another PLL, or an output that spreads alone), "
        "or turn the spread off; a narrow-loop PLL after the spread would attenuate it"
    ),
}


@dataclasses.dataclass(frozen=True)
class BandPlan:
    """How one consumer's jitter is judged: band, budget, where the band comes from, notes.

    ``limits`` are every jitter limit of the budget (each one judged);
    ``budget_s`` is the RMS jitter the strictest of them allows.
    """

    band_hz: tuple[float, float]
    budget_s: float | None
    source: str
    notes: tuple[str, ...] = ()
    limits: tuple[JitterLimit, ...] = ()


def _limit_notes(limits: tuple[JitterLimit, ...]) -> list[str]:
    """How the limits are read: a peak-to-peak one through the BER factor; with two, both are judged."""
    notes = []
    for limit in limits:
        if limit.kind == "peak-to-peak":
            notes.append(
                f"The peak-to-peak limit {format_time(limit.limit_s)} is read as {format_time(limit.rms_s)} RMS "
                f"(÷{gaussian_pp_per_rms(limit.ber):.2f}, 2·Q at a bit error ratio of {limit.ber:g}, Gaussian): "
                "right for random jitter only."
            )
    if len(limits) > 1:
        binding = min(limits, key=lambda limit: limit.rms_s)
        notes.append(
            "Both limits are judged: "
            + " and ".join(f"{format_time(limit.limit_s)} {_LIMIT_TEXT[limit.kind]}" for limit in limits)
            + f"; the {_LIMIT_TEXT[binding.kind]} one is the stricter ({format_time(binding.rms_s)} RMS)."
        )
    return notes


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
    limits = budget.jitter_limits(PEAK_TO_PEAK_BER) if budget is not None else ()
    limit = min(x.rms_s for x in limits) if limits else None
    notes = _limit_notes(limits)
    if budget is not None and budget.jitter_band_hz is not None:
        band = (float(budget.jitter_band_hz[0]), float(budget.jitter_band_hz[1]))
        source = "board" if budget.key == "inline" or "jitter_band" in budget.overridden else "standard"
        return BandPlan(band, limit, source, tuple(notes), limits)
    half_clock = float(clock_hz if clock_hz is not None else consumer.frequency) / 2
    if budget is not None and budget.sampling_clock:
        if half_clock <= CONVERTER_BAND_LOW_HZ:
            return None
        band = (CONVERTER_BAND_LOW_HZ, half_clock)
        notes.append(
            f"Sampling-converter clock without a jitter band: integrated over {format_band(band)} "
            "(a fixed low edge up to half the sample rate, taken as the clock's frequency), where jitter limits "
            "the converter's SNR (SNR = -20 log10(2 pi f_in sigma)); give converter.jitter_band for the "
            "converter's own band (e.g. a converter that divides its clock samples at a lower rate)."
        )
        return BandPlan(band, limit, "converter", tuple(notes), limits)
    high = min(DEFAULT_BAND_HZ[1], half_clock)
    if high <= DEFAULT_BAND_HZ[0]:
        return None
    band = (DEFAULT_BAND_HZ[0], high)
    notes.append(
        f"No jitter band given: integrated over {format_band(band)} (the default 12 kHz..20 MHz, "
        "capped at half the clock frequency); give jitter_band for the consumer's own band."
    )
    return BandPlan(band, limit, "default", tuple(notes), limits)


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


def _broken_text(jitter: ConsumerJitter) -> str:
    """Which limits break, when the budget has a peak-to-peak one (an RMS-only budget says it all)."""
    broken = jitter.broken_limits()
    if not any(limit.kind == "peak-to-peak" for limit in jitter.limits):
        return ""
    parts = []
    for limit in broken:
        if limit.kind == "peak-to-peak":
            parts.append(
                f"the peak-to-peak limit {format_time(limit.limit_s)} (about {format_time(limit.estimate_s(jitter.rms_seconds))} "
                f"peak-to-peak at a bit error ratio of {limit.ber:g})"
            )
        else:
            parts.append(f"the RMS limit {format_time(limit.limit_s)}")
    return ": it breaks " + " and ".join(parts)


def _margin_finding(consumer_id: str, jitter: ConsumerJitter, threshold: Fraction) -> Finding | None:
    """A ``jitter-margin`` warning when the jitter passes with less headroom than the margin policy asks."""
    margin = jitter.budget_margin()
    if margin is None or not is_thin(margin[0], threshold):
        return None
    kind = jitter.dominant_kind
    message = (
        f"RMS jitter {format_time(jitter.rms_seconds)} over {format_band(jitter.band_hz)} is inside the "
        f"{format_time(jitter.budget_seconds)} budget with only {margin[0] * 100:.3g} % of it left (less than "
        f"{format_margin_warning(threshold)}, the board's margin_warning); dominant: {jitter.dominant} "
        f"({KIND_TEXT.get(kind, kind)}); for more room: {FIXES.get(kind, 'a quieter part there')}"
    )
    return Finding(Severity.WARNING, "jitter-margin", consumer_id, message)


def _budget_finding(consumer_id: str, jitter: ConsumerJitter) -> Finding:
    budget = jitter.budget_seconds
    assert budget is not None and jitter.margin_seconds is not None
    share = jitter.result.shares()[jitter.dominant]
    kind = jitter.dominant_kind
    message = (
        f"RMS jitter {format_time(jitter.rms_seconds)} over {format_band(jitter.band_hz)} exceeds the "
        f"{format_time(budget)} budget by {format_time(-jitter.margin_seconds)}{_broken_text(jitter)}; "
        f"dominant: {jitter.dominant} "
        f"({KIND_TEXT.get(kind, kind)}, {share * 100:.0f} % of the jitter variance); "
        f"to fix: {FIXES.get(kind, 'a quieter part there')}"
    )
    return Finding(Severity.ERROR, "jitter-budget", consumer_id, message)


def _data_findings(
    missing: dict[str, tuple[MissingNoiseData, list[str]]],
    unmodelled: dict[str, tuple[str, list[str]]],
    assumed: dict[Assumption, list[str]],
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
                Severity.WARNING,
                "jitter-data",
                part,
                f"{text}, so the jitter of {', '.join(consumers)} is optimistic; "
                "give the figures from the datasheet (docs/jitter.md)",
            )
        )
    for assumption, consumers in assumed.items():
        if not assumption.code:
            continue
        findings.append(
            Finding(
                Severity.INFO if assumption.stated else Severity.WARNING,
                assumption.code,
                assumption.part,
                f"{assumption.text}; it counts in the jitter of {', '.join(consumers)}",
            )
        )
    return findings


def _spread_of(analysis: "Analysis", graph: Any, result: Any) -> tuple[SpreadSource | None, bool]:
    """The spread a consumer inherits, and whether its budget's spread allowance covers it."""
    sources = spreads_on_chain(analysis.board, graph, result.chain)
    if not sources:
        return None, False
    from clockplan.ppm.spread import spread_fits

    allowance = spread_allowance(analysis.board.part(result.id).budget)
    return sources[0], allowance is not None and spread_fits(sources[0].spread, allowance)[0]


def _spread_note(source: SpreadSource, covered: bool, seconds: float) -> str:
    """What the jitter figure does with an inherited spread."""
    if covered:
        return (
            f"The {source.describe} is inside this consumer's spread allowance: its standard defines the jitter "
            f"limit with that spread on (the measurement removes the modulation), so its time deviation "
            f"({format_time(seconds)} RMS in the band) is not counted."
        )
    return (
        f"The {source.describe} counts: {format_time(seconds)} RMS of time deviation in the band "
        f"(triangular profile assumed; one that dwells at its extremes has up to {SQUARE_WAVE_FACTOR:.2f}x more)."
    )


def _without(result: JitterResult, names: set[str]) -> JitterResult:
    """``result`` without the contributors ``names`` (the rest add in root-sum-square)."""
    kept = tuple(row for row in result.contributions if row[0] not in names)
    total = math.sqrt(sum(seconds * seconds for _, seconds in kept))
    return dataclasses.replace(result, rms_seconds=total, contributions=kept)


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


def _consumer_jitter(noise: NodeNoise, plan: BandPlan, source: SpreadSource | None = None, covered: bool = False) -> ConsumerJitter:
    result = noise.chain.jitter(*plan.band_hz, budget_seconds=plan.budget_s)
    notes = plan.notes
    spread_names = {name for name, (kind, _) in noise.kinds.items() if kind == "spread"}
    if source is not None and spread_names:
        seconds = math.sqrt(sum(s * s for name, s in result.contributions if name in spread_names))
        notes += (_spread_note(source, covered, seconds),)
        if covered:
            result = _without(result, spread_names)
    notes += tuple(
        dict.fromkeys([f"{text}." for _, text in noise.unmodelled] + [f"{a.text}." for a in noise.assumed])
    )
    return ConsumerJitter(result, noise.chain, noise.kinds, plan.source, notes, plan.limits)


def _spread_alone(board: Any, source: SpreadSource, plan: BandPlan) -> float | None:
    """RMS time deviation of a spread in a band, through the loops of the PLLs after it; None if one is unknown.

    Used where the rest of the jitter cannot be computed: a loop given only as a
    ``loop_filter`` (or not at all) gives no figure, so no claim is made.
    """
    from clockplan.jitter.spread import triangle_harmonics

    spread = source.spread
    offsets, rms = triangle_harmonics(float(spread.depth), float(spread.modulation_hz), plan.band_hz[1])
    gain = np.ones(offsets.size)
    for pll_id in source.through:
        loop = board.part(pll_id).loop
        if loop is None:
            return None
        gain = gain * loop.closed_loop_power(offsets)
    in_band = offsets >= plan.band_hz[0]
    return float(math.sqrt(float(np.sum((rms**2 * gain)[in_band]))))


def _spread_alone_finding(consumer_id: str, source: SpreadSource, plan: BandPlan, seconds: float) -> Finding:
    return Finding(
        Severity.ERROR, "jitter-spread", consumer_id,
        f"the {source.describe} alone puts {format_time(seconds)} RMS of time deviation in "
        f"{format_band(plan.band_hz)}, over the {format_time(plan.budget_s)} jitter budget (the rest of the "
        f"jitter is not computed); to fix: {FIXES['spread']}",
    )


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
    assumed: dict[Assumption, list[str]] = {}
    outside: dict[str, _Outside] = {}
    findings: list[Finding] = []
    for result in analysis.consumers:
        plan = plans[result.id]
        noise = model.at(result.id)
        source, covered = _spread_of(analysis, graph, result)
        if isinstance(noise, MissingNoiseData):
            if not noise.unset and plan is not None and plan.budget_s is not None:
                missing.setdefault(noise.part, (noise, []))[1].append(result.id)
                alone = None if source is None or covered else _spread_alone(board, source, plan)
                if alone is not None and alone > plan.budget_s:
                    findings.append(_spread_alone_finding(result.id, source, plan, alone))
            continue
        if plan is None:
            continue
        jitter = _consumer_jitter(noise, plan, source, covered)
        analysis = analysis.with_consumer(dataclasses.replace(result, jitter=jitter))
        if plan.budget_s is not None:  # a gap or an assumption that decides no verdict stays a note
            for part, text in noise.unmodelled:
                unmodelled.setdefault(part, (text, []))[1].append(result.id)
            for assumption in dict.fromkeys(noise.assumed):
                assumed.setdefault(assumption, []).append(result.id)
        for part, kind, listed, share in _extrapolated(noise, jitter):
            gap = outside.setdefault(part, _Outside(kind, listed))
            gap.consumers.append((result.id, jitter.band_hz, share))
        if jitter.passes is False:
            findings.append(_budget_finding(result.id, jitter))
        thin = _margin_finding(result.id, jitter, board.margin_warning)
        if thin is not None:
            findings.append(thin)
    return analysis.with_findings(
        findings + _extrapolation_findings(outside) + _data_findings(missing, unmodelled, assumed)
    )
