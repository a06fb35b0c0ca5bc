"""What ``clockplan plan`` adds to the audit report: objective, spurs, alternatives, explanation.

The JSON document is the audit document (docs/json-output.md) with
``command = "plan"`` plus the keys ``plan`` (objective measures, search
notes, loop bandwidths used), ``alternatives`` (when asked for) and
``infeasible`` (when there is no feasible plan; ``verdict`` is then
``"infeasible"``).
"""

from __future__ import annotations

from fractions import Fraction
from typing import TYPE_CHECKING, Any

from clockplan.findings import Finding, Severity
from clockplan.plan.spurs import boundary_spur_offset, spur_in_band
from clockplan.units import format_exact, format_frequency, format_ppm

if TYPE_CHECKING:
    from rich.console import Console

    from clockplan.analysis import Analysis
    from clockplan.plan.board_planner import BoardPlan, SubPlan
    from clockplan.plan.explain import Explanation

__all__ = ["plan_findings", "plan_document", "render_plan"]


def _number(value: Fraction | float | None) -> int | float | None:
    from clockplan.report.json import number

    return number(value)


def plan_findings(plan: "BoardPlan", analysis: "Analysis") -> list[Finding]:
    """Findings the plan adds: spurs inside the loop bandwidth, and search bounds that were hit.

    A bound that may have cut a better plan off is a warning; one hit where the
    plan found is provably best on the objective's leading criteria is info.
    """
    findings = []
    for pll_id, point in analysis.frequencies.plls.items():
        offset = boundary_spur_offset(point.pfd_hz, point.setting.n)
        bandwidth = plan.bandwidths.get(pll_id)
        if spur_in_band(offset, bandwidth):
            findings.append(
                Finding(
                    Severity.WARNING,
                    "spur-in-band",
                    pll_id,
                    f"the integer-boundary spur of {pll_id} sits {format_frequency(offset)} from the carrier, inside the "
                    f"loop bandwidth of {format_frequency(Fraction(bandwidth))}; the loop will not filter it. "
                    "Pin another N or R, or check the part's spur figures",
                )
            )
    for note in plan.notes:
        findings.append(Finding(Severity.WARNING, "search-bound", plan.board.name, note))
    # A bound hit where the plan found is provably best on the leading criteria: worth knowing, not a warning.
    for note in plan.proven_notes:
        findings.append(Finding(Severity.INFO, "search-bound", plan.board.name, note))
    return findings


def _objective(sub: "SubPlan") -> dict[str, Any]:
    score = sub.score
    return {
        "feasible": score.feasible and not sub.blocked,
        "worst_synthesis_error_ppm": _number(score.worst_error * 10**6),
        "worst_synthesis_error_exact": format_exact(score.worst_error),
        "fractional_plls": score.fractional,
        "spurs_in_band": score.spurs_in_band,
        "active_dividers": score.active_dividers,
        "divider_sum": score.divider_sum,
    }


def _settings_fields(sub: "SubPlan") -> dict[str, Any]:
    return {
        "plls": [
            {"id": pll_id, "r": s.r, "n": format_exact(s.n), "outputs": dict(s.dividers)} for pll_id, s in sorted(sub.plls.items())
        ],
        "dividers": dict(sorted(sub.dividers.items())),
    }


def plan_document(analysis: "Analysis", plan: "BoardPlan", explanation: "Explanation | None" = None) -> dict[str, Any]:
    """The JSON document of ``clockplan plan``."""
    from clockplan.report.json import analysis_document

    doc = analysis_document(analysis, "plan")
    doc["plan"] = {
        "objective": _objective(plan.best),
        "notes": list(plan.notes),
        "proven_notes": list(plan.proven_notes),
        "loop_bandwidth_hz": {k: _number(v) for k, v in sorted(plan.bandwidths.items())},
    }
    if plan.alternatives:
        doc["alternatives"] = [
            {"rank": index, **_objective(alt), **_settings_fields(alt)} for index, alt in enumerate(plan.alternatives, start=2)
        ]
    if explanation is not None:
        doc["verdict"] = "infeasible"
        doc["infeasible"] = explanation.json_fields()
    return doc


def render_plan(analysis: "Analysis", plan: "BoardPlan", console: "Console", explanation: "Explanation | None" = None) -> None:
    """Print the audit-style report of the plan, then the plan's own tables."""
    from rich.table import Table

    from clockplan.report.terminal import render_analysis

    title = "plan (nearest plan: NO FEASIBLE PLAN)" if explanation is not None else "plan"
    render_analysis(analysis, console, title=title)
    score = plan.best.score
    console.print(
        f"objective: worst synthesis error {format_ppm(score.worst_error).lstrip('+')}, "
        f"{score.fractional} fractional-N PLL(s), {score.spurs_in_band} spur(s) in band, "
        f"{score.active_dividers} divider(s) other than 1; planned in {plan.elapsed_s:.2f} s"
    )
    if plan.alternatives:
        table = Table(title="Alternatives", title_justify="left", header_style="bold")
        for header in ("rank", "worst error", "frac-N", "settings"):
            table.add_column(header, overflow="fold")
        for index, alt in enumerate(plan.alternatives, start=2):
            text = "; ".join(
                f"{pll_id}: R={s.r} N={format_exact(s.n)} " + ",".join(f"{k}=/{d}" for k, d in s.dividers.items())
                for pll_id, s in sorted(alt.plls.items())
            )
            if alt.dividers:
                text += "; " + ", ".join(f"{k}=/{d}" for k, d in sorted(alt.dividers.items()))
            table.add_row(str(index), format_ppm(alt.score.worst_error), str(alt.score.fractional), text)
        console.print(table)
    if explanation is not None:
        console.print("[bold red]NO FEASIBLE PLAN[/]: the tables show the nearest plan; the reasons follow")
