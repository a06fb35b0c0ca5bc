"""The search over groupings: which classes share a part, and how.

A *grouping* assigns every class, in order from the highest frequency down,
one role:

* **own** in a block: on an output of its own of the block's part (a PLL, or
  a dedicated oscillator when it is the block's only own class);
* **attached** to an own class of a block: divided down from it exactly;
* **direct**: taken off the main reference (divided down, or as it is);
* **new block**: the first own class of a new block.

For a grouping, :class:`LeafJudge` picks each block's cheapest part template
that passes the real checks (:mod:`clockplan.synth.evaluate`), the main
reference's grade (the cheapest passing one at the run's frequency), and
prices the tree (:mod:`clockplan.synth.objective`).

Two searches share that judge:

* :func:`enumerate_groupings` lists **every** grouping, with no pruning at
  all: the reference the tests hold the search to on small cases.
* :class:`BranchAndBound` walks the same groupings depth first, cheapest
  option first, and cuts a branch when (a) a block can no longer share one
  VCO on any template (:mod:`clockplan.synth.compat`), or no main reference
  keeps every exact class on it inside its ppm budget (both hereditary, so
  no completion could repair them), or (b) its lower bound already exceeds
  the K-th best tree found. The lower bound is the cost of the parts already
  placed -- every block at its cheapest still-possible template with its
  current layout, the direct classes, and the cheapest fitting main reference
  with the fan-out its certain loads need -- which never decreases as classes
  are added (:mod:`clockplan.synth.layout`), plus one cheapest part for each
  class of a greedy set still to place that must add a part (see
  :meth:`BranchAndBound._homeless`). The cut is safe: run to the end, the
  search returns the same best trees as the enumeration. With a time limit it
  returns the best found and says that it stopped.

Leaves are judged with the K-th best tree's cost as a ceiling: templates that
would price the tree above it are not checked.
"""

from __future__ import annotations

import itertools
import time
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

from clockplan.synth.evaluate import Check, Evaluator
from clockplan.synth.layout import part_cost
from clockplan.synth.library import OscillatorTemplate, PllTemplate
from clockplan.synth.objective import ZERO, Cost, tree_key
from clockplan.synth.tree import Block, DirectClass, MainReference, Problem, Tree

__all__ = [
    "Grouping",
    "Candidate",
    "TopTrees",
    "LeafJudge",
    "BranchAndBound",
    "enumerate_groupings",
    "exhaustive_search",
    "SearchStats",
]

#: Blocks that could take either a PLL or a dedicated oscillator are decided
#: jointly (every combination) up to this many; beyond, each takes its cheaper option.
_MAX_JOINT = 8

Attached = tuple[tuple[int, int, int], ...]


@dataclass(frozen=True)
class Grouping:
    """Classes grouped into blocks (``(own, attached)``) and direct classes; no template chosen yet."""

    blocks: tuple[tuple[tuple[int, ...], Attached], ...]
    direct: tuple[DirectClass, ...] = ()


@dataclass(frozen=True)
class Candidate:
    """A priced tree: its cost, worst margin and the checks of its blocks."""

    tree: Tree
    cost: Cost
    margin: float | None
    checks: tuple[Check, ...] = ()

    @property
    def key(self) -> tuple:
        """The objective key, then a deterministic tie-break."""
        return (*tree_key(self.cost, self.margin), repr(self.tree.signature()))


class TopTrees:
    """The best ``keep`` trees seen so far, at most one per shape.

    A *shape* is a tree without its reference frequency: trees that differ
    only in the frequency of the main reference (and so in their settings)
    are one proposal, the better of them kept; the side-by-side view then
    shows different drawings, not the same drawing on every stock crystal.
    """

    def __init__(self, keep: int) -> None:
        self.keep = max(1, keep)
        self.items: list[Candidate] = []

    @staticmethod
    def shape(candidate: Candidate) -> tuple:
        """The tree's signature without the reference frequency."""
        reference, blocks, direct = candidate.tree.signature()
        return (reference[0] if reference else None, blocks, direct)

    def offer(self, candidate: Candidate | None) -> None:
        """Keep ``candidate`` if it is among the best, replacing a worse tree of the same shape."""
        if candidate is None:
            return
        shape = self.shape(candidate)
        for index, kept in enumerate(self.items):
            if self.shape(kept) == shape:
                if candidate.key >= kept.key:
                    return
                del self.items[index]
                break
        self.items.append(candidate)
        self.items.sort(key=lambda c: c.key)
        del self.items[self.keep :]

    def bound(self) -> tuple | None:
        """The cost key a new tree must not exceed to enter, or None while there is room."""
        if len(self.items) < self.keep:
            return None
        return self.items[-1].cost.key()


# --------------------------------------------------------------------------- judging a grouping


class LeafJudge:
    """Chooses templates and the reference grade for a grouping, and prices it.

    Parameters
    ----------
    problem, evaluator
        The shared problem and the block checker.
    references
        The main references to try, by frequency (each grade offering it).
    """

    def __init__(self, problem: Problem, evaluator: Evaluator, references: dict[Fraction, list[MainReference]]) -> None:
        self.problem = problem
        self.evaluator = evaluator
        self.references = {hz: sorted(refs, key=lambda r: (r.cost.key(), r.name)) for hz, refs in references.items()}
        self._kinds: dict[tuple, list[Any]] = {}

    def kinds(self, hz: Fraction | None, own: tuple[int, ...], attached: Attached) -> list[Any]:
        key = (hz, own, attached)
        if key not in self._kinds:
            self._kinds[key] = self._find_kinds(hz, own, attached)
        return self._kinds[key]

    def _find_kinds(self, hz: Fraction | None, own: tuple[int, ...], attached: Attached) -> list[Any]:
        """Templates that can carry a block: PLLs on which its own classes share a VCO (and that take the
        reference), dedicated oscillators at the frequency of a lone own class; cheapest first."""
        problem = self.problem
        found = []
        if hz is not None:
            for template in problem.library.plls:
                if template.accepts_input(hz) and problem.compat.check(template, own).ok:
                    found.append(template)
        if len(own) == 1:
            frequency = problem.classes[own[0]].frequency
            members = own + tuple(c for c, _, _ in attached)
            found += [o for o in problem.library.oscillators if o.offers(frequency) and all(problem.fits(o, c) for c in members)]
        priced = [(problem.block_cost(Block(k, own, attached)), k) for k in found]
        return [k for cost, k in sorted((p for p in priced if p[0] is not None), key=lambda p: (p[0].key(), p[1].name))]

    def _cost(self, block: Block) -> tuple:
        cost = self.problem.block_cost(block)
        assert cost is not None
        return cost.key()

    def _first_passing(
        self, reference: MainReference | None, own: tuple[int, ...], attached: Attached, kinds: Sequence[Any], ceiling: Cost | None = None
    ) -> tuple[Block, Check] | None:
        """The cheapest template that passes; among equally cheap ones, the largest margin.

        Templates dearer than ``ceiling`` are not checked: the tree could not enter the best list with them.
        """
        chosen: tuple[Block, Check] | None = None
        chosen_cost = None
        for kind in kinds:
            block = Block(kind, own, attached)
            cost = self.problem.block_cost(block)
            if (chosen is not None and cost != chosen_cost) or (ceiling is not None and cost.key() > ceiling.key()):
                break
            check = self.evaluator.block(reference, block)
            if not check.ok:
                continue
            if chosen is None or _margin(check) > _margin(chosen[1]):
                chosen, chosen_cost = (block, check), cost
        return chosen

    def best(self, grouping: Grouping, hz: Fraction | None, bound: tuple | None = None) -> Candidate | None:
        """The best tree for ``grouping`` at main-reference frequency ``hz`` (None if none passes).

        With ``bound`` (a cost key), trees dearer than it are not looked for.
        """
        kinds = [self.kinds(hz, own, attached) for own, attached in grouping.blocks]
        if any(not k for k in kinds):
            return None
        references = self.references.get(hz, []) if hz is not None else []
        best: Candidate | None = None
        for reference in references or [None]:
            limit = bound if best is None else (best.cost.key() if bound is None else min(bound, best.cost.key()))
            candidate = self._with_reference(grouping, kinds, reference, limit)
            if candidate is not None and (best is None or candidate.key < best.key):
                best = candidate
        return best

    def _usable(self, reference: MainReference | None, own: tuple[int, ...], attached: Attached, kinds: list[Any]) -> tuple[list[Any], list[Any]]:
        """The block's PLL templates usable on ``reference`` (every member keeps its ppm budget) and its oscillators."""
        members = own + tuple(c for c, _, _ in attached)
        fits = reference is not None and all(self.problem.fits(reference, c) for c in members)
        plls = [k for k in kinds if isinstance(k, PllTemplate)] if fits else []
        return plls, [k for k in kinds if isinstance(k, OscillatorTemplate)]

    def _with_reference(self, grouping: Grouping, kinds: list[list[Any]], reference: MainReference | None, limit: tuple | None = None) -> Candidate | None:
        problem = self.problem
        usable = [self._usable(reference, own, attached, k) for (own, attached), k in zip(grouping.blocks, kinds)]
        if any(not plls and not oscillators for plls, oscillators in usable):
            return None
        if grouping.direct and (reference is None or not all(problem.fits(reference, d.cls) for d in grouping.direct)):
            return None
        # The cheapest this grouping can be on this reference: every block at its cheapest usable template.
        cheapest = [min((problem.block_cost(Block(k, own, attached)) for k in plls + oscs), key=lambda c: c.key())
                    for (own, attached), (plls, oscs) in zip(grouping.blocks, usable)]
        base = ZERO
        for cost in cheapest:
            base = base + cost
        for direct in grouping.direct:
            base = base + problem.direct_cost(direct)
        loads = sum(1 for _, oscs in usable if not oscs) + sum(problem.direct_loads(d) for d in grouping.direct)
        if loads:
            fan = problem.reference_fan(loads, reference.outputs)
            if fan is None:
                return None
            base = base + reference.cost + fan.cost
        ceiling_total = Cost(*limit) if limit is not None else None
        if ceiling_total is not None and base.key() > limit:
            return None
        direct_checks = []
        for direct in grouping.direct:
            check = self.evaluator.direct(reference, direct)
            if not check.ok:
                return None
            direct_checks.append(check)
        options: list[list[tuple[Block, Check]]] = []
        # Blocks whose classes all want exact frequencies check fastest: settle them first.
        order = sorted(range(len(grouping.blocks)), key=lambda i: any(not problem.classes[c].exact for c in _members(grouping.blocks[i])))
        chosen: dict[int, list[tuple[Block, Check]]] = {}
        for i in order:
            own, attached = grouping.blocks[i]
            plls, oscillators = usable[i]
            ceiling = ceiling_total - (base - cheapest[i]) if ceiling_total is not None else None
            found = [f for f in (self._first_passing(None, own, attached, oscillators, ceiling),) if f]
            # A passing oscillator strictly cheaper than every PLL template wins whatever else the tree holds:
            # a PLL also loads the reference, whose fan-out cost never falls with more loads.
            if plls and not (found and self._cost(found[0][0]) < self._cost(Block(plls[0], own, attached))):
                found += [f for f in (self._first_passing(reference, own, attached, plls, ceiling),) if f]
            if not found:
                return None
            chosen[i] = found
        options = [chosen[i] for i in range(len(grouping.blocks))]
        if sum(len(o) > 1 for o in options) > _MAX_JOINT:
            options = [[min(o, key=lambda bc: self._cost(bc[0]))] for o in options]
        best: Candidate | None = None
        for combo in itertools.product(*options):
            tree = Tree(reference, tuple(b for b, _ in combo), grouping.direct)
            cost = problem.tree_cost(tree)
            if cost is None:
                continue
            checks = tuple(c for _, c in combo) + tuple(direct_checks)
            margins = [c.margin for c in checks if c.margin is not None]
            candidate = Candidate(tree, cost, min(margins) if margins else None, checks)
            if best is None or candidate.key < best.key:
                best = candidate
        return best


def _members(block: tuple[tuple[int, ...], Attached]) -> tuple[int, ...]:
    own, attached = block
    return own + tuple(c for c, _, _ in attached)


def _margin(check: Check) -> float:
    return check.margin if check.margin is not None else float("inf")


# --------------------------------------------------------------------------- the enumeration


def enumerate_groupings(problem: Problem, hz: Fraction | None) -> Iterator[Grouping]:
    """Every grouping of the classes, without pruning (the reference for the search).

    Examples
    --------
    Two classes 100 MHz and 50 MHz with a 100 MHz reference: own together,
    apart, 50 MHz attached to 100 MHz, either taken straight off the reference...

    >>> sum(1 for _ in enumerate_groupings(problem, hz))  # doctest: +SKIP
    9
    """
    count = len(problem.classes)

    def grow(index: int, blocks: list[tuple[tuple[int, ...], Attached]], direct: tuple[DirectClass, ...]) -> Iterator[Grouping]:
        if index == count:
            yield Grouping(tuple(blocks), direct)
            return
        for position, (own, attached) in enumerate(blocks):
            blocks[position] = (own + (index,), attached)
            yield from grow(index + 1, blocks, direct)
            blocks[position] = (own, attached)
            for parent in own:
                ratio = problem.attach_ratio(parent, index)
                if ratio is not None:
                    blocks[position] = (own, attached + ((index, parent, ratio),))
                    yield from grow(index + 1, blocks, direct)
                    blocks[position] = (own, attached)
        if hz is not None:
            ratio = problem.direct_ratio(hz, index)
            if ratio is not None:
                yield from grow(index + 1, blocks, direct + (DirectClass(index, ratio),))
        blocks.append(((index,), ()))
        yield from grow(index + 1, blocks, direct)
        blocks.pop()

    yield from grow(0, [], ())


def exhaustive_search(judge: LeafJudge, frequencies: Sequence[Fraction | None], keep: int = 1) -> TopTrees:
    """Judge every grouping at every main-reference frequency: the exact optimum, for small cases."""
    top = TopTrees(keep)
    for hz in frequencies:
        for grouping in enumerate_groupings(judge.problem, hz):
            top.offer(judge.best(grouping, hz))
    return top


# --------------------------------------------------------------------------- branch and bound


@dataclass(frozen=True)
class _Open:
    """A block being grown: its classes, the templates still possible, the main references that fit
    every member (by index into the run's references), and its cheapest cost so far."""

    own: tuple[int, ...]
    attached: Attached
    kinds: tuple[Any, ...]
    fit: frozenset[int]
    lb: Cost

    @property
    def needs_reference(self) -> bool:
        return all(isinstance(k, PllTemplate) for k in self.kinds)


@dataclass(frozen=True)
class _State:
    """A partial grouping: open blocks, direct classes, the references that fit every direct class,
    and running sums for the bound (blocks at their cheapest, direct classes, loads on the reference)."""

    blocks: tuple[_Open, ...]
    direct: tuple[DirectClass, ...]
    fit: frozenset[int]
    blocks_sum: Cost
    direct_sum: Cost
    loads: int


@dataclass
class SearchStats:
    """What a search did: nodes visited, groupings judged, whether the time limit stopped it."""

    nodes: int = 0
    leaves: int = 0
    stopped: bool = False
    elapsed_s: float = 0.0
    cut_runs: int = 0


class BranchAndBound:
    """Depth-first search over groupings with hereditary and cost-bound pruning (see the module text).

    Besides VCO compatibility, one more hereditary fact prunes: an exact class's
    ppm budget on a given oscillator does not depend on the rest of the tree
    (:meth:`clockplan.synth.tree.Problem.fits`), so the set of main references
    that can still serve every class on the main reference only shrinks as the
    tree grows; when it is empty the branch is cut.

    Parameters
    ----------
    judge
        The leaf judge (and through it the problem).
    top
        The best trees so far; shared between runs at different reference frequencies.
    deadline
        ``time.monotonic()`` value at which to stop, or None.
    """

    def __init__(self, judge: LeafJudge, top: TopTrees, deadline: float | None = None, stats: SearchStats | None = None) -> None:
        self.judge = judge
        self.problem = judge.problem
        self.top = top
        self.deadline = deadline
        self.stats = stats or SearchStats()

    def run(self, hz: Fraction | None, deadline: float | None = None, leaf_limit: int | None = None) -> bool:
        """Search every grouping at main-reference frequency ``hz`` (None: no main reference).

        Returns True if the run finished, False if ``deadline`` (or the search's own), or
        ``leaf_limit`` groupings judged, cut it short. A run with a small leaf limit is a
        probe: the first, cheapest-looking groupings only, to set a bound early.
        """
        self.hz = hz
        self.run_deadline = deadline
        self.leaf_limit = None if leaf_limit is None else self.stats.leaves + leaf_limit
        self.cut = False
        self.references = self.judge.references.get(hz, []) if hz is not None else []
        every = frozenset(range(len(self.references)))
        self.fit = [
            frozenset(i for i, r in enumerate(self.references) if self.problem.fits(r, c.index)) for c in self.problem.classes
        ]
        self._reference_parts: dict[tuple, Cost | None] = {}
        self._prepare_isolation()
        self._grow(0, _State((), (), every, ZERO, ZERO, 0))
        return not self.cut

    # ----------------------------------------------------------------- bounds

    def _open(self, own: tuple[int, ...], attached: Attached, kinds: Sequence[Any], fit: frozenset[int]) -> _Open | None:
        priced = []
        for kind in kinds:
            if isinstance(kind, PllTemplate) and not fit:
                continue
            cost = self.problem.block_cost(Block(kind, own, attached))
            if cost is not None:
                priced.append((cost, kind))
        if not priced:
            return None
        lb = min((c for c, _ in priced), key=lambda c: c.key())
        return _Open(own, attached, tuple(k for _, k in priced), fit, lb)

    def _reference_part(self, fit: frozenset[int], loads: int) -> Cost | None:
        """The cheapest main reference still possible with the fan-out ``loads`` need (cached)."""
        key = (fit, loads)
        if key not in self._reference_parts:
            found = None
            if fit:
                references = [self.references[i] for i in fit]
                fan = self.problem.reference_fan(loads, max(r.outputs for r in references))
                if fan is not None:
                    found = min((r.cost for r in references), key=lambda c: c.key()) + fan.cost
            self._reference_parts[key] = found
        return self._reference_parts[key]

    def _prepare_isolation(self) -> None:
        """Facts for the bound on parts still to add (see :meth:`_homeless`), fixed for the run."""
        problem, count = self.problem, len(self.problem.classes)
        templates = [t for t in problem.library.plls if self.hz is not None and t.accepts_input(self.hz)]
        # One VCO check per pair of classes: hundreds of classes make it long, so the clock is read per
        # class. Past the deadline the classes left count as pairing with every other: a weaker bound in
        # _homeless (fewer classes counted apart), never a wrong one; the run is cut at its next check.
        self.pairs = []
        for c in range(count):
            if self._out_of_time():
                self.pairs += [set(range(count)) - {d} for d in range(c, count)]
                break
            self.pairs.append({d for d in range(count) if d != c and any(problem.compat.check(t, (c, d)).ok for t in templates)})
        self.free_direct = [
            self.hz is not None and bool(self.fit[c]) and problem.direct_ratio(self.hz, c) == 1 for c in range(count)
        ]
        units = [self.problem.block_cost(Block(k, (c,))) for c in range(count) for k in self.judge.kinds(self.hz, (c,), ())]
        if problem.library.divider is not None:
            units.append(part_cost(problem.library.divider))
        self.cheapest_part = min((c for c in units if c is not None), key=lambda c: c.key(), default=None)

    def _homeless(self, index: int, state: "_State") -> int:
        """At least how many parts the classes after ``index`` still add.

        A class that can neither join an open block as an own class (the block's
        templates still share a VCO with it and have an output free) nor be taken
        off the reference as it is, costs at least one part: a new block, or the
        divider that divides it down from another clock. Two such classes that no
        template puts on one VCO cannot share a new block, so a greedy set of
        them, pairwise apart, counts parts that must still come.
        """
        problem = self.problem
        chosen: list[int] = []
        for c in range(index, len(problem.classes)):
            if self.free_direct[c] or any(d in self.pairs[c] for d in chosen):
                continue
            joins = any(
                isinstance(k, PllTemplate) and problem.compat.check(k, block.own + (c,)).ok for block in state.blocks for k in block.kinds
            )
            if not joins:
                chosen.append(c)
        return len(chosen)

    def _price(self, state: "_State") -> Cost | None:
        """The state's lower bound: its blocks at their cheapest, its direct classes, and the reference they need."""
        if not state.loads:
            return state.blocks_sum + state.direct_sum
        fit = state.fit
        for block in state.blocks:
            if block.needs_reference:
                fit = fit & block.fit
        reference = self._reference_part(fit, state.loads)
        return None if reference is None else state.blocks_sum + state.direct_sum + reference

    # ----------------------------------------------------------------- options

    def _replace(self, state: "_State", position: int, grown: _Open) -> "_State":
        old = state.blocks[position]
        loads = state.loads - int(old.needs_reference) + int(grown.needs_reference)
        blocks = state.blocks[:position] + (grown,) + state.blocks[position + 1 :]
        return _State(blocks, state.direct, state.fit, state.blocks_sum - old.lb + grown.lb, state.direct_sum, loads)

    def _options(self, index: int, state: "_State") -> list[tuple[Cost, "_State"]]:
        problem = self.problem
        mine = self.fit[index]
        states: list[_State] = []
        for position, block in enumerate(state.blocks):
            own = block.own + (index,)
            kinds = [k for k in block.kinds if isinstance(k, PllTemplate) and problem.compat.check(k, own).ok]
            grown = self._open(own, block.attached, kinds, block.fit & mine)
            if grown is not None:
                states.append(self._replace(state, position, grown))
            for parent in block.own:
                ratio = problem.attach_ratio(parent, index)
                if ratio is None:
                    continue
                kinds = [k for k in block.kinds if isinstance(k, PllTemplate) or problem.fits(k, index)]
                grown = self._open(block.own, block.attached + ((index, parent, ratio),), kinds, block.fit & mine)
                if grown is not None:
                    states.append(self._replace(state, position, grown))
        if self.hz is not None and mine & state.fit:
            ratio = problem.direct_ratio(self.hz, index)
            direct = DirectClass(index, ratio) if ratio is not None else None
            cost = problem.direct_cost(direct) if direct is not None else None
            if direct is not None and cost is not None:
                states.append(
                    _State(state.blocks, state.direct + (direct,), state.fit & mine, state.blocks_sum,
                           state.direct_sum + cost, state.loads + problem.direct_loads(direct))
                )
        fresh = self._open((index,), (), self.judge.kinds(self.hz, (index,), ()), mine)
        if fresh is not None:
            states.append(
                _State(state.blocks + (fresh,), state.direct, state.fit, state.blocks_sum + fresh.lb,
                       state.direct_sum, state.loads + int(fresh.needs_reference))
            )
        priced = [(lb, s) for s in states if (lb := self._price(s)) is not None]
        if priced and self.cheapest_part is not None and self.top.bound() is not None:
            priced = [(lb + self.cheapest_part.times(self._homeless(index + 1, s)), s) for lb, s in priced]
        priced.sort(key=lambda item: item[0].key())
        return priced

    def _out_of_time(self) -> bool:
        now = time.monotonic()
        if self.deadline is not None and now > self.deadline:
            self.stats.stopped = True
        if self.stats.stopped or (self.run_deadline is not None and now > self.run_deadline):
            self.cut = True
        if self.leaf_limit is not None and self.stats.leaves >= self.leaf_limit:
            self.cut = True
        return self.cut

    def _grow(self, index: int, state: "_State") -> None:
        self.stats.nodes += 1
        if self._out_of_time():
            return
        if index == len(self.problem.classes):
            self.stats.leaves += 1
            grouping = Grouping(tuple((b.own, b.attached) for b in state.blocks), state.direct)
            self.top.offer(self.judge.best(grouping, self.hz, self.top.bound()))
            return
        for lb, new_state in self._options(index, state):
            bound = self.top.bound()
            if bound is not None and lb.key() > bound:
                break  # options are sorted by their bound: the rest cannot do better
            self._grow(index + 1, new_state)
            if self.cut:
                return
