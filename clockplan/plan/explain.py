"""Explaining an infeasible board: which consumers conflict, and what blocks them.

For every consumer the nearest plan leaves outside its allowed synthesis
error, the PLL that makes its clock is examined:

1. Can that PLL make this consumer's clock alone? If not, the constraint
   that blocks it is found by relaxing one constraint at a time (integer-N
   mode, denominator rule, VCO range, output divider set, PFD range and R,
   N range, pinned settings) and naming the first relaxation that helps.
2. Otherwise, which other output of the same PLL conflicts with it? Each
   pair is solved alone; for exact targets the message names the least
   common multiple that no VCO frequency in range reaches.

The nearest plan and its errors are reported with the explanation.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from clockplan.deadline import CUT_RUN_NOTE
from clockplan.parts import Denominator, FrequencyRange, IntChoices, Pll
from clockplan.plan.pll_solver import OutputSpec, PllProblem, SearchLimits, solve_pll
from clockplan.plan.rational import lcm_fractions
from clockplan.units import format_exact, format_frequency, format_ppm

if TYPE_CHECKING:
    from clockplan.plan.board_planner import BoardPlan

__all__ = ["Conflict", "Explanation", "explain_infeasible"]

_WIDE_DIVIDER = IntChoices(1, 1 << 16)


@dataclass(frozen=True)
class Conflict:
    """One reason the board cannot be planned.

    ``consumers`` are the consumers involved, ``constraint`` a short code of
    what blocks them (``integer-n``, ``denominator``, ``vco-range``,
    ``output-divider``, ``pfd-range``, ``n-range``, ``pinned``, ``combined``,
    ``part-cannot-run``, ``unreachable``, ``time-limit``, ``search-bound``: a bounded search found
    nothing, so no constraint is named; ``range-margin``: feasible only on a range edge the
    reference's error band crosses), ``message`` the explanation in words.
    """

    consumers: tuple[str, ...]
    constraint: str
    message: str


@dataclass
class Explanation:
    """Why there is no feasible plan, and the nearest plan's errors."""

    conflicts: list[Conflict] = field(default_factory=list)
    nearest_errors: dict[str, Fraction] = field(default_factory=dict)
    tolerances: dict[str, Fraction] = field(default_factory=dict)

    def text(self) -> str:
        """The explanation as lines of text."""
        lines = [f"- {c.message}" for c in self.conflicts] or ["- no single cause found; see the nearest plan"]
        misses = [
            f"{cid} {format_ppm(err)} (allowed ±{format_ppm(self.tolerances[cid]).lstrip('+')})"
            for cid, err in self.nearest_errors.items()
            if abs(err) > self.tolerances.get(cid, Fraction(0))
        ]
        if misses:
            lines.append("- nearest plan misses: " + ", ".join(misses))
        return "\n".join(lines)

    def json_fields(self) -> dict[str, Any]:
        """The JSON form (``infeasible`` key of the plan document)."""
        return {
            "conflicts": [
                {"consumers": list(c.consumers), "constraint": c.constraint, "message": c.message} for c in self.conflicts
            ],
            "nearest_plan_errors_ppm": {cid: float(err * 10**6) if err else 0 for cid, err in self.nearest_errors.items()},
        }


# --------------------------------------------------------------------------- relaxations


def _relaxations(pll: Pll, problem: PllProblem) -> list[tuple[str, str, PllProblem]]:
    wide_vco = FrequencyRange(pll.vco.lo / 2, pll.vco.hi * 2)
    relaxed: list[tuple[str, str, PllProblem]] = []
    if pll.mode == "integer":
        text = f"{pll.id} is integer-N: no whole N reaches it; a fractional-N part would"
        relaxed.append(("integer-n", text, replace(problem, pll=replace(pll, mode="fractional", denominator=Denominator(limit=1 << 32)))))
    elif pll.denominator is not None:
        text = f"the denominator rule of {pll.id} ({pll.denominator.describe()}) cannot make the fractional N it needs"
        relaxed.append(("denominator", text, replace(problem, pll=replace(pll, denominator=Denominator(limit=1 << 40)))))
    text = f"no VCO frequency inside {format_frequency(pll.vco.lo)} to {format_frequency(pll.vco.hi)} of {pll.id} serves it"
    relaxed.append(("vco-range", text, replace(problem, pll=replace(pll, vco=wide_vco))))
    wide_outputs = tuple(replace(o, chain=(_WIDE_DIVIDER,) + o.chain[1:]) for o in problem.outputs)
    text = f"the output divider set of {pll.id} lacks the ratio it needs"
    relaxed.append(("output-divider", text, replace(problem, outputs=wide_outputs)))
    text = f"the PFD range ({format_frequency(pll.pfd.lo)} to {format_frequency(pll.pfd.hi)}) or R set ({pll.ref_divider.describe()}) of {pll.id} blocks it"
    relaxed.append(("pfd-range", text, replace(problem, pll=replace(pll, pfd=FrequencyRange(Fraction(1), pll.pfd.hi * 4), ref_divider=IntChoices(1, 1 << 16)))))
    text = f"the N range ({format_exact(pll.feedback_min)}..{format_exact(pll.feedback_max)}) of {pll.id} blocks it"
    relaxed.append(("n-range", text, replace(problem, pll=replace(pll, feedback_min=Fraction(1), feedback_max=Fraction(1 << 20)))))
    return relaxed


def _unpinned(pll: Pll, problem: PllProblem) -> PllProblem | None:
    """The problem without its pinned R, N and output dividers, or None if nothing is pinned."""
    outputs = tuple(replace(o, chain=(pll.output(o.name).divider,) + o.chain[1:]) for o in problem.outputs)
    if problem.r_pin is None and problem.n_pin is None and outputs == problem.outputs:
        return None
    return replace(problem, r_pin=None, n_pin=None, outputs=outputs)


class _OutOfTime(Exception):
    """The explanation's deadline passed: it stops where it is and says so."""


@dataclass
class _Budget:
    """The explanation's time budget: every relaxed search shares one deadline."""

    deadline: float
    ran_out: bool = False

    def search(self, problem: PllProblem):
        if time.monotonic() > self.deadline:  # no search starts past the deadline (each costs time even cut)
            self.ran_out = True
            raise _OutOfTime
        result = solve_pll(problem, SearchLimits(keep=1, deadline=self.deadline))
        if time.monotonic() > self.deadline:
            self.ran_out = True
        return result

    def best(self, problem: PllProblem):
        return self.search(problem).best


def _feasible(problem: PllProblem, budget: _Budget) -> bool:
    best = budget.best(problem)
    return best is not None and best.score.feasible


def _proven_infeasible(problem: PllProblem, budget: _Budget) -> tuple[bool, str]:
    """Whether the search proves ``problem`` infeasible: (infeasible, the bound that stops a proof, or "").

    A search cut short by a bound (a divider range too wide to sweep, capped
    multiples, the time limit) that found nothing feasible proves nothing: an
    explanation may only state a reason it has checked.
    """
    search = budget.search(problem)
    if search.best is not None and search.best.score.feasible:
        return False, ""
    return True, (search.notes[0] if search.notes else "")


def _bounded(labels: set[str], pll: Pll, note: str) -> Conflict:
    names = ", ".join(sorted(labels))
    return Conflict(
        tuple(sorted(labels)), "search-bound",
        f"{names}: the search of {pll.id} found no setting within its allowed error, but it was cut short ({note}); "
        "no constraint is named as blocking because none was proven to; raise --time-limit, or narrow the divider "
        "ranges the part allows")


def _blocking(pll: Pll, problem: PllProblem, budget: _Budget) -> tuple[str, str]:
    bounded = False
    for code, text, relaxed in _relaxations(pll, problem):
        infeasible, bound = _proven_infeasible(relaxed, budget)
        if not infeasible:
            return code, text
        bounded = bounded or bool(bound)
    free = _unpinned(pll, problem)
    if free is not None:
        pinned_text = f"the pinned settings of {pll.id} block it; remove them to let the planner choose"
        if _feasible(free, budget):
            return "pinned", pinned_text
        for code, text, relaxed in _relaxations(pll, free):
            if _feasible(relaxed, budget):
                return "pinned", f"{pinned_text}, and then: {text}"
    if bounded:  # a relaxed search cut short proves nothing either way: say only what was found
        return "combined", (f"no single relaxed constraint of {pll.id} was found to help, but some relaxed searches "
                            "were cut short, so one may")
    return "combined", f"several constraints of {pll.id} together block it (no single relaxation helps)"


def _pair_message(pll: Pll, first: OutputSpec, second: OutputSpec) -> str:
    targets = [t for spec in (first, second) for t in spec.targets]
    names = " and ".join(f"{t.label} ({format_frequency(t.hz)} at the output)" for t in targets)
    if all(t.tolerance == 0 for t in targets):
        step = lcm_fractions(t.hz for t in targets)
        return (
            f"{names} need a VCO frequency that is a common multiple of both (a multiple of "
            f"{format_frequency(step)}) with allowed dividers and N; none inside "
            f"{format_frequency(pll.vco.lo)} to {format_frequency(pll.vco.hi)} of {pll.id} qualifies"
        )
    return f"{names} cannot both be met within their allowed errors from one VCO frequency of {pll.id}"


# --------------------------------------------------------------------------- entry point


def _pll_problems(plan: "BoardPlan") -> dict[str, PllProblem]:
    """The PLL problems the planner solved for the nearest plan (input frequencies from that plan)."""
    from clockplan.frequency import propagate
    from clockplan.graph import build_graph
    from clockplan.plan.board_planner import PlanOptions, _Planner, margined_board

    board = margined_board(plan.board)  # the ranges the planner searched: with the margin of each PLL's band
    graph = build_graph(board)
    freqs = propagate(board, graph, plan.settings)
    planner = _Planner(board, graph, PlanOptions())
    problems = {}
    for pll in board.plls:
        parents = list(graph.predecessors(pll.id))
        hz = freqs.nodes.get(parents[0]) if parents else None
        if hz is None:
            continue
        pin = board.pins.get(pll.id, {})
        pinned = pin.get("dividers", {})
        specs = []
        for out in pll.outputs:
            first = IntChoices.of((pinned[out.name],)) if out.name in pinned else out.divider
            spec = planner.output_spec(out.name, f"{pll.id}.{out.name}", first)
            if spec is not None:
                specs.append(spec)
        problems[pll.id] = PllProblem(pll, hz, tuple(specs), pin.get("r"), pin.get("n"))
    return problems


def explain_infeasible(plan: "BoardPlan", time_limit_s: float = 10.0, *, deadline: float | None = None) -> Explanation:
    """Explain why ``plan`` (the nearest plan of an infeasible board) misses.

    The relaxed searches share ``time_limit_s`` from now, or stop at
    ``deadline`` (a ``time.monotonic()`` instant) if that comes first: the
    ``plan`` command passes its run's one deadline, so the explanation gets
    what the search left, never a fresh budget. When it runs out, the
    explanation says so.

    Examples
    --------
    An integer-N audio PLL asked for 12.288 MHz from 27 MHz gives a conflict
    with constraint ``integer-n`` naming the PLL.
    """
    board = plan.board
    tolerances = {c.id: c.max_synthesis_error for c in board.consumers}
    explanation = Explanation(nearest_errors=dict(plan.best.errors), tolerances=tolerances)
    if any("time limit" in note for note in plan.notes):
        explanation.conflicts.append(
            Conflict((), "time-limit", "the search stopped at its time limit, so a feasible plan may exist; raise --time-limit "
                     f"({CUT_RUN_NOTE})")
        )
    for reason in plan.best.blocked:
        explanation.conflicts.append(Conflict((), "part-cannot-run", reason))
    end = time.monotonic() + time_limit_s
    end = end if deadline is None else min(end, deadline)
    if not _explain_margin(plan, explanation, end):
        explanation.conflicts.append(Conflict(
            (), "time-limit", "the time limit passed before the check of the ranges' margin for the reference's "
            f"error band: a board blocked by that margin is not named so; raise --time-limit ({CUT_RUN_NOTE})"))
    missing = {cid for cid, err in plan.best.errors.items() if abs(err) > tolerances.get(cid, Fraction(0))}
    if not missing:
        return explanation
    explained: set[str] = set()
    budget = _Budget(end)
    try:
        _explain_plls(plan, explanation, missing, explained, budget)
    except _OutOfTime:
        pass  # budget.ran_out is set: said below
    if budget.ran_out:
        explanation.conflicts.append(Conflict(
            (), "time-limit", "the explanation stopped at its time limit: the blocking constraints named may be "
            f"incomplete; raise --time-limit ({CUT_RUN_NOTE})"))
        return explanation  # a consumer left unexamined is not shown unreachable
    bounded = bool(plan.notes)
    for cid in sorted(missing - explained):
        allowed = f"±{format_ppm(tolerances[cid]).lstrip('+')}"
        if bounded:  # a bounded search proves nothing unreachable: say only what was checked
            explanation.conflicts.append(Conflict((cid,), "search-bound", (
                f"{cid}: no setting found within {allowed}, but the search was cut short ({plan.notes[0]}); "
                "a feasible plan may exist")))
        else:
            explanation.conflicts.append(
                Conflict((cid,), "unreachable", f"{cid}: no setting upstream makes its frequency within {allowed}")
            )
    return explanation


def _explain_margin(plan: "BoardPlan", explanation: Explanation, end: float) -> bool:
    """Say so when the ranges' margin for the reference's error band and spread is what blocks the board.

    The planner keeps every input, PFD and VCO range clear of its edges by
    that band (docs/planning.md, Ranges at the extremes). When the board plans
    feasibly without the margin, the plan it would give sits on an edge that
    the reference's drift (or a spread sweep) crosses: a real failure, named.
    False if the deadline ``end`` passed before the check could run.
    """
    from clockplan.plan.board_planner import PlanOptions, margined_board, plan_board

    board = plan.board
    narrowed = margined_board(board)
    if narrowed is board:
        return True
    if time.monotonic() > end:
        return False
    # A quarter of what is left, inside the run's deadline (never a fresh budget of its own).
    left = max(0.0, end - time.monotonic())
    at_nominal = plan_board(board, PlanOptions(time_limit_s=left / 4, deadline=end), margin=False)
    if not at_nominal.feasible:  # proven only when the search at nominal was not cut by the deadline
        return not any("time limit" in note for note in at_nominal.notes)
    from clockplan.audit import check_range_extremes
    from clockplan.extremes import pll_bands
    from clockplan.frequency import propagate
    from clockplan.graph import build_graph

    graph = build_graph(board)
    edges = check_range_extremes(board, propagate(board, graph, at_nominal.settings), pll_bands(board, graph))
    detail = "; ".join(f"{f.node}: {f.message.split(';')[0]}" for f in edges) or "a range edge is crossed"
    explanation.conflicts.append(Conflict((), "range-margin", (
        "a plan exists at nominal frequencies only, on a range edge the reference's worst-case error (or a spread "
        f"sweep) crosses: {detail}. Widen the part's range, use a more accurate reference, or choose parts whose "
        "ranges do not end at the frequencies needed")))
    return True


def _explain_plls(plan: "BoardPlan", explanation: Explanation, missing: set[str], explained: set[str], budget: _Budget) -> None:
    """Name, per PLL, the constraint that blocks its missed consumers (alone, in pairs, all together)."""
    for pll_id, problem in _pll_problems(plan).items():
        if budget.ran_out:
            return
        pll = problem.pll
        for spec in problem.outputs:
            labels = {t.label for t in spec.targets} & missing - explained
            if not labels:
                continue
            alone = replace(problem, outputs=(spec,))
            infeasible, bound = _proven_infeasible(alone, budget)
            if infeasible and bound:
                explanation.conflicts.append(_bounded(labels, pll, bound))
                explained |= labels
                continue
            if infeasible:
                code, text = _blocking(pll, alone, budget)
                near = budget.best(alone)
                detail = ""
                if near is not None:
                    worst = max(near.errors.items(), key=lambda item: abs(item[1]))
                    detail = f"; alone, its nearest is {format_ppm(worst[1])} for {worst[0]}"
                explanation.conflicts.append(Conflict(tuple(sorted(labels)), code, f"{', '.join(sorted(labels))}: {text}{detail}"))
                explained |= labels
                continue
            for other in problem.outputs:
                if other is spec:
                    continue
                pair = replace(problem, outputs=(spec, other))
                infeasible, bound = _proven_infeasible(pair, budget)
                if infeasible:
                    involved = tuple(sorted({t.label for t in spec.targets + other.targets}))
                    if bound:
                        explanation.conflicts.append(_bounded(set(involved), pll, bound))
                    elif all(c.consumers != involved for c in explanation.conflicts):
                        code, _ = _blocking(pll, pair, budget)
                        explanation.conflicts.append(Conflict(involved, code, _pair_message(pll, spec, other) + f" (blocking: {code})"))
                    explained |= labels
                    break
            else:
                involved = tuple(sorted({t.label for s in problem.outputs for t in s.targets}))
                infeasible, bound = _proven_infeasible(problem, budget)
                if infeasible and bound:
                    explanation.conflicts.append(_bounded(set(involved), pll, bound))
                elif infeasible:
                    code, text = _blocking(pll, problem, budget)
                    explanation.conflicts.append(Conflict(involved, code, f"the outputs of {pll_id} together: {text}"))
                else:  # the PLL can serve them at this input: the board search missed it, nothing blocks it
                    explanation.conflicts.append(Conflict(involved, "search-bound", (
                        f"{', '.join(sorted(labels))}: {pll_id} can make them from its planned input, but the board "
                        "search did not reach that setting (its cascade trials are bounded); raise --time-limit")))
                explained |= labels
