"""A consumer's verdict across its budgets: what could not be checked, and limits a board loosened.

Runs once after the budget stages (:func:`clockplan.analysis.analyze`). It
adds nothing to the physics; it makes sure the verdict never reads better than
what was computed:

- **Not checked is not PASS.** A consumer whose budget sets a limit (a ppm
  tolerance, an RMS or peak-to-peak jitter limit) that its stage could not
  compute (missing noise or accuracy data, a setting upstream missing, a band
  that cannot be formed) gets that budget's kind in
  ``ConsumerResult.unchecked`` and a ``budget-unchecked`` warning. The reports
  show its status as ``unchecked`` (never ``PASS``), the board verdict counts
  them, and ``--fail-on unchecked`` fails on them.
- **A loosened standard says so.** A board figure looser than the standard it
  overrides (``StandardBudget.loosened``) is a ``budget-loosened`` warning on
  the consumer: it is judged by the board's figure, which the standard may not
  allow.

Whether a budget "has a result" is read from the hooks the reports use
(``budget_margin()`` returns None without a judged budget), so a new budget
stage is covered as long as it offers that hook.
"""

from __future__ import annotations

import dataclasses
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from clockplan.findings import Finding, Severity
from clockplan.units import format_ppm, format_time

if TYPE_CHECKING:
    from clockplan.analysis import Analysis, ConsumerResult
    from clockplan.parts import Board

__all__ = ["BUDGET_KINDS", "unchecked_budgets", "unchecked_consumers", "judge"]

#: The budgets a consumer's limits are held against, in report order.
BUDGET_KINDS = ("ppm", "jitter")


def _judged(result: Any) -> bool:
    """Whether a budget result carries a verdict against a budget (its ``budget_margin()`` hook)."""
    hook = getattr(result, "budget_margin", None)
    return result is not None and callable(hook) and hook() is not None


def _error(fraction: Any) -> str:
    """A fractional error as text: percent from 0.1 % up (as the reports show it), else ppm."""
    if abs(fraction) >= Fraction(1, 1000):
        return f"{float(fraction) * 100:+.4g} %"
    return format_ppm(fraction)


def _limits(budget: Any) -> dict[str, str]:
    """The limits a consumer's budget sets, by kind, as text."""
    limits: dict[str, str] = {}
    if budget is None:
        return limits
    if budget.ppm is not None:
        low, high = budget.ppm
        limits["ppm"] = ("±" + _error(high).lstrip("+")) if low == -high else f"{_error(low)}..{_error(high)}"
    jitter = budget.jitter_limits()
    if jitter:
        limits["jitter"] = " and ".join(
            f"{format_time(limit.limit_s)} {'RMS' if limit.kind == 'rms' else 'peak-to-peak'}" for limit in jitter
        )
    return limits


def unchecked_budgets(board: "Board", result: "ConsumerResult") -> tuple[str, ...]:
    """The kinds of budget (``"ppm"``, ``"jitter"``) ``result``'s consumer has a limit for but no verdict on.

    Examples
    --------
    >>> analysis = analyze(board)  # doctest: +SKIP
    >>> unchecked_budgets(board, analysis.consumer("adc_clk"))  # doctest: +SKIP
    ('jitter',)
    """
    limits = _limits(board.part(result.id).budget)
    stage_results = {"ppm": result.accuracy, "jitter": result.jitter}
    return tuple(kind for kind in BUDGET_KINDS if kind in limits and not _judged(stage_results[kind]))


def unchecked_consumers(analysis: "Analysis") -> tuple[str, ...]:
    """The consumers with at least one budget not checked, board order."""
    return tuple(c.id for c in analysis.consumers if c.unchecked)


_WHY = {
    "ppm": "no frequency error was computed (accuracy data missing: see ppm-no-data)",
    "jitter": "no jitter was computed (noise data missing on its chain, or no band: see jitter-data)",
}


def _unchecked_finding(board: "Board", result: "ConsumerResult", kinds: tuple[str, ...]) -> Finding:
    limits = _limits(board.part(result.id).budget)
    parts = [f"its {kind} budget ({limits[kind]}) is not checked: {_WHY[kind]}" for kind in kinds]
    message = "; ".join(parts) + "; status unchecked, not PASS, until the data is given"
    return Finding(Severity.WARNING, "budget-unchecked", result.id, message)


def _loosened_finding(consumer_id: str, budget: Any) -> Finding:
    message = (
        f"the board loosens {budget.key}: {'; '.join(budget.loosened)}; the consumer is judged by the board's "
        f"figure, and a product built to it may not comply with {budget.key}"
    )
    return Finding(Severity.WARNING, "budget-loosened", consumer_id, message)


def judge(analysis: "Analysis") -> "Analysis":
    """Mark every consumer's unchecked budgets and add the ``budget-unchecked`` and ``budget-loosened`` warnings.

    Examples
    --------
    >>> judged = judge(analysis)  # doctest: +SKIP
    >>> judged.consumer("adc_clk").unchecked  # doctest: +SKIP
    ('jitter',)
    """
    board = analysis.board
    findings: list[Finding] = []
    consumers = []
    for result in analysis.consumers:
        budget = board.part(result.id).budget
        if budget is not None and getattr(budget, "loosened", ()):
            findings.append(_loosened_finding(result.id, budget))
        kinds = unchecked_budgets(board, result)
        # An unset chain already fails with its `unset` error, which says why nothing was computed.
        if kinds and result.actual_hz is not None:
            findings.append(_unchecked_finding(board, result, kinds))
        consumers.append(dataclasses.replace(result, unchecked=kinds))
    return dataclasses.replace(analysis, consumers=tuple(consumers)).with_findings(findings)
