"""Checking blocks and trees with the real pipeline: the planner, then the audit and budget stages.

A block (or a direct class) is checked on its own small board: the main
reference and the block's parts and consumers. The planner
(:func:`clockplan.plan.board_planner.plan_board`) chooses its settings, and
:func:`clockplan.analysis.analyze` runs the exact audit and the ppm and
jitter stages. The block passes when the plan is feasible, no finding is an
error, and every judged consumer's worst case is inside its ppm and jitter
budgets. Its margin is the smallest fraction of a budget left.

A whole tree is verified the way a user would: its board file is written,
parsed with :func:`clockplan.boardfile.parse_board`, planned, the settings
written in (:func:`clockplan.plan.boardwrite.write_settings`), parsed again
and analysed. Only a tree that passes this is proposed as passing.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from clockplan.findings import Severity
from clockplan.margins import budget_headroom
from clockplan.units import format_ppm
from clockplan.synth.build import parts_board, parts_text, tree_parts
from clockplan.synth.tree import Block, DirectClass, MainReference, Problem, Tree

if TYPE_CHECKING:
    from clockplan.analysis import Analysis
    from clockplan.plan.board_planner import BoardPlan

__all__ = ["Failure", "Check", "check_analysis", "Evaluator", "Verified", "verify_tree"]

#: The planner's time budget for one block (blocks are small; a few ms is usual).
BLOCK_PLAN_SECONDS = 2.0


@dataclass(frozen=True)
class Failure:
    """Why a consumer (or a part) failed: the finding code and its message."""

    node: str
    code: str
    message: str


@dataclass(frozen=True)
class Check:
    """The verdict on a block or tree: ``ok``, what failed, and the worst margin.

    ``margins`` maps each judged consumer to its worst ``(budget, fraction left)``.
    """

    ok: bool
    failures: tuple[Failure, ...] = ()
    margin: float | None = None
    margins: dict[str, tuple[str, float]] = field(default_factory=dict)

    def reasons(self) -> list[str]:
        """The failures as lines of text."""
        return [f"{f.node}: {f.message}" for f in self.failures]


def _consumer_margins(analysis: "Analysis") -> dict[str, tuple[str, float]]:
    margins: dict[str, tuple[str, float]] = {}
    for result in analysis.consumers:
        rows: list[tuple[str, float]] = []
        accuracy = result.accuracy
        if accuracy is not None and getattr(accuracy, "judged", False):
            rows.append(("ppm", float(budget_headroom(accuracy.result.margin, accuracy.budget.half_width))))
        jitter = result.jitter
        if jitter is not None and jitter.budget_margin() is not None:
            rows.append(("jitter", float(jitter.budget_margin()[0])))
        if rows:
            margins[result.id] = min(rows, key=lambda row: row[1])
    return margins


def check_analysis(analysis: "Analysis", plan: "BoardPlan | None" = None) -> Check:
    """Judge an analysed board: errors, ppm worst cases and jitter budgets; the worst margin.

    Examples
    --------
    >>> check_analysis(analyze(board, settings)).ok  # doctest: +SKIP
    True
    """
    failures = [Failure(f.node, f.code, f.message) for f in analysis.findings if f.severity is Severity.ERROR]
    flagged = {f.node for f in failures}
    for result in analysis.consumers:
        accuracy, jitter = result.accuracy, result.jitter
        if accuracy is not None and accuracy.passes is False and result.id not in flagged:
            failures.append(Failure(result.id, "ppm-worst-case", "the worst-case frequency error breaks its ppm budget"))
        if jitter is not None and jitter.passes is False and result.id not in flagged:
            failures.append(Failure(result.id, "jitter-budget", "RMS jitter above its budget"))
    if plan is not None and not plan.feasible:
        # The full explanation (clockplan.plan.explain) relaxes constraints one by one: too slow to run on
        # every block the search tries, so the check keeps the nearest plan's misses; explain.py asks later.
        for reason in plan.best.blocked:
            failures.append(Failure(plan.board.name, "no-plan", reason))
        tolerance = {c.id: c.max_synthesis_error for c in plan.board.consumers}
        for consumer, error in plan.best.errors.items():
            if abs(error) > tolerance.get(consumer, 0):
                failures.append(Failure(consumer, "no-plan", f"the nearest plan misses it by {format_ppm(error)}"))
    margins = _consumer_margins(analysis)
    worst = min((m for _, m in margins.values()), default=None)
    return Check(not failures, tuple(failures), worst, margins)


class Evaluator:
    """Checks blocks and direct classes against a main reference, with a cache.

    Parameters
    ----------
    problem
        The shared problem.
    """

    def __init__(self, problem: Problem) -> None:
        self.problem = problem
        self._cache: dict[tuple, Check] = {}
        self._plans: dict[tuple, Any] = {}
        self.checked = 0
        #: The run's deadline (a ``time.monotonic()`` instant) the block plans stop at too, or None.
        self.deadline: float | None = None

    def _run(self, key: tuple, tree: Tree, plan_key: tuple) -> Check:
        from clockplan.analysis import analyze
        from clockplan.plan.board_planner import PlanOptions, plan_board

        found = self._cache.get(key)
        if found is None:
            self.checked += 1
            board = parts_board(self.problem, tree_parts(self.problem, tree), name="block")
            # The settings depend on the reference's frequency, not on its grade: plan once per frequency.
            plan = self._plans.get(plan_key)
            if plan is None:
                plan = plan_board(board, PlanOptions(time_limit_s=BLOCK_PLAN_SECONDS, deadline=self.deadline))
                self._plans[plan_key] = plan
            found = check_analysis(analyze(board, plan.settings), plan)
            self._cache[key] = found
        return found

    def block(self, reference: MainReference | None, block: Block) -> Check:
        """Check one block (a PLL block on ``reference``, or a dedicated oscillator)."""
        if block.is_pll:
            assert reference is not None
            key = ("block", reference.name, reference.hz, block.signature())
            if not self.problem.compat.exact_from(block.kind, block.own, reference.hz):
                # No exact plan exists: the planner would only search for the nearest miss, slowly.
                labels = ", ".join(self.problem.classes[c].label() for c in block.own)
                message = (
                    f"no setting of {block.kind.name} makes {labels} exactly from {reference.label()}: "
                    "no common VCO multiple is reachable with an allowed R, PFD and N"
                )
                node = self.problem.classes[block.own[0]].consumers[0]
                return self._cache.setdefault(key, Check(False, (Failure(node, "no-plan", message),)))
            exact_own = tuple(c for c in block.own if self.problem.classes[c].exact)
            if key not in self._cache and exact_own and len(exact_own) < len(block.own):
                # A setting that serves the whole block serves its exact part: if the exact part has no plan,
                # neither has the block, and the planner's slower search for the frequencies allowed an
                # error is spared. (A budget failure of the part proves nothing: the planner may choose
                # another setting for the part alone.)
                part = self.block(reference, Block(block.kind, exact_own, tuple(a for a in block.attached if a[1] in exact_own)))
                if not part.ok and all(f.code == "no-plan" for f in part.failures):
                    return self._cache.setdefault(key, part)
            return self._run(key, Tree(reference, (block,)), ("block", reference.hz, block.signature()))
        key = ("oscillator", block.signature())
        return self._run(key, Tree(None, (block,)), key)

    def direct(self, reference: MainReference, direct: DirectClass) -> Check:
        """Check one class taken straight off the main reference."""
        key = ("direct", reference.name, reference.hz, direct.cls, direct.ratio)
        return self._run(key, Tree(reference, (), (direct,)), ("direct", reference.hz, direct.cls, direct.ratio))


@dataclass
class Verified:
    """A tree checked through its written board file.

    ``text`` is the complete board file (settings included); ``board``,
    ``plan`` and ``analysis`` what ``plan`` and ``audit`` see in it.
    """

    tree: Tree
    text: str
    board: Any
    plan: Any
    analysis: Any
    check: Check


def verify_tree(problem: Problem, tree: Tree, header: Sequence[str] = (), seconds: float = 10.0,
                deadline: float | None = None) -> Verified:
    """Write the tree's board file, plan it, write the settings in, read it back and analyse it.

    The plan gets ``seconds``, or stops at ``deadline`` (the run's, a
    ``time.monotonic()`` instant) if that comes first.

    Raises
    ------
    ClockplanError
        If the written file does not read back as the tree (a bug, never the user's input).
    """
    from clockplan.analysis import analyze
    from clockplan.boardfile import parse_board
    from clockplan.plan.board_planner import PlanOptions, plan_board
    from clockplan.plan.boardwrite import write_settings

    name = problem.spec.source_file or "synthesized board"
    text = parts_text(problem, tree_parts(problem, tree), header)
    board = parse_board(text, name)
    plan = plan_board(board, PlanOptions(time_limit_s=seconds, deadline=deadline))
    if plan.feasible:
        text = write_settings(text, board, plan.settings)
        board = parse_board(text, name)
    analysis = analyze(board, plan.settings if not plan.feasible else None)
    return Verified(tree, text, board, plan, analysis, check_analysis(analysis, plan))
