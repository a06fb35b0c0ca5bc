"""The frequency-accuracy stage of the analysis pipeline: ppm budgets, yield and grade advice.

For every consumer it takes the chain's reference, the exact synthesis error
and any spread, and computes the worst case over the board's temperature
range and lifetime (with the temperature where it happens), the statistical
total (RSS) and the margin to the consumer's budget; with ``samples`` it
runs the Monte Carlo yield; for every reference it finds the least demanding
oscillator grade that keeps its consumers inside their budgets. Results go on
``ConsumerResult.accuracy`` and into ``Analysis.extras`` (``references``,
``monte_carlo``); problems and notes become findings (codes in
``docs/json-output.md``).

Budgets are planning estimates: the part datasheet and the governing
standard decide.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from fractions import Fraction
from typing import TYPE_CHECKING

from clockplan.deadline import CUT_RUN_NOTE
from clockplan.errors import BoardError
from clockplan.findings import Finding, Severity
from clockplan.parts import WORST_CASE, Consumer
from clockplan.ppm.accuracy import AccuracyResult, ConsumerBudget, consumer_accuracy
from clockplan.ppm.board import (
    GRADE_RANK,
    ConsumerLink,
    ReferenceModel,
    board_chains,
    consumer_links,
    reference_models,
)
from clockplan.ppm.conditions import condition_findings, require_conditions
from clockplan.ppm.display import format_error, format_limits
from clockplan.margins import budget_headroom, format_margin_warning, is_thin
from clockplan.ppm.grades import (
    ALWAYS_ON_BELOW_HZ,
    Grade,
    advise_grade,
    applicable_grades,
    load_grades,
)
from clockplan.ppm.montecarlo import ConsumerChain, monte_carlo_yield
from clockplan.ppm.oscillator import OscillatorSpec
from clockplan.ppm.results import (
    BASIS_NONE,
    BASIS_TYPICAL,
    BASIS_UNRATED,
    ConsumerAccuracy,
    MonteCarloSummary,
    ReferenceAdvice,
    ReferenceAdvices,
)
from clockplan.ppm.temperature import StabilityBand
from clockplan.spreading import spread_allowance

if TYPE_CHECKING:
    from clockplan.analysis import Analysis, AnalysisOptions
    from clockplan.parts import Board
    from clockplan.standards.model import StandardBudget

__all__ = ["STAGE_NAME", "KEPT_SAMPLES", "accuracy_stage"]

STAGE_NAME = "accuracy"

#: Stands in for a missing budget so the error can still be shown: nothing is judged against it.
_NO_BUDGET = ConsumerBudget((Fraction(-1), Fraction(1)))
_ROOM_C = 25.0
#: Boards whose sampled errors are kept for the Monte Carlo histogram (all of them up to this many).
KEPT_SAMPLES = 200_000


def _at(celsius: float | None) -> str:
    return "at a stability-band edge" if celsius is None else f"at {celsius:g} °C"


def _room(spec: OscillatorSpec, link: ConsumerLink, budget: ConsumerBudget, lifetime_s: float) -> AccuracyResult | None:
    """The same consumer at 25 °C, over the same lifetime.

    ``None`` for a stability band (it says where the frequency stays over the
    range, not where it is at 25 °C) and for a table that does not reach 25 °C.
    """
    if isinstance(spec.temperature, StabilityBand):
        return None
    try:
        return consumer_accuracy(spec, link.synthesis_error, link.spread, (_ROOM_C, _ROOM_C), lifetime_s, budget)
    except BoardError:
        return None


def _accuracy(model: ReferenceModel, link: ConsumerLink, analysis: "Analysis") -> ConsumerAccuracy:
    board = analysis.board
    budget = link.budget or _NO_BUDGET
    result = consumer_accuracy(model.spec, link.synthesis_error, link.spread, board.temperature_c, board.lifetime_s, budget)
    return ConsumerAccuracy(
        reference=model.reference.id,
        basis=model.basis,
        result=result,
        at_25c=_room(model.spec, link, budget, board.lifetime_s),
        budget=link.budget,
        budget_source=link.budget_source,
        spread=link.spread,
        spread_source=link.spread_source.part if link.spread_source else None,
        spread_key=link.spread_source.key if link.spread_source else None,
        temperature_range=board.temperature_c,
        lifetime_s=board.lifetime_s,
        required_margin=board.margin_warning * budget.half_width,
        spec=model.spec,
        policy=board.accuracy_policy,
    )


def _with_yields(
    analysis: "Analysis", options: "AnalysisOptions", models: Sequence[ReferenceModel],
    links: Sequence[ConsumerLink], accuracies: dict[str, ConsumerAccuracy],
) -> MonteCarloSummary | None:
    specs, chains = board_chains(models, links)
    if options.samples <= 0 or not chains:
        return None
    board = analysis.board
    progress = options.progress
    result = monte_carlo_yield(
        specs, chains, board.temperature_c, board.lifetime_s, samples=options.samples, seed=options.seed,
        progress=(lambda done, total: progress(done / total)) if progress is not None else None,
        keep_errors=KEPT_SAMPLES,
        deadline=options.deadline,
    )
    for index, chain in enumerate(chains):
        accuracies[chain.name] = dataclasses.replace(
            accuracies[chain.name],
            yield_fraction=result.yields[index],
            yield_standard_error=result.standard_error(index),
            sampled_reference_errors=result.reference_errors[chain.reference],
        )
    return MonteCarloSummary(result.samples, result.seed, result.board_yield, len(chains), result.requested or result.samples)


def _stopped_early(summary: MonteCarloSummary, board_name: str) -> Finding:
    """A partial Monte Carlo is never silent: how many boards ran of how many asked."""
    return Finding(
        Severity.WARNING, "monte-carlo-time-limit", board_name,
        f"the Monte Carlo stopped at its time limit after {summary.samples:,} of {summary.requested:,} boards; "
        f"the yields are from the {summary.samples:,} boards simulated (raise --time-limit, or ask fewer --samples; "
        f"{CUT_RUN_NOTE})",
    )


def _fits(result: AccuracyResult, margin: Fraction) -> bool:
    return result.passes and not is_thin(budget_headroom(result.margin, result.budget.half_width), margin)


#: The note a budget derived from a timekeeping target carries (``rtc = { drift, per }``, clockplan.standards).
_RTC_NOTE = "RTC target"


def _always_on(consumer: Consumer) -> bool:
    """A kHz timekeeping or sleep clock (common practice): below 1 MHz, or held to a real-time-clock budget
    (the ``rtc-32k`` standard's family, or a budget derived from a timekeeping target)."""
    budget = consumer.budget
    real_time = getattr(budget, "family", "") == "RTC" or _RTC_NOTE in getattr(budget, "notes", "")
    return consumer.frequency < ALWAYS_ON_BELOW_HZ or real_time


def _advice(
    model: ReferenceModel, links: Sequence[ConsumerLink], accuracies: dict[str, ConsumerAccuracy],
    analysis: "Analysis", grades: Sequence[Grade],
) -> ReferenceAdvice:
    board = analysis.board
    ref = model.reference
    mine = [link for link in links if link.reference == ref.id]
    judged = [link for link in mine if link.budget is not None and link.synthesis_error is not None]
    # A consumer that misses its margin even on a perfect reference needs a new plan, not a better oscillator.
    ideal = OscillatorSpec(ref.kind, (Fraction(0), Fraction(0)))
    unreachable = tuple(
        link.id for link in judged
        if not _fits(consumer_accuracy(ideal, link.synthesis_error, link.spread, board.temperature_c, board.lifetime_s, link.budget),
                     board.margin_warning)
    )
    fixable = [
        ConsumerChain(0, link.synthesis_error, link.budget, link.spread, name=link.id)
        for link in judged if link.id not in unreachable
    ]
    always_on = [link.id for link in judged if _always_on(board.part(link.id))]
    offered, notes = applicable_grades(grades, ref.frequency, always_on)
    if ref.kind == "external":  # another unit's clock: no local oscillator grade replaces it
        offered, notes = (), (EXTERNAL_NOTE,)
    advice = advise_grade(0, fixable, board.temperature_c, board.lifetime_s, margin=board.margin_warning,
                           grades=offered) if fixable else None
    failing = tuple(
        link.id for link in judged
        if link.id not in unreachable and (
            (link.id in accuracies and not accuracies[link.id].passes) or model.basis == BASIS_UNRATED
        )
    )
    thin = tuple(link.id for link in judged if link.id in accuracies and accuracies[link.id].thin)
    oven = None
    if ref.kind == "ocxo" and model.spec is not None:
        oven = model.spec.power or next((g.spec.power for g in grades if g.name == "ocxo"), None)
    return ReferenceAdvice(
        id=ref.id,
        kind=ref.kind,
        basis=model.basis,
        consumers=tuple(link.id for link in mine),
        failing=failing,
        thin=thin,
        advice=advice,
        grades=offered,
        current_rank=GRADE_RANK.get(ref.kind),
        unreachable=unreachable,
        oven_power=oven,
        notes=notes,
    )


#: What the advice says for an external reference (a clock from another unit).
EXTERNAL_NOTE = (
    "an external reference: its accuracy is the sending unit's (state its tolerance, stability and aging as that "
    "unit guarantees them); no local oscillator grade is proposed in its place"
)


# --------------------------------------------------------------------------- findings


def _advice_text(advice: ReferenceAdvice, margin: Fraction) -> str:
    if advice.kind == "external":
        return (f"{advice.id} is an external reference: ask the unit that sends it for a tighter figure, or lock a "
                "local oscillator of a better grade to it")
    if not advice.grades:
        return f"no oscillator grade in the table is commonly made at the frequency of {advice.id}: choose the part from its datasheet"
    if advice.advice is None or advice.advice.grade is None:
        return (
            f"no oscillator grade up to {advice.grades[-1].label} keeps every consumer of {advice.id} "
            "inside its budget with margin"
        )
    return (
        f"use {_grade_text(advice.advice.grade)}: it keeps every consumer of {advice.id} inside its budget "
        f"with {format_margin_warning(margin)} margin"
    )


def _grade_text(grade: Grade) -> str:
    """``a TCXO-grade label (typical tolerance ..., power ...)`` from the grade's one-line summary."""
    figures = grade.summary().split(": ", 1)[-1]
    return f"a {grade.label} (typical {figures})"


def _assumed(accuracy: ConsumerAccuracy) -> str:
    return " (typical grade figures, assumed: the board gives no accuracy data)" if accuracy.basis == BASIS_TYPICAL else ""


def _yield_text(accuracy: ConsumerAccuracy) -> str:
    if accuracy.yield_fraction is None:
        return ""
    return f"; Monte Carlo yield {accuracy.yield_fraction * 100:.2f} %"


def _room_text(accuracy: ConsumerAccuracy) -> str:
    room = accuracy.at_25c
    if room is None:
        return ""
    verdict = "inside the budget" if room.passes else "also outside"
    return f"; at 25 °C it is {format_error(room.worst_case)}, {verdict}"


def _cure(link: ConsumerLink, accuracy: ConsumerAccuracy, advice: ReferenceAdvice, margin: Fraction) -> str:
    if link.id in advice.unreachable:
        synthesis = format_error(accuracy.result.synthesis_error)
        if accuracy.result.checked == "carrier" or link.spread_source is None:
            return f"no reference can fix it: its synthesis error alone ({synthesis}) leaves no margin in the budget; re-plan the chain"
        source = link.spread_source
        alone = _synthesis_alone_fits(link, accuracy, margin)
        cause = (
            f"the {source.describe} breaks it, not the synthesis error ({synthesis})" if alone
            else f"its synthesis error ({synthesis}) and the {source.describe} leave no margin"
        )
        return (
            f"no reference can fix it: {cause}, since no spread allowance of this consumer covers it; "
            f"turn the spread of {source.part} off or bring it inside the consumer's allowance, or feed "
            f"{link.id} from a clock that does not spread" + ("" if alone else ", and re-plan the chain")
        )
    return "fix: " + _advice_text(advice, margin)


_STATISTICAL_KEY = 'accuracy_policy = "statistical"'


def _synthesis_alone_fits(link: ConsumerLink, accuracy: ConsumerAccuracy, margin: Fraction) -> bool:
    """Whether the chain's synthesis error alone, on a perfect reference and without the spread, keeps the margin."""
    ideal = OscillatorSpec(accuracy.spec.kind if accuracy.spec is not None else "xo", (Fraction(0), Fraction(0)))
    budget = link.budget or _NO_BUDGET
    return _fits(consumer_accuracy(ideal, link.synthesis_error, None, accuracy.temperature_range, accuracy.lifetime_s, budget),
                 margin)


def _consumer_findings(
    link: ConsumerLink, accuracy: ConsumerAccuracy, advice: ReferenceAdvice, margin: Fraction
) -> list[Finding]:
    r = accuracy.result
    worst = f"worst case {format_error(r.worst_case)} {_at(r.worst_temperature_c)}{_assumed(accuracy)}"
    if not accuracy.judged:
        message = f"no frequency-error budget (no standard, ppm or derived budget): {worst}, shown but not judged"
        return [Finding(Severity.INFO, "ppm-no-budget", link.id, message)]
    budget = f"the {format_limits(link.budget.tolerance)} budget ({link.budget_source})"
    spread = f" (the spread counts as error: {r.spread_note})" if r.spread_ok is False else ""
    if r.spread_ok is False and link.spread_source is not None:
        spread = f" (the {link.spread_source.describe} counts as error: {r.spread_note})"
    if not r.passes and not r.rss_passes:
        message = (
            f"{worst} breaks {budget}{spread}; statistical (RSS) {format_error(r.rss)}"
            f"{_room_text(accuracy)}{_yield_text(accuracy)}; {_cure(link, accuracy, advice, margin)}"
        )
        return [Finding(Severity.ERROR, "ppm-budget", link.id, message)]
    if not r.passes and accuracy.policy == WORST_CASE:
        # The default policy: a board with every part at its limit must pass; the RSS total hides the corner.
        message = (
            f"{worst} breaks {budget}{spread} (worst-case policy: every tolerance at its limit); the statistical "
            f"total (RSS) {format_error(r.rss)} is inside it, but a board with its parts at their limits fails"
            f"{_room_text(accuracy)}{_yield_text(accuracy)}; {_cure(link, accuracy, advice, margin)} "
            f"(or, if a statistical verdict is acceptable for this product, set [board] {_STATISTICAL_KEY})"
        )
        return [Finding(Severity.ERROR, "ppm-budget", link.id, message)]
    if not r.passes:
        message = (
            f"statistical total (RSS) {format_error(r.rss)} is inside {budget}, the verdict the board asks for "
            f"({_STATISTICAL_KEY}), but the {worst} breaks it{spread}: a board with every part at its limit "
            f"fails{_yield_text(accuracy)}; {_cure(link, accuracy, advice, margin)}"
        )
        return [Finding(Severity.WARNING, "ppm-worst-case", link.id, message)]
    if accuracy.thin:
        message = (
            f"{worst} is inside {budget} with only {format_error(r.margin)} to spare "
            f"(less than {format_margin_warning(margin)} of the budget, the board's margin_warning); "
            f"{_cure(link, accuracy, advice, margin)}"
        )
        return [Finding(Severity.WARNING, "ppm-margin", link.id, message)]
    return []


def _pf(farads: Fraction) -> str:
    return f"{float(farads) * 1e12:g} pF"


def _reference_findings(model: ReferenceModel, advice: ReferenceAdvice, links: Sequence[ConsumerLink]) -> list[Finding]:
    ref = model.reference
    findings = []
    datasheet_keys = "give tolerance, stability or temperature_curve, and aging from the part's datasheet"
    judged = any(link.budget is not None for link in links if link.reference == ref.id)
    if model.basis == BASIS_TYPICAL and judged:
        message = (
            f"no accuracy data in the board file: assuming {_grade_text(model.grade)}, not datasheet data; "
            f"{datasheet_keys}"
        )
        findings.append(Finding(Severity.INFO, "ppm-assumed", ref.id, message))
    elif model.basis == BASIS_NONE:
        message = (
            f"no accuracy data for reference {ref.id} (and no typical grade for kind '{ref.kind}'): the frequency "
            f"error of {', '.join(advice.consumers) or 'its consumers'} is not checked; {datasheet_keys}"
        )
        findings.append(Finding(Severity.INFO, "ppm-no-data", ref.id, message))
    load = model.spec.crystal_load if model.spec is not None else None
    if load is not None and load.stray_assumed and judged:
        low, high = load.pulling_range()
        message = (
            f"no stray capacitance in the crystal's load table: a typical {_pf(load.stray)} ± "
            f"{_pf(load.stray_tolerance)} is assumed (pins, traces and the oscillator input; common practice, "
            f"docs/board-format.md, Defaults clockplan assumes), which pulls it {format_error(low)} to "
            f"{format_error(high)}; give load.stray (and stray_tolerance) for this board's layout"
        )
        findings.append(Finding(Severity.WARNING, "stray-assumed", ref.id, message))
    if advice.oven_power is not None:
        power = advice.oven_power
        message = (
            f"oven-controlled oscillator: it runs hot and draws {float(power.warmup_w):g} W while warming "
            f"({power.warmup_s / 60:g} min before it is in tolerance) and {float(power.steady_w):g} W at temperature; "
            "count its power and heat in the board's budget"
        )
        if advice.verdict == "over-specified":
            message += (
                f". The ppm budgets downstream need only {_grade_text(advice.advice.grade)}; "
                "if the oven is there for phase noise, the jitter budget decides"
            )
        findings.append(Finding(Severity.WARNING, "ppm-oven", ref.id, message))
    return findings


def _skipped(link: ConsumerLink) -> Finding:
    return Finding(
        Severity.INFO, "ppm-skipped", link.id,
        "frequency error not computed: a setting upstream is missing (give it, or run plan)",
    )


def _spread_not_allowed(link: ConsumerLink, budget: "StandardBudget") -> Finding | None:
    """A consumer whose standard allows no spread inherits one: an error that names the spreading part."""
    source = link.spread_source
    if source is None or budget is None or budget.key == "inline" or spread_allowance(budget) is not None:
        return None  # a budget of the board's own (no standard): the sweep counts as frequency error
    return Finding(
        Severity.ERROR, "spread-not-allowed", link.id,
        f"{budget.title} allows no spread, but this clock inherits the {source.describe} "
        f"({source.key}; a spread made by modulating a loop reaches every output of that PLL and every clock "
        f"downstream); fix: feed {link.id} from a clock that does not spread (another PLL, or an output that "
        f"spreads alone: independent_spread), or turn the spread of {source.part} off",
    )


def _through_pll(link: ConsumerLink, board: "Board") -> Finding | None:
    """A spread that reaches the consumer through PLLs: its sweep is passed whole; say what that leaves out."""
    source = link.spread_source
    if source is None or not source.through or source.spread.modulation_hz is None:
        return None
    rate = float(source.spread.modulation_hz)
    gains, unknown = [], []
    for pll_id in source.through:
        loop = board.part(pll_id).loop
        if loop is None:
            unknown.append(pll_id)
        else:
            gains.append((pll_id, float(loop.closed_loop_power([rate])[0]) ** 0.5))
    peaking = [(pll_id, gain) for pll_id, gain in gains if gain > 1]
    parts = ", ".join(source.through)
    message = (
        f"the {source.describe} reaches this clock through {parts}; its whole sweep is counted "
        "(a loop narrower than the rate would attenuate it)"
    )
    if peaking:
        shown = ", ".join(f"{pll_id} |H| = {gain:.3f}" for pll_id, gain in peaking)
        message += f", but the loop response at the rate enlarges it ({shown}), which is not added"
    if unknown:
        message += f"; the loop response of {', '.join(unknown)} at the rate is not known, so its peaking is not added"
    severity = Severity.WARNING if peaking or unknown else Severity.INFO
    return Finding(severity, "spread-through-pll", link.id, message)


# --------------------------------------------------------------------------- the stage


def accuracy_stage(analysis: "Analysis", options: "AnalysisOptions") -> "Analysis":
    """Frequency-error budgets, Monte Carlo yield and reference grade advice for a board.

    Parameters
    ----------
    analysis
        The exact audit's result (frequencies and synthesis errors known).
    options
        ``samples`` > 0 runs the Monte Carlo with ``seed``; ``progress(fraction)``
        is called after each chunk of simulated boards.

    Returns
    -------
    Analysis
        A copy with ``accuracy`` on each consumer whose reference has figures,
        ``extras["references"]`` (:class:`ReferenceAdvices`), ``extras["monte_carlo"]``
        when sampled, and the findings.

    Examples
    --------
    >>> from clockplan.analysis import analyze  # doctest: +SKIP
    >>> from clockplan.boardfile import load_board  # doctest: +SKIP
    >>> analysis = analyze(load_board("boards/ring-vs-crystal.toml"))  # doctest: +SKIP
    >>> analysis.consumer("uart_ring").accuracy.passes  # doctest: +SKIP
    False
    """
    grades = load_grades()
    models = reference_models(analysis.board, grades)
    by_id = {m.reference.id: m for m in models}
    links = consumer_links(analysis)
    require_conditions(analysis.board, models, links)
    findings: list[Finding] = []
    accuracies: dict[str, ConsumerAccuracy] = {}
    for link in links:
        for finding in (_spread_not_allowed(link, analysis.board.part(link.id).budget), _through_pll(link, analysis.board)):
            if finding is not None:
                findings.append(finding)
        if by_id[link.reference].spec is None:
            continue
        if link.synthesis_error is None:
            if link.budget is not None:
                findings.append(_skipped(link))
            continue
        accuracies[link.id] = _accuracy(by_id[link.reference], link, analysis)
    summary = _with_yields(analysis, options, models, links, accuracies)
    advices = {m.reference.id: _advice(m, links, accuracies, analysis, grades) for m in models}
    for link in links:
        if link.id in accuracies:
            findings += _consumer_findings(link, accuracies[link.id], advices[link.reference], analysis.board.margin_warning)
    for model in models:
        findings += condition_findings(model, analysis.board, links)
        findings += _reference_findings(model, advices[model.reference.id], links)
    consumers = tuple(
        dataclasses.replace(c, accuracy=accuracies[c.id]) if c.id in accuracies else c for c in analysis.consumers
    )
    extras = {**analysis.extras, "references": ReferenceAdvices(tuple(advices.values()))}
    if summary is not None:
        extras["monte_carlo"] = summary
        if not summary.complete:
            findings.append(_stopped_early(summary, analysis.board.name))
    return dataclasses.replace(analysis, consumers=consumers, extras=extras).with_findings(findings)
