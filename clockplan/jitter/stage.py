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
``jitter-data`` (info, on the part lacking data)
    jitter not computed (no reference phase noise, no PLL loop) for consumers
    that have a budget, or computed without a part's own noise (a PLL without
    its noise figures, a buffer without additive jitter), so it is optimistic.

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
from clockplan.jitter.tree import BoardNoise, MissingNoiseData, NodeNoise
from clockplan.spreading import SpreadSource, spread_allowance, spreads_on_chain
from clockplan.standards.model import gaussian_pp_per_rms
from clockplan.units import format_time

if TYPE_CHECKING:
    from clockplan.analysis import Analysis, AnalysisOptions
    from clockplan.parts import Consumer

__all__ = ["DEFAULT_BAND_HZ", "KIND_TEXT", "FIXES", "BandPlan", "band_plan", "jitter_stage"]

#: Integration band when a consumer's budget gives none (common practice: the
#: band clock datasheets usually quote RMS jitter over).
DEFAULT_BAND_HZ = (12e3, 20e6)

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
    bands = [p.band_hz for p in plans.values() if p is not None]
    low = min([1.0] + [b[0] for b in bands])
    high = max([1e9] + [b[1] for b in bands])
    return log_grid(low, high)


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


def _consumer_jitter(noise: NodeNoise, plan: BandPlan, source: SpreadSource | None = None, covered: bool = False) -> ConsumerJitter:
    result = noise.chain.jitter(*plan.band_hz, budget_seconds=plan.budget_s)
    notes = plan.notes
    spread_names = {name for name, (kind, _) in noise.kinds.items() if kind == "spread"}
    if source is not None and spread_names:
        seconds = math.sqrt(sum(s * s for name, s in result.contributions if name in spread_names))
        notes += (_spread_note(source, covered, seconds),)
        if covered:
            result = _without(result, spread_names)
    notes += tuple(dict.fromkeys(f"{text}." for _, text in noise.unmodelled))
    return ConsumerJitter(result, noise.chain, noise.kinds, plan.source, notes)


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
    model = BoardNoise(board, graph, analysis.frequencies, _analysis_grid(plans))
    missing: dict[str, tuple[MissingNoiseData, list[str]]] = {}
    unmodelled: dict[str, tuple[str, list[str]]] = {}
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
        for part, text in noise.unmodelled:
            unmodelled.setdefault(part, (text, []))[1].append(result.id)
        if jitter.passes is False:
            findings.append(_budget_finding(result.id, jitter))
    return analysis.with_findings(findings + _data_findings(missing, unmodelled))
