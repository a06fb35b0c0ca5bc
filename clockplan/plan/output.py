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
from clockplan.units import format_exact, format_ppm

if TYPE_CHECKING:
    from rich.console import Console

    from clockplan.analysis import Analysis
    from clockplan.plan.board_planner import BoardPlan, SubPlan
    from clockplan.plan.explain import Explanation

__all__ = ["VERDICT_CRITERIA", "plan_findings", "search_finding", "verdict_criteria", "plan_document", "render_plan"]

#: How many leading criteria of the objective (docs/planning.md) can change a
#: verdict on every board: 1 feasibility (the ``frequency`` errors), 2 the
#: synthesis error (it adds to every ppm budget), 3 integer-N (a fractional N
#: brings spurs, the ``spur-in-band`` warning, and modulator noise). Criterion 5
#: (fractional-N spurs in band) is 0 whenever 1-3 are at their floor.
VERDICT_CRITERIA = 3

_LATER = {
    3: "the PFD frequency, fewer and smaller dividers, the spur offset",
    5: "fewer and smaller dividers, the spur offset",
}


def _number(value: Fraction | float | None) -> int | float | None:
    from clockplan.report.json import number

    return number(value)


def plan_findings(plan: "BoardPlan", analysis: "Analysis") -> list[Finding]:
    """Findings the plan adds to the audit of its settings: the search note and parts left unused.

    The ``spur-in-band`` warnings come from the audit itself
    (:func:`clockplan.plan.spurs.spur_findings`), so ``plan`` and ``audit``
    agree on the same settings. See :func:`search_finding` for the one
    ``search-bound`` note per search.
    """
    findings = []
    search = search_finding(plan, analysis)
    if search is not None:
        findings.append(search)
    for note in plan.unused_notes:
        findings.append(Finding(Severity.INFO, "unused-part", plan.board.name, note))
    return findings


def verdict_criteria(analysis: "Analysis") -> int:
    """How many leading criteria decide this board's verdict: :data:`VERDICT_CRITERIA`, or 4 with a jitter budget at stake.

    Criterion 4, the PFD frequency, sets the in-band noise: it can change the
    verdict when a jitter budget fails or warns (a plan with a higher PFD
    might pass it).
    """
    at_stake = any(
        f.code.startswith("jitter") and f.severity in (Severity.ERROR, Severity.WARNING) for f in analysis.findings
    )
    return 4 if at_stake else VERDICT_CRITERIA


def search_finding(plan: "BoardPlan", analysis: "Analysis") -> Finding | None:
    """The one ``search-bound`` note of a search that hit a bound, or None for a complete search.

    A warning only when the plan is not proven best on the criteria that
    decide the verdict (:func:`verdict_criteria`); otherwise info, saying which
    criteria are proven and which are not. Every bound hit is listed in it.
    """
    bounds = list(plan.notes) + list(plan.proven_notes)
    if not bounds or plan.proven_criteria is None:
        return None
    proven = plan.proven_criteria
    needed = verdict_criteria(analysis)
    listed = "; ".join(bounds)
    what = f"the search hit {len(bounds)} bound{'s' if len(bounds) > 1 else ''} ({listed})"
    if any("time limit" in bound for bound in bounds):
        from clockplan.deadline import CUT_RUN_NOTE

        what += f" ({CUT_RUN_NOTE})"
    if proven >= needed:
        later = _LATER.get(proven, "the later criteria")
        return Finding(
            Severity.INFO, "search-bound", plan.board.name,
            f"{what}; the plan is still proven best on criteria 1-{proven} of the objective, which decide this "
            f"verdict (docs/planning.md, Bounds); only the later ones ({later}) may not be the best possible",
        )
    partly = f"; it is proven best on criteria 1-{proven} only" if proven else ""
    return Finding(
        Severity.WARNING, "search-bound", plan.board.name,
        f"{what}; the plan is the best found, not proven best on criteria 1-{needed} of the objective, which decide "
        f"this verdict{partly}: a setting not tried may give a better plan; raise --time-limit or narrow the part's ranges",
    )


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
        "proven_criteria": plan.proven_criteria,
        "unused": list(plan.unused_notes),
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


def render_plan(analysis: "Analysis", plan: "BoardPlan", console: "Console", explanation: "Explanation | None" = None,
                wide: bool | None = None) -> None:
    """Print the audit-style report of the plan, then the plan's own tables."""
    from rich.table import Table

    from clockplan.report.terminal import render_analysis

    title = "plan (nearest plan: NO FEASIBLE PLAN)" if explanation is not None else "plan"
    render_analysis(analysis, console, title=title, wide=wide)
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
