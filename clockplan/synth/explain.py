"""Why the tree looks the way it does: what could not share a PLL, what needed a cleaner path, what
the next tree costs -- and, when no tree meets the budgets, what stands in the way.

Every reason comes from the same checks the search used: VCO compatibility
(:mod:`clockplan.synth.compat`: no common VCO multiple in range, too few
outputs) and the block checks (:mod:`clockplan.synth.evaluate`: a jitter or
ppm budget missed on a cheaper part, no feasible plan).
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

from clockplan.synth.evaluate import Check
from clockplan.synth.grouping import Candidate, LeafJudge
from clockplan.synth.library import PllTemplate
from clockplan.synth.tree import Block, DirectClass, MainReference, Problem, Tree
from clockplan.units import format_frequency

__all__ = ["Reason", "Explanation", "explain"]

#: At most this many reasons of each kind are listed.
MAX_REASONS = 12


@dataclass(frozen=True)
class Reason:
    """One reason, with a short code (``no-common-vco``, ``outputs``, ``cleaner-path``, ``ppm``,
    ``no-plan``, ``cheaper-apart``, ``reference-grade``, ``unserved``, ``no-common-reference``,
    ``time-limit``) and the consumers it concerns."""

    code: str
    consumers: tuple[str, ...]
    message: str

    def json_fields(self) -> dict[str, Any]:
        """The JSON form."""
        return {"code": self.code, "consumers": list(self.consumers), "message": self.message}


@dataclass
class Explanation:
    """The reasons behind a synthesis result, by topic."""

    apart: list[Reason] = field(default_factory=list)
    choices: list[Reason] = field(default_factory=list)
    next_tree: str | None = None
    blocking: list[Reason] = field(default_factory=list)

    def lines(self) -> list[str]:
        """Every reason as a line of text, by topic."""
        lines = []
        if self.blocking:
            lines.append("Why no tree meets every budget:")
            lines += [f"- {r.message}" for r in self.blocking]
        if self.apart:
            lines.append("Why these clocks do not share a PLL:")
            lines += [f"- {r.message}" for r in self.apart]
        if self.choices:
            lines.append("Why these parts:")
            lines += [f"- {r.message}" for r in self.choices]
        if self.next_tree:
            lines.append(self.next_tree)
        return lines

    def json_fields(self) -> dict[str, Any]:
        """The JSON form (key ``explanations`` of the synthesize document)."""
        return {
            "apart": [r.json_fields() for r in self.apart],
            "choices": [r.json_fields() for r in self.choices],
            "next_tree": self.next_tree,
            "blocking": [r.json_fields() for r in self.blocking],
        }


def _consumers(judge: LeafJudge, classes: Sequence[int]) -> tuple[str, ...]:
    return tuple(c for index in classes for c in judge.problem.classes[index].consumers)


def _names(judge: LeafJudge, classes: Sequence[int]) -> str:
    return " + ".join(judge.problem.classes[i].label() for i in classes)


def _first_failure(check: Check, codes: Sequence[str] | None = None) -> str | None:
    for failure in check.failures:
        if codes is None or failure.code in codes:
            return f"{failure.node}: {failure.message}"
    return None


# --------------------------------------------------------------------------- a passing tree


def _apart(judge: LeafJudge, tree: Tree) -> list[Reason]:
    """For each pair of PLL blocks: why their clocks are not on one PLL."""
    problem, reference = judge.problem, tree.reference
    blocks = [b for b in tree.blocks if b.is_pll]
    templates = [t for t in problem.library.plls if reference is None or t.accepts_input(reference.hz)]
    reasons = []
    for i, first in enumerate(blocks):
        for second in blocks[i + 1 :]:
            reasons.append(_pair_reason(judge, reference, templates, first, second))
    return reasons[:MAX_REASONS]


def _pair_reason(judge: LeafJudge, reference: MainReference | None, templates: list[PllTemplate], first: Block, second: Block) -> Reason:
    problem = judge.problem
    consumers = _consumers(judge, first.members() + second.members())
    # A pair of frequencies that no template can put on one VCO says it best.
    for a in first.own:
        for b in second.own:
            verdicts = [problem.compat.check(t, (a, b)) for t in templates]
            if verdicts and not any(v.ok for v in verdicts):
                return Reason("no-common-vco", _consumers(judge, (a, b)), f"no allowed PLL puts them on one VCO: {verdicts[-1].reason}")
    own = tuple(sorted(first.own + second.own))
    attached = tuple(sorted(first.attached + second.attached))
    verdicts = [(t, problem.compat.check(t, own)) for t in templates]
    shared = [t for t, v in verdicts if v.ok]
    if not shared:
        reason = min((v.reason for _, v in verdicts), key=len, default="no PLL template takes them")
        code = "outputs" if "outputs" in reason else "no-common-vco"
        return Reason(code, consumers, f"{_names(judge, own)}: {reason}")
    for template in shared:
        merged = Block(template, own, attached)
        if problem.block_cost(merged) is None or reference is None:
            continue
        check = judge.evaluator.block(reference, merged)
        jitter = _first_failure(check, ("jitter-budget",))
        if jitter:
            return Reason("cleaner-path", consumers, f"on one {template.name} they would miss a jitter budget, so some need a cleaner path apart: {jitter}")
        other = _first_failure(check)
        if other:
            code = "ppm" if "ppm" in other else "no-plan"
            return Reason(code, consumers, f"on one {template.name}: {other}")
    return Reason("cheaper-apart", consumers, f"{_names(judge, own)} could share one {shared[0].name}, but the tree costs less with them apart")


def _choices(judge: LeafJudge, tree: Tree) -> list[Reason]:
    """Blocks on a costlier template than the cheapest that shares their VCO, and the reference grade."""
    problem, reference = judge.problem, tree.reference
    reasons = []
    for block in tree.blocks:
        if not block.is_pll or reference is None:
            continue
        kinds = [k for k in judge.kinds(reference.hz, block.own, block.attached) if isinstance(k, PllTemplate)]
        chosen_cost = problem.block_cost(block)
        for cheaper in kinds:
            cost = problem.block_cost(Block(cheaper, block.own, block.attached))
            if cheaper is block.kind or cost is None or chosen_cost is None or cost.key() >= chosen_cost.key():
                continue
            check = judge.evaluator.block(reference, Block(cheaper, block.own, block.attached))
            jitter = _first_failure(check, ("jitter-budget",))
            text = jitter or _first_failure(check) or "it fails its checks"
            code = "cleaner-path" if jitter else ("ppm" if "ppm" in text else "no-plan")
            lead = "needs a cleaner path" if jitter else "needs a costlier part"
            reasons.append(
                Reason(code, _consumers(judge, block.members()), f"{_names(judge, block.own)} {lead}: {block.kind.name}, not {cheaper.name}: on {cheaper.name}, {text}")
            )
            break
    if reference is not None and reference.template is not None and tree.uses_reference:
        reasons += _grade_reason(judge, tree)
    if reference is not None:
        reasons += _jitter_paths(judge, tree, reference)
    return reasons[:MAX_REASONS]


def _jitter_paths(judge: LeafJudge, tree: Tree, reference: MainReference) -> list[Reason]:
    """Classes with a jitter budget that some allowed PLL template cannot meet even alone: they need a cleaner path."""
    problem = judge.problem
    consumers = {c.id: c for c in problem.spec.consumers}
    reasons = []
    for block in tree.blocks:
        if not block.is_pll:
            continue
        for cls in block.own:
            budgeted = [c for c in problem.classes[cls].consumers if consumers[c].budget is not None and consumers[c].budget.jitter_rms_limit_s() is not None]
            if not budgeted:
                continue
            failing = []
            for kind in judge.kinds(reference.hz, (cls,), ()):
                if isinstance(kind, PllTemplate):
                    check = judge.evaluator.block(reference, Block(kind, (cls,)))
                    if _first_failure(check, ("jitter-budget",)):
                        failing.append(kind.name)
            if failing:
                reasons.append(
                    Reason(
                        "cleaner-path",
                        tuple(budgeted),
                        f"{', '.join(budgeted)} need a cleaner path than {', '.join(failing)} (their jitter budget fails there even alone); "
                        f"here on {block.kind.name}",
                    )
                )
    return reasons


def _grade_reason(judge: LeafJudge, tree: Tree) -> list[Reason]:
    reference = tree.reference
    assert reference is not None
    cheaper = [r for r in judge.references.get(reference.hz, []) if r.cost.key() < reference.cost.key()]
    for option in cheaper:
        for block in tree.blocks:
            if not block.is_pll:
                continue
            members = block.members()
            if not all(judge.problem.fits(option, c) for c in members):
                return [Reason("reference-grade", _consumers(judge, members), f"the reference is a {reference.name}, not a {option.name}: on a {option.name}, {_names(judge, members)} break a ppm budget")]
            check = judge.evaluator.block(option, Block(block.kind, block.own, block.attached))
            if not check.ok:
                return [Reason("reference-grade", _consumers(judge, members), f"the reference is a {reference.name}, not a {option.name}: {check.reasons()[0]}")]
        for direct in tree.direct:
            if not judge.problem.fits(option, direct.cls) or not judge.evaluator.direct(option, direct).ok:
                return [Reason("reference-grade", _consumers(judge, (direct.cls,)), f"the reference is a {reference.name}, not a {option.name}: {_names(judge, (direct.cls,))} needs it")]
    return []


def _next_tree(best: Candidate, runner_up: Candidate | None) -> str | None:
    if runner_up is None:
        return None
    parts = runner_up.cost.parts - best.cost.parts
    power = runner_up.cost.power_w - best.cost.power_w
    cost = runner_up.cost.cost - best.cost.cost
    margin = ""
    if runner_up.margin is not None and best.margin is not None:
        margin = f", worst margin {runner_up.margin * 100:.0f} % against {best.margin * 100:.0f} %"
    if (parts, power, cost) == (0, 0, 0):
        return f"The next tree costs the same ({best.cost.parts} parts){margin}."
    return (
        f"The next tree costs {parts:+d} part(s), {float(power) * 1000:+.1f} mW and {float(cost):+.2f} in relative cost{margin}."
    )


# --------------------------------------------------------------------------- no passing tree


#: Time the explanation of a board without a passing tree may take to try each clock alone.
EXPLAIN_SECONDS = 15.0


def _blocking(judge: LeafJudge, stopped: bool, seconds: float = EXPLAIN_SECONDS) -> list[Reason]:
    """What keeps every tree from meeting its budgets: classes no part serves, or no shared reference."""
    problem = judge.problem
    reasons: list[Reason] = []
    if stopped:
        reasons.append(Reason("time-limit", (), "the search stopped at its time limit before it found a passing tree; raise --time-limit"))
    served_by: dict[int, set[Fraction | None]] = {}
    deadline = time.monotonic() + seconds
    for klass in problem.classes:
        if time.monotonic() > deadline:
            reasons.append(Reason("time-limit", (), f"the explanation tried the clocks alone for {seconds:g} s and stopped; not every clock was examined"))
            return reasons[:MAX_REASONS]
        found, why = _serve_alone(judge, klass.index, deadline)
        if time.monotonic() > deadline:  # cut inside: what it found so far proves nothing either way
            reasons.append(Reason("time-limit", (), f"the explanation tried the clocks alone for {seconds:g} s and stopped; not every clock was examined"))
            return reasons[:MAX_REASONS]
        served_by[klass.index] = found
        if not found:
            reasons.append(Reason("unserved", klass.consumers, f"{klass.label()} cannot be served by any allowed part, even alone: {why}"))
    if served_by and not any(r.code == "unserved" for r in reasons):
        frequencies: list[Fraction | None] = [*judge.references, None]
        shared = any(all(hz in s or None in s for s in served_by.values()) for hz in frequencies)
        if not shared:
            needs = "; ".join(
                f"{problem.classes[i].label()} on " + ", ".join(format_frequency(h) if h else "its own oscillator" for h in sorted(s, key=lambda h: h or 0))
                for i, s in list(served_by.items())[:MAX_REASONS]
            )
            reasons.append(Reason("no-common-reference", (), f"each clock can be served alone, but no one main reference serves them all: {needs}"))
    return reasons[:MAX_REASONS]


def _serve_alone(judge: LeafJudge, cls: int, deadline: float | None = None) -> tuple[set[Fraction | None], str]:
    """The main-reference frequencies (None: a dedicated oscillator) on which the class alone passes, and why not.

    Stops before the next block once ``deadline`` (a ``time.monotonic()`` instant) has passed; the
    caller tells a cut answer by the clock.
    """
    problem = judge.problem
    found: set[Fraction | None] = set()
    why = "no part template offers its frequency or reaches it"

    def late() -> bool:
        return deadline is not None and time.monotonic() > deadline

    for kind in judge.kinds(None, (cls,), ()):
        if late():
            return found, why
        check = judge.evaluator.block(None, Block(kind, (cls,)))
        if check.ok:
            found.add(None)
        else:
            why = f"{kind.name}: {check.reasons()[0] if check.reasons() else 'fails'}"
    for hz, references in judge.references.items():
        fitting = [r for r in references if problem.fits(r, cls)]
        if not fitting:
            why = _no_grade_reason(problem, hz, references)
        # Only the dearest grade that fits (usually the most accurate and quietest) is tried, to keep the
        # explanation quick: a clock that fails there may, rarely, pass on another grade.
        for reference in fitting[-1:]:
            for kind in judge.kinds(hz, (cls,), ()):
                if not isinstance(kind, PllTemplate):
                    continue
                if late():
                    return found, why
                check = judge.evaluator.block(reference, Block(kind, (cls,)))
                if check.ok:
                    found.add(hz)
                    break
                why = f"{kind.name} on a {reference.label()}: {check.reasons()[0] if check.reasons() else 'fails'}"
            ratio = problem.direct_ratio(hz, cls)
            if hz not in found and ratio is not None:
                if judge.evaluator.direct(reference, DirectClass(cls, ratio)).ok:
                    found.add(hz)
            if hz in found:
                break
    return found, why


def explain(judge: LeafJudge, ranked: Sequence[Candidate], stopped: bool = False,
            seconds: float = EXPLAIN_SECONDS) -> Explanation:
    """Explain the best tree (``ranked[0]``) and the runner-up's cost, or why there is none.

    Without a tree, trying each clock alone takes at most ``seconds``; past
    them the reasons say that not every clock was examined.

    Examples
    --------
    >>> print("\\n".join(explain(judge, [best, second]).lines()))  # doctest: +SKIP
    Why these clocks do not share a PLL:
    - 148.5 MHz, ≈148.3516484 MHz need a VCO at a multiple of 148.5 GHz; none lies in 2.4 GHz to 3.2 GHz (cleaner-8)
    """
    if not ranked:
        return Explanation(blocking=_blocking(judge, stopped, seconds))
    best = ranked[0]
    return Explanation(
        apart=_apart(judge, best.tree),
        choices=_choices(judge, best.tree),
        next_tree=_next_tree(best, ranked[1] if len(ranked) > 1 else None),
    )


def _no_grade_reason(problem: Problem, hz: Fraction, references: Sequence[Any]) -> str:
    """Why no allowed oscillator at ``hz`` serves a class: its ppm budget, or bands not rated over the board's range."""
    low, high = problem.spec.temperature_c
    unrated = [r.name for r in references if not problem.rated_over_board(r)]
    rated = [r.name for r in references if r.name not in unrated]
    parts = []
    if rated:
        parts.append(f"its ppm budget breaks on every allowed grade ({', '.join(rated)}) even with exact synthesis")
    if unrated:
        parts.append(f"the stability of {', '.join(unrated)} is not rated over the board's {low:g}..{high:g} °C")
    return f"at {format_frequency(hz)} " + "; ".join(parts)
