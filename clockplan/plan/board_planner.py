"""Planning a whole board: walk the clock tree from each reference down.

Every node of the tree is planned knowing its exact frequency:

* a consumer scores its synthesis error;
* a fanout buffer passes its frequency to every load, and the loads are
  planned independently;
* a plain divider with an open ratio tries the ratios nearest the
  frequencies wanted below it (or, when a PLL follows, every ratio that puts
  the PLL's input where it can run) and keeps the best;
* a PLL is solved by :func:`~clockplan.plan.pll_solver.solve_pll` for the
  targets its outputs must meet. Targets are lifted through buffers and fixed
  dividers; an output feeding only an open divider searches the product of
  both; an open divider beside other loads is guided by the nearest ratio and
  re-chosen once the output frequency is known. An output that feeds another
  PLL (a cascade) has no target of its own: for each candidate VCO the
  planner tries the output dividers that make the downstream PLL's input
  acceptable and plans the downstream PLL at each resulting frequency. A PLL
  with only such outputs is offered the input frequencies the downstream PLL
  would like best.

Independent branches are ranked separately and combined (k-best), so a
branch never takes a worse plan because another branch is already worse.
"""

from __future__ import annotations

import heapq
import time
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from clockplan.errors import InfeasibleError
from clockplan.parts import Board, Buffer, Consumer, Divider, IntChoices, Pll, PllSetting, Reference, Settings
from clockplan.plan.choices import at_or_above, at_or_below, ladder_of
from clockplan.plan.objective import Score
from clockplan.plan.pll_solver import OutputSpec, PllProblem, SearchLimits, Target, solve_pll
from clockplan.plan.rational import ceil_fraction, floor_fraction, lcm_fractions, multiples_in
from clockplan.plan.spurs import DEFAULT_LOOP_BANDWIDTH_HZ, loop_bandwidth_of, spur_in_band
from clockplan.units import format_frequency

if TYPE_CHECKING:
    import networkx as nx

__all__ = ["PlanOptions", "SubPlan", "BoardPlan", "plan_board", "check_pins", "margined_board"]


@dataclass(frozen=True)
class PlanOptions:
    """Knobs of the planner.

    Parameters
    ----------
    alternatives
        How many distinct runner-up plans to return besides the best.
    time_limit_s
        Wall-clock budget for the whole search; when it runs out the best plan
        found so far is returned with a note.
    loop_bandwidth_hz
        Loop bandwidth used for the spur flag of a PLL that does not state its own.
    max_cascade_inputs
        How many ratios of an open plain divider are tried when a PLL follows it.
    max_cascade_solves
        How many output dividers of a PLL output feeding another PLL are tried
        (each needs a full plan of the downstream PLL).
    cascade_patience
        Stop trying output dividers for a cascade after this many in a row
        brought no better downstream plan.
    deadline
        A ``time.monotonic()`` instant the search stops at, whichever of it and
        ``time_limit_s`` comes first: the command's one run deadline
        (:class:`clockplan.deadline.Deadline`), so that planning, explaining and
        the budget stages share one limit.
    """

    alternatives: int = 0
    time_limit_s: float = 10.0
    loop_bandwidth_hz: Fraction = DEFAULT_LOOP_BANDWIDTH_HZ
    max_cascade_inputs: int = 256
    max_cascade_solves: int = 12
    cascade_patience: int = 3
    deadline: float | None = None


@dataclass(frozen=True)
class SubPlan:
    """The plan of one branch of the tree: settings, exact consumer errors and score."""

    score: Score
    plls: dict[str, PllSetting] = field(default_factory=dict)
    dividers: dict[str, int] = field(default_factory=dict)
    errors: dict[str, Fraction] = field(default_factory=dict)
    blocked: tuple[str, ...] = ()
    pending: dict[str, int] = field(default_factory=dict)  # "pll.output" -> divider, until the PLL is assembled

    def merged(self, other: "SubPlan") -> "SubPlan":
        """Two independent branches taken together."""
        return SubPlan(
            self.score.combined(other.score),
            {**self.plls, **other.plls},
            {**self.dividers, **other.dividers},
            {**self.errors, **other.errors},
            self.blocked + other.blocked,
            {**self.pending, **other.pending},
        )

    def identity(self) -> tuple:
        """What makes two plans the same plan (their settings)."""
        plls = tuple(sorted((k, s.r, s.n, tuple(sorted(s.dividers.items()))) for k, s in self.plls.items()))
        return plls, tuple(sorted(self.dividers.items())), tuple(sorted(self.pending.items()))

    @property
    def settings(self) -> Settings:
        """The settings as the analysis takes them."""
        return Settings(dict(self.plls), dict(self.dividers))


@dataclass
class BoardPlan:
    """The planner's answer for a board.

    ``best`` is the chosen plan, ``alternatives`` the distinct runners-up (best
    first), ``notes`` the bounds that may have cut a better plan off,
    ``proven_notes`` the bounds that were hit where the plans found are
    provably best on the objective's leading criteria (see
    :func:`_proven_criteria`), ``unused_notes`` the parts that feed no consumer (set to their smallest value), ``bandwidths`` the loop bandwidth each PLL's
    spur flag used, ``proven_criteria`` how many leading criteria of the
    objective the best plan is proven best on although a bound was hit (None
    when no bound was hit: the search was complete; see :func:`_search_proof`).
    """

    board: Board
    best: SubPlan
    alternatives: list[SubPlan]
    notes: list[str]
    bandwidths: dict[str, Fraction | float | None]
    elapsed_s: float = 0.0
    proven_notes: list[str] = field(default_factory=list)
    unused_notes: list[str] = field(default_factory=list)
    proven_criteria: int | None = None

    @property
    def feasible(self) -> bool:
        """True if every consumer is inside its allowed synthesis error."""
        return self.best.score.feasible and not self.best.blocked

    @property
    def settings(self) -> Settings:
        """The chosen settings."""
        return self.best.settings


# --------------------------------------------------------------------------- pins


def check_pins(board: Board) -> None:
    """Refuse pinned settings outside the part's own constraints (they could never be kept).

    Raises
    ------
    InfeasibleError
        Naming the pinned key and the allowed values.
    """
    for index, pll in enumerate(board.plls):
        pin = board.pins.get(pll.id, {})
        if "r" in pin and pin["r"] not in pll.ref_divider:
            _pin_error(board, f"pll[{index}].settings", f"pinned R = {pin['r']} of {pll.id} is not allowed (R: {pll.ref_divider.describe()})")
        if "n" in pin and not pll.allows_n(pin["n"]):
            _pin_error(board, f"pll[{index}].settings", f"pinned N = {pin['n']} of {pll.id} is outside its N range or mode")
        for name, d in pin.get("dividers", {}).items():
            allowed = pll.output(name).divider
            if d not in allowed:
                _pin_error(board, f"pll[{index}].settings", f"pinned divider {d} of {pll.id}.{name} is not allowed ({allowed.describe()})")
    for index, divider in enumerate(board.dividers):
        ratio = board.pins.get(divider.id, {}).get("ratio")
        if ratio is not None and ratio not in divider.ratio:
            _pin_error(board, f"divider[{index}].settings", f"pinned ratio {ratio} of {divider.id} is not allowed ({divider.ratio.describe()})")


def _pin_error(board: Board, key: str, message: str) -> None:
    raise InfeasibleError(
        message,
        file=board.source_file,
        key=key,
        line=board.lines.get(key.rsplit(".", 1)[0]),
        hint="change or remove the pinned setting; pinned settings are kept as given",
    )


# --------------------------------------------------------------------------- the planner


@dataclass
class _Lift:
    """What lies below a node: direct targets, open dividers and PLLs (with the fixed ratio above each)."""

    targets: list[Target] = field(default_factory=list)
    open_dividers: list[tuple[Divider, int]] = field(default_factory=list)
    plls: list[tuple[Pll, int]] = field(default_factory=list)


class _Planner:
    def __init__(self, board: Board, graph: "nx.DiGraph", options: PlanOptions) -> None:
        self.board = board
        self.graph = graph
        self.options = options
        self.keep = max(1, options.alternatives + 1)
        self.deadline = time.monotonic() + options.time_limit_s
        if options.deadline is not None:
            self.deadline = min(self.deadline, options.deadline)
        self.notes: list[str] = []
        self.proven_notes: list[str] = []
        self.proven_levels: list[int] = []  # per proven note: how many leading criteria it proves (3 or 5)
        self.unused_notes: list[str] = []
        self.bandwidths: dict[str, Fraction | float | None] = {
            pll.id: loop_bandwidth_of(pll, options.loop_bandwidth_hz) for pll in board.plls
        }
        self._cache: dict[tuple[str, Fraction], list[SubPlan]] = {}
        self._wish_cache: dict[str, list[Fraction]] = {}
        self._vco_cache: dict[str, list[Fraction]] = {}

    # ----------------------------------------------------------------- helpers

    def _limits(self, keep: int | None = None) -> SearchLimits:
        return SearchLimits(keep=keep or self.keep, deadline=self.deadline)

    def _note(self, text: str) -> None:
        if text not in self.notes:
            self.notes.append(text)

    def _unused(self, text: str) -> None:
        if text not in self.unused_notes:
            self.unused_notes.append(text)

    def _children(self, node: str) -> list[str]:
        return sorted(self.graph.successors(node))

    def _consumers_below(self, node: str) -> list[str]:
        from clockplan.graph import consumers_below

        return consumers_below(self.graph, node)

    def _blocked(self, node: str, reason: str) -> SubPlan:
        consumers = self._consumers_below(node)
        return SubPlan(Score(violations=max(1, len(consumers)), worst_error=Fraction(1)), blocked=(reason,))

    def _lift(self, node: str, factor: int = 1, lift: _Lift | None = None) -> _Lift:
        """Collect what is below ``node``: targets through buffers and fixed dividers, open dividers, PLLs."""
        lift = lift if lift is not None else _Lift()
        for child in self._children(node):
            part = self.graph.nodes[child]["part"]
            if isinstance(part, Consumer):
                lift.targets.append(Target(part.id, part.frequency * factor, part.max_synthesis_error))
            elif isinstance(part, Buffer):
                self._lift(child, factor, lift)
            elif isinstance(part, Divider):
                fixed = self._fixed_ratio(part)
                if fixed is not None:
                    self._lift(child, factor * fixed, lift)
                else:
                    lift.open_dividers.append((part, factor))
            elif isinstance(part, Pll):
                lift.plls.append((part, factor))
        return lift

    def _fixed_ratio(self, divider: Divider) -> int | None:
        pinned = self.board.pins.get(divider.id, {}).get("ratio")
        if pinned is not None:
            return pinned
        return divider.ratio.lo if len(divider.ratio) == 1 else None

    # ----------------------------------------------------------------- nodes

    def plan_node(self, node: str, hz: Fraction) -> list[SubPlan]:
        """Ranked plans for everything below ``node`` when it runs at ``hz``."""
        key = (node, hz)
        if key in self._cache:
            return self._cache[key]
        branches = []
        for child in self._children(node):
            part = self.graph.nodes[child]["part"]
            if isinstance(part, Consumer):
                error = hz / part.frequency - 1
                score = Score(violations=int(abs(error) > part.max_synthesis_error), worst_error=abs(error))
                branches.append([SubPlan(score, errors={part.id: error})])
            elif isinstance(part, Buffer):
                branches.append(self.plan_node(child, hz))
            elif isinstance(part, Divider):
                branches.append(self.plan_divider(part, hz))
            elif isinstance(part, Pll):
                branches.append(self.plan_pll(part, hz))
        result = _k_best(branches, self.keep)
        self._cache[key] = result
        return result

    def plan_divider(self, divider: Divider, hz: Fraction) -> list[SubPlan]:
        """Try the ratios that matter for what is below the divider."""
        fixed = self.board.pins.get(divider.id, {}).get("ratio")
        ratios = [fixed] if fixed is not None else self._divider_ratios(divider, hz)
        if not ratios and not self._consumers_below(divider.id):
            # Nothing below uses it: any ratio serves; never a reason to call the board infeasible.
            self._unused(f"{divider.id} feeds no consumer: its ratio is set to its smallest allowed value, "
                         f"{divider.ratio.lo}; consider disabling it")
            ratios = [divider.ratio.lo]
        if not ratios:
            return [self._blocked(divider.id, f"no ratio of {divider.id} ({divider.ratio.describe()}) gives a usable frequency from {format_frequency(hz)}")]
        plans = []
        for ratio in ratios:
            for sub in self.plan_node(divider.id, hz / ratio):
                score = sub.score.with_dividers([ratio])
                plans.append(replace(sub, score=score, dividers={**sub.dividers, divider.id: ratio}))
            if time.monotonic() > self.deadline:
                self._note("the search stopped at its time limit")
                break
        return _ranked(plans, self.keep)

    def _divider_ratios(self, divider: Divider, hz: Fraction) -> list[int]:
        lift = self._lift(divider.id)
        ratios: set[int] = set()
        for target in lift.targets:
            x = hz / target.hz
            for value in (at_or_below(divider.ratio, floor_fraction(x)), at_or_above(divider.ratio, ceil_fraction(x))):
                if value is not None:
                    ratios.add(value)
        if lift.open_dividers:
            # Another open divider further down can share the division: let it, from the smallest ratio here.
            ratios.add(divider.ratio.lo)
        for pll, factor in lift.plls:
            ratios |= set(self._ratios_feeding(divider.ratio, hz, pll, factor))
        return sorted(ratios)

    def _ratios_feeding(self, choices: IntChoices, hz: Fraction, pll: Pll, factor: int) -> list[int]:
        """Ratios that put ``pll``'s input where its PFD (and input range) can take it."""
        lo_in = pll.pfd.lo * pll.ref_divider.lo
        hi_in = pll.pfd.hi * pll.ref_divider.hi
        if pll.input_range is not None:
            lo_in, hi_in = max(lo_in, pll.input_range.lo), min(hi_in, pll.input_range.hi)
        if lo_in > hi_in:
            return []
        lo = max(1, ceil_fraction(hz / (hi_in * factor)))
        hi = floor_fraction(hz / (lo_in * factor))
        values = ladder_of(choices, lo, hi).between(lo, hi)  # may be a range of 10^12 values: sliced lazily
        cap = self.options.max_cascade_inputs
        if len(values) > cap:
            self._note(f"only {cap} of {len(values)} ratios feeding {pll.id} were tried")
            values = values[:cap]
        return list(values)

    # ----------------------------------------------------------------- PLLs

    def plan_pll(self, pll: Pll, hz: Fraction) -> list[SubPlan]:
        """Solve a PLL at input ``hz`` and plan everything its outputs feed."""
        if pll.input_range is not None and hz not in pll.input_range:
            return [self._blocked(pll.id, f"{pll.id}: input {format_frequency(hz)} is outside its input range")]
        pin = self.board.pins.get(pll.id, {})
        pinned_dividers: dict[str, int] = pin.get("dividers", {})
        specs: list[OutputSpec] = []
        free: list[str] = []
        wishes: list[tuple[str, list[Fraction]]] = []
        for out in pll.outputs:
            node = f"{pll.id}.{out.name}"
            chain_first = IntChoices.of((pinned_dividers[out.name],)) if out.name in pinned_dividers else out.divider
            spec = self.output_spec(out.name, node, chain_first)
            if spec is None:
                free.append(out.name)
                wish = self._wishes(node)
                if wish:
                    wishes.append((out.name, wish))
            else:
                specs.append(spec)
        bandwidth = self.bandwidths.get(pll.id)
        problem = PllProblem(pll, hz, tuple(specs), pin.get("r"), pin.get("n"), bandwidth)
        candidates = []
        if not specs and wishes and pin.get("n") is None:
            candidates = self._candidates_from_wishes(problem, wishes)
        if not candidates:
            search = solve_pll(problem, self._limits(self.keep + 2))
            for text in search.notes:
                self._note(text)
            candidates = search.candidates
        if not candidates:
            if time.monotonic() > self.deadline:
                return [self._blocked(pll.id, f"{pll.id}: the search reached its time limit before finding a setting; raise --time-limit")]
            return [self._blocked(pll.id, _cannot_run(pll, hz, problem))]
        plans: list[SubPlan] = []
        # Outputs feeding other PLLs make each candidate costly: fewer candidates then.
        width = self.keep + (0 if any(self._lift(f"{pll.id}.{name}").plls for name in free) else 2)
        for candidate in candidates[:width]:
            plans += self._complete_pll(pll, candidate, free, pinned_dividers)
            if time.monotonic() > self.deadline:
                self._note("the search stopped at its time limit")
                break
        if not plans:
            return [self._blocked(pll.id, f"{pll.id}: no output divider gives the parts it feeds a usable frequency")]
        return _ranked(plans, self.keep)

    def output_spec(self, name: str, node: str, first: IntChoices) -> OutputSpec | None:
        lift = self._lift(node)
        if lift.targets:
            targets = list(lift.targets)
            anchor = min(lift.targets, key=lambda t: t.tolerance).hz
            for divider, factor in lift.open_dividers:
                targets += self._guided_targets(divider, factor, anchor)
            return OutputSpec(name, tuple(targets), (first,))
        if lift.open_dividers and not lift.plls:
            # Open dividers only: the first line of open dividers that ends in targets steers the
            # search as a product of ratios; the others are re-chosen once the output frequency is known.
            for entry in lift.open_dividers:
                chain = [first]
                targets = self._chain_targets(entry, chain)
                if targets:
                    return OutputSpec(name, tuple(targets), tuple(chain))
        return None

    def _chain_targets(self, entry: tuple[Divider, int], chain: list[IntChoices]) -> list[Target]:
        """Follow a single line of open dividers; the targets it ends in, lifted by the fixed ratios."""
        divider, factor = entry
        below = self._lift(divider.id)
        if below.plls:
            return []
        chain.append(divider.ratio)
        if below.targets and not below.open_dividers:
            return [replace(t, hz=t.hz * factor) for t in below.targets]
        if len(below.open_dividers) == 1 and not below.targets:
            inner = self._chain_targets(below.open_dividers[0], chain)
            return [replace(t, hz=t.hz * factor) for t in inner]
        return []

    def _guided_targets(self, divider: Divider, factor: int, anchor: Fraction) -> list[Target]:
        """Targets behind an open divider beside other loads, at the ratio nearest the anchor frequency."""
        below = self._lift(divider.id)
        if not below.targets:
            return []
        center = min(below.targets, key=lambda t: t.tolerance).hz
        x = anchor / (factor * center)
        options = [at_or_below(divider.ratio, floor_fraction(x)), at_or_above(divider.ratio, ceil_fraction(x))]
        options = [o for o in options if o is not None]
        if not options:
            return []
        ratio = min(options, key=lambda k: (abs(anchor / (factor * k) / center - 1), k))
        return [replace(t, hz=t.hz * factor * ratio) for t in below.targets]

    def _input_wishes(self, node: str) -> list[Fraction]:
        """Frequencies at ``node`` that a downstream PLL would like best (exact, whole N, high PFD)."""
        lift = self._lift(node)
        if lift.targets or lift.open_dividers or len(lift.plls) != 1:
            return []
        pll, factor = lift.plls[0]
        wishes: list[tuple[Fraction, Fraction]] = []
        for vco in self._exact_vcos(pll):
            n_first = max(ceil_fraction(vco / pll.pfd.hi), ceil_fraction(pll.feedback_min))
            for n in range(n_first, min(n_first + 4, floor_fraction(pll.feedback_max) + 1)):
                pfd = vco / n
                if pfd not in pll.pfd:
                    continue
                for r in list(ladder_of(pll.ref_divider, pll.ref_divider.lo, pll.ref_divider.lo + 8).between(pll.ref_divider.lo, pll.ref_divider.lo + 8))[:4]:
                    wishes.append((-pfd, pfd * r * factor))
        ordered = [hz for _, hz in sorted(set(wishes))]
        return list(dict.fromkeys(ordered))[:16]

    def _candidates_from_wishes(self, problem: PllProblem, wishes: list[tuple[str, list[Fraction]]]):
        """Offer the wished-for input frequencies of the first cascade output as targets."""
        name, hzs = wishes[0]
        out = problem.pll.output(name)
        found = []
        for hz in hzs:
            spec = OutputSpec(name, (Target(f"{name}-wish", hz),), (out.divider,))
            search = solve_pll(replace(problem, outputs=(spec,)), self._limits(2))
            found += [c for c in search.candidates if c.score.worst_error == 0]
            if len(found) > self.keep + 2 or time.monotonic() > self.deadline:
                break
        return found

    def _complete_pll(self, pll: Pll, candidate: Any, free: list[str], pinned: dict[str, int]) -> list[SubPlan]:
        """Plan every output's subtree for one candidate; free outputs try their dividers."""
        own = Score(
            fractional=candidate.score.fractional,
            pfd_product=candidate.pfd_hz,
            spurs_in_band=int(spur_in_band(candidate.spur_offset_hz, self.bandwidths.get(pll.id))),
            spur_offset=candidate.spur_offset_hz,
        )
        branches: list[list[SubPlan]] = []
        dividers: dict[str, int] = {}
        for out in pll.outputs:
            node = f"{pll.id}.{out.name}"
            if out.name in candidate.dividers and out.name not in free:
                d = candidate.dividers[out.name][0]
                dividers[out.name] = d
                branches.append(self._output_branch(node, d, candidate.vco_hz))
            else:
                options, total = ([pinned[out.name]], 1) if out.name in pinned else self._free_dividers(pll, out, candidate.vco_hz)
                ranked: list[SubPlan] = []
                best_key, stale, tried = None, 0, 0
                for d in options:
                    tried += 1
                    ranked += self._output_branch(node, d, candidate.vco_hz)
                    if time.monotonic() > self.deadline or _settled(ranked, self.keep):
                        break
                    # Stop trying inputs after a few that bring nothing better.
                    key = min(p.score.key() for p in ranked) if ranked else None
                    stale = 0 if best_key is None or (key is not None and key < best_key) else stale + 1
                    best_key = key if best_key is None or (key is not None and key < best_key) else best_key
                    if stale >= self.options.cascade_patience:
                        break
                branches.append(_ranked(ranked, self.keep))
                if total > tried:
                    self._cascade_note(node, tried, total, branches[-1])
        plans = []
        for combo in _k_best(branches, self.keep):
            prefix = f"{pll.id}."
            chosen = {**dividers, **{k[len(prefix):]: d for k, d in combo.pending.items() if k.startswith(prefix)}}
            pending = {k: d for k, d in combo.pending.items() if not k.startswith(prefix)}
            settings = PllSetting(candidate.r, candidate.n, {o.name: chosen[o.name] for o in pll.outputs})
            plans.append(replace(combo, score=combo.score.combined(own), plls={**combo.plls, pll.id: settings}, pending=pending))
        return plans

    def _output_branch(self, node: str, d: int, vco: Fraction) -> list[SubPlan]:
        """Plans below one output for divider ``d`` (carried in ``pending`` until the PLL is assembled)."""
        return [
            replace(sub, score=sub.score.with_dividers([d]), pending={**sub.pending, node: d})
            for sub in self.plan_node(node, vco / d)
        ]

    def _cascade_note(self, node: str, tried: int, total: int, found: list[SubPlan]) -> None:
        """Say that the trial of a cascade output stopped early, and how much of the plan is still proven best."""
        trial = f"{node}: {tried} of {total} output dividers were tried for the parts it feeds"
        proven = _proven_criteria(found, self.keep, self.board)
        if proven == 0:
            self._note(
                f"{trial} (those giving the frequencies they prefer first, then the highest frequencies); "
                "an untried one may give a better plan"
            )
            return
        later = "fewer and smaller dividers" if proven == 5 else "PFD frequency, spurs, fewer and smaller dividers"
        text = (
            f"{trial}; the plans found below it are exact and integer-N"
            + (" with every PLL at its highest PFD frequency" if proven == 5 else "")
            + f", which no other divider can better on criteria 1-{proven} of the objective; "
            f"only the later ones ({later}) are not proven best"
        )
        if text not in self.proven_notes:
            self.proven_notes.append(text)
            self.proven_levels.append(proven)

    def _free_dividers(self, pll: Pll, out: Any, vco: Fraction) -> tuple[list[int], int]:
        """Dividers to try on an output without targets of its own, most promising first, and how many there were.

        For an output feeding another PLL: first the dividers that hit a
        frequency the downstream PLL wishes for, then the rest from the highest
        frequency down, at most ``max_cascade_solves`` in all.
        """
        node = f"{pll.id}.{out.name}"
        lift = self._lift(node)
        if not lift.plls and not lift.open_dividers and not lift.targets:
            if not self._consumers_below(node):
                self._unused(f"{node} feeds no consumer: its divider is set to its smallest allowed value, "
                             f"{out.divider.lo}; consider disabling the output")
            return [out.divider.lo], 1  # an unused output: the smallest allowed divider
        options: set[int] = set()
        for downstream, factor in lift.plls:
            options |= set(self._ratios_feeding(out.divider, vco, downstream, factor))
        if lift.open_dividers:
            options.add(out.divider.lo)
        if not options:
            return [out.divider.lo], 1
        wished = []
        for hz in self._wishes(node):
            d = vco / hz
            if d.denominator == 1 and int(d) in options and int(d) not in wished:
                wished.append(int(d))
        # Next, the dividers whose frequency lets the downstream PLL be exact with a whole N (for the
        # VCO chosen here: the wishes above are made without it), highest frequency first.
        exact = [d for d in sorted(options) if d not in wished and self._feeds_exactly(node, vco / d)]
        ordered = wished + exact + [d for d in sorted(options) if d not in wished and d not in exact]
        return ordered[: self.options.max_cascade_solves], len(ordered)

    def _feeds_exactly(self, node: str, hz: Fraction) -> bool:
        """True if ``hz`` at ``node`` lets the one PLL below make one of its exact VCO frequencies with a whole N."""
        lift = self._lift(node)
        if lift.targets or lift.open_dividers or len(lift.plls) != 1:
            return False
        pll, factor = lift.plls[0]
        vcos = self._exact_vcos(pll)
        if not vcos:
            return False
        f_in = hz / factor
        if pll.input_range is not None and f_in not in pll.input_range:
            return False
        pinned = self.board.pins.get(pll.id, {}).get("r")
        lo = max(1, ceil_fraction(f_in / pll.pfd.hi))
        rs = [pinned] if pinned is not None else list(ladder_of(pll.ref_divider, lo, lo + 8).between(lo, lo + 8))[:4]
        for r in rs:
            pfd = f_in / r
            if pfd not in pll.pfd:
                continue
            for v in vcos:
                n = v / pfd
                if n.denominator == 1 and pll.feedback_min <= n <= pll.feedback_max:
                    return True
        return False

    def _exact_vcos(self, pll: Pll) -> list[Fraction]:
        """Up to 16 VCO frequencies at which every constrained output of ``pll`` is exact (single targets only)."""
        if pll.id not in self._vco_cache:
            targets = []
            for out in pll.outputs:
                spec = self.output_spec(out.name, f"{pll.id}.{out.name}", out.divider)
                if spec is None:
                    continue
                if len({t.hz for t in spec.targets}) != 1 or len(spec.chain) != 1:
                    targets = []
                    break
                targets.append((spec.targets[0].hz, out.divider))
            found: list[Fraction] = []
            if targets:
                step = lcm_fractions(hz for hz, _ in targets)
                for m in multiples_in(step, pll.vco.lo, pll.vco.hi)[:16]:
                    v = m * step
                    if all((v / hz).denominator == 1 and int(v / hz) in choices for hz, choices in targets):
                        found.append(v)
            self._vco_cache[pll.id] = found
        return self._vco_cache[pll.id]

    def _wishes(self, node: str) -> list[Fraction]:
        if node not in self._wish_cache:
            self._wish_cache[node] = self._input_wishes(node)
        return self._wish_cache[node]


def _ideal(plan: SubPlan) -> bool:
    """Feasible, exact and integer-N throughout: the floor of the objective's criteria 1-3."""
    return plan.score.feasible and plan.score.worst_error == 0 and plan.score.fractional == 0 and not plan.blocked


def _proven_criteria(found: list[SubPlan], keep: int, board: Board) -> int:
    """How many leading criteria of the objective the plans ``found`` below a cut-short trial provably win.

    Criteria 1-3 (violations, worst synthesis error, fractional-N PLLs) are
    counts and magnitudes whose least possible value is 0; plans at 0 on all
    three cannot be beaten there by any other choice. Scores of independent
    parts combine by sum, maximum and product, all monotonic, so no choice
    elsewhere can undo that. When in addition every PLL of each plan runs at
    the highest PFD frequency its part allows, criterion 4 (the product of
    PFD frequencies, larger first) is at its ceiling too, and criterion 5
    (fractional-N spurs in band) is 0 because no PLL runs a fractional N.

    Returns 5, 3, or 0 when the ``keep`` best plans found do not all reach the
    floor (an untried choice may then give a better plan).
    """
    best = found[:keep]
    if len(best) < keep or not all(_ideal(p) for p in best):
        return 0
    for plan in best:
        ceiling = Fraction(1)
        for pll_id in plan.plls:
            ceiling *= board.part(pll_id).pfd.hi
        if plan.score.pfd_product != ceiling:
            return 3
    return 5


def _fixed_input(planner: "_Planner", node: str) -> Fraction | None:
    """The frequency at ``node`` when no setting can change it (a reference through buffers and fixed dividers)."""
    parents = list(planner.graph.predecessors(node))
    if not parents:
        return None
    parent = parents[0]
    part = planner.graph.nodes[parent].get("part")
    if part is None:
        return None
    if isinstance(part, Reference):
        return part.frequency
    if isinstance(part, Buffer):
        return _fixed_input(planner, parent)
    if isinstance(part, Divider):
        ratio = planner._fixed_ratio(part)
        above = _fixed_input(planner, parent) if ratio is not None else None
        return above / ratio if above is not None else None
    return None


def _pfd_ceiling(planner: "_Planner", pll: Pll) -> Fraction:
    """The highest PFD frequency any plan can give ``pll``.

    The top of its PFD range, or lower when its input frequency is fixed by
    the board: then only ``input / R`` for an allowed R can be reached.
    """
    top = pll.pfd.hi
    hz = _fixed_input(planner, pll.id)
    if hz is None:
        return top
    pinned = planner.board.pins.get(pll.id, {}).get("r")
    r = pinned if pinned is not None else at_or_above(pll.ref_divider, max(1, ceil_fraction(hz / top)))
    return hz / r if r is not None and hz / r <= top else top


def _search_proof(planner: "_Planner", best: SubPlan) -> int | None:
    """How many leading criteria of the objective ``best`` is proven best on, when a search bound was hit.

    None when no bound was hit (the search was complete). Otherwise the larger of:

    * the local proofs: every bound hit was a cut cascade trial whose plans
      are at the floor of criteria 1-3 (or 1-5) (:func:`_proven_criteria`);
      any other bound proves nothing locally (0);
    * the global proof: the best plan itself is feasible, exact and integer-N
      (criteria 1-3 at their least possible value, and criterion 5 at 0), and
      when every PLL runs at the highest PFD frequency any plan could give it
      (:func:`_pfd_ceiling`), criterion 4 is at its ceiling too (5). No plan,
      found or not, can then beat it on those criteria.
    """
    if not planner.notes and not planner.proven_notes:
        return None
    local = 0 if planner.notes else min(planner.proven_levels, default=0)
    proof = 0
    if _ideal(best):
        proof = 3
        ceiling = Fraction(1)
        for pll_id in best.plls:
            ceiling *= _pfd_ceiling(planner, planner.board.part(pll_id))
        if best.score.pfd_product == ceiling:
            proof = 5
    return max(local, proof)


def _settled(plans: list[SubPlan], keep: int) -> bool:
    """True once ``keep`` plans below a cascade output are exact and integer-N throughout.

    The dividers are tried in order of preference (the downstream PLL's
    wished-for inputs, highest PFD first), so the search of a cascade output
    stops at the first such plans.
    """
    return sum(_ideal(p) for p in plans) >= keep


def _cannot_run(pll: Pll, hz: Fraction, problem: PllProblem) -> str:
    """Why no setting of ``pll`` runs from ``hz``: only a reason checked here (a pinned R is the R checked)."""
    pfd_range = f"{format_frequency(pll.pfd.lo)} to {format_frequency(pll.pfd.hi)}"
    pinned = ""
    if problem.r_pin is not None:
        pfd = hz / problem.r_pin
        if pfd not in pll.pfd:
            return (f"{pll.id}: the pinned R = {problem.r_pin} puts its {format_frequency(hz)} input at a PFD of "
                    f"{format_frequency(pfd)}, outside the PFD range {pfd_range}")
        pinned = f" with the pinned R = {problem.r_pin}"
    else:
        pfd_r_lo = ceil_fraction(hz / pll.pfd.hi)
        pfd_r_hi = floor_fraction(hz / pll.pfd.lo)
        if not ladder_of(pll.ref_divider, max(1, pfd_r_lo), pfd_r_hi).between(max(1, pfd_r_lo), pfd_r_hi):
            return f"{pll.id}: no allowed R ({pll.ref_divider.describe()}) puts {format_frequency(hz)} / R inside the PFD range {pfd_range}"
    vco_range = f"{format_frequency(pll.vco.lo)} to {format_frequency(pll.vco.hi)}"
    if problem.n_pin is not None:
        return f"{pll.id}: the pinned N = {problem.n_pin} puts the VCO outside {vco_range} for every allowed R{pinned}"
    return (f"{pll.id}: no N in {pll.feedback_min}..{pll.feedback_max} reaches the VCO range {vco_range} from "
            f"{format_frequency(hz)}{pinned}")


# --------------------------------------------------------------------------- ranking


def _ranked(plans: Sequence[SubPlan], keep: int) -> list[SubPlan]:
    seen = set()
    result = []
    for plan in sorted(plans, key=lambda p: p.score.key()):
        identity = plan.identity()
        if identity in seen:
            continue
        seen.add(identity)
        result.append(plan)
        if len(result) >= keep:
            break
    return result


def _k_best(branches: list[list[SubPlan]], keep: int) -> list[SubPlan]:
    """The ``keep`` best combinations of one plan from each independent branch."""
    if not branches:
        return [SubPlan(Score())]
    if any(not b for b in branches):
        return []

    def combine(index: tuple[int, ...]) -> SubPlan:
        plan = branches[0][index[0]]
        for branch, i in zip(branches[1:], index[1:]):
            plan = plan.merged(branch[i])
        return plan

    start = (0,) * len(branches)
    heap = [(combine(start).score.key(), start)]
    seen = {start}
    result = []
    while heap and len(result) < keep:
        _, index = heapq.heappop(heap)
        result.append(combine(index))
        for position in range(len(branches)):
            if index[position] + 1 < len(branches[position]):
                nxt = index[:position] + (index[position] + 1,) + index[position + 1 :]
                if nxt not in seen:
                    seen.add(nxt)
                    heapq.heappush(heap, (combine(nxt).score.key(), nxt))
    return result


# --------------------------------------------------------------------------- entry point


def margined_board(board: Board) -> Board:
    """``board`` with every PLL's input, PFD and VCO ranges narrowed by the margin its frequency band needs.

    The planner chooses settings on this board, so that each range holds over
    the reference's worst-case error and any spread sweep
    (:mod:`clockplan.extremes`), not only at nominal; the audit checks the
    same band (``vco-range-extremes``...).
    """
    from clockplan.extremes import margined_pll, pll_bands
    from clockplan.graph import build_graph

    if not board.plls:
        return board
    bands = pll_bands(board, build_graph(board))
    plls = tuple(margined_pll(pll, bands.get(pll.id)) for pll in board.plls)
    return board if plls == board.plls else replace(board, plls=plls)


def plan_board(board: Board, options: PlanOptions | None = None, *, margin: bool = True) -> BoardPlan:
    """Find settings for every open R, N and divider of ``board``.

    Pinned settings (the board file's ``settings``, complete or partial) are
    kept. The answer ranks plans by :mod:`clockplan.plan.objective`. Each
    PLL's ranges keep the margin of its frequency band (:func:`margined_board`);
    ``margin=False`` plans at nominal only (the explanation uses it to tell
    whether the margin is what blocks a board).

    Raises
    ------
    InfeasibleError
        Only when a pinned setting is outside its part's constraints. An
        infeasible board otherwise still gets its nearest plan (check
        ``BoardPlan.feasible``) so that it can be explained.

    Examples
    --------
    >>> from clockplan.boardfile import load_board  # doctest: +SKIP
    >>> plan = plan_board(load_board("boards/edge-router.toml"))  # doctest: +SKIP
    >>> plan.best.score.worst_error  # doctest: +SKIP
    Fraction(0, 1)
    """
    from clockplan.graph import build_graph

    options = options or PlanOptions()
    started = time.monotonic()
    check_pins(board)
    planned = margined_board(board) if margin else board
    graph = build_graph(planned)
    planner = _Planner(planned, graph, options)
    branches = [planner.plan_node(ref.id, ref.frequency) for ref in board.references]
    ranked = _k_best(branches, planner.keep)
    proof = _search_proof(planner, ranked[0])
    return BoardPlan(board, ranked[0], ranked[1:], planner.notes, planner.bandwidths, time.monotonic() - started,
                     planner.proven_notes, planner.unused_notes, proof)
