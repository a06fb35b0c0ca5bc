"""Settings for one loop: input divider, feedback ratio and output dividers that best meet its targets.

The problem: an exact input frequency, a part's constraints (R set, PFD and
VCO ranges, N range and mode, denominator rule, output divider sets), the
frequencies wanted at each output with their allowed errors, and any pinned
setting. The answer: candidate settings ranked by :mod:`clockplan.plan.objective`.

How the search avoids blind enumeration (details in docs/planning.md):

* **Exact path.** If every output can be exact, the VCO frequency is a whole
  multiple of the least common multiple of the output frequencies; for each
  such multiple inside the VCO range the output dividers are fixed, and the
  R values that put it on the feedback grid are multiples of a denominator.
* **Sweep.** Otherwise the worst error, as a function of the VCO frequency,
  is piecewise linear in relative terms. Every point of the achievable grid
  that could be optimal lies next to one of the curve's local minima, next to
  a point where a consumer reaches its allowed error, or at an end of the VCO
  range. Those points are listed exactly, sorted by their error (a lower
  bound for their neighbourhood), and visited best first; the search stops
  as soon as the next bound is worse than the best plan found. For each
  visited point the nearest achievable VCO frequencies are found per R
  (whole N, the fixed-modulus grid, or the Farey neighbours under a
  denominator limit).
"""

from __future__ import annotations

import bisect
import math
import time
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from fractions import Fraction

from clockplan.parts import Pll
from clockplan.plan.choices import Ladder, ladder_of, product_ladder
from clockplan.plan.objective import Score
from clockplan.plan.rational import bounded_neighbors, ceil_fraction, floor_fraction, lcm_fractions, multiples_in
from clockplan.plan.spurs import boundary_spur_offset, spur_in_band

__all__ = ["Target", "OutputSpec", "PllProblem", "PllCandidate", "PllSearch", "SearchLimits", "solve_pll"]


@dataclass(frozen=True)
class Target:
    """A frequency wanted at a PLL output.

    ``hz`` is the frequency the output itself must run at (a consumer behind a
    fixed divider of 4 wanting 25 MHz puts 100 MHz here); ``tolerance`` is the
    consumer's allowed synthesis error (a fraction; 0 means exact).
    """

    label: str
    hz: Fraction
    tolerance: Fraction = Fraction(0)


@dataclass(frozen=True)
class OutputSpec:
    """One constrained PLL output: its targets and the divider chain whose product it can set.

    ``chain[0]`` is the output divider; further entries are open plain
    dividers in series below it (their product is what the targets see).
    """

    name: str
    targets: tuple[Target, ...]
    chain: tuple  # tuple[IntChoices, ...]


@dataclass(frozen=True)
class PllProblem:
    """Everything :func:`solve_pll` needs.

    ``outputs`` lists only constrained outputs; an output the caller plans
    later (one that feeds another PLL, or nothing) is left out.
    """

    pll: Pll
    input_hz: Fraction
    outputs: tuple[OutputSpec, ...]
    r_pin: int | None = None
    n_pin: Fraction | None = None
    loop_bandwidth: Fraction | float | None = None


#: R values a search past its deadline still tries, to give a nearest setting (see ``_fallback``).
_LATE_GRIDS = 16


@dataclass(frozen=True)
class SearchLimits:
    """Bounds that keep a search finite: ranked results kept, a deadline, candidate caps."""

    keep: int = 4
    deadline: float | None = None
    max_multiples: int = 20000
    max_ladder: int = 50000
    max_free_points: int = 64
    max_r_values: int = 4096


@dataclass(frozen=True)
class PllCandidate:
    """One setting of the PLL with its errors and score.

    ``dividers`` maps each constrained output to its chain settings (output
    divider first); ``errors`` maps each target label to its exact error.
    """

    r: int
    n: Fraction
    pfd_hz: Fraction
    vco_hz: Fraction
    dividers: dict[str, tuple[int, ...]]
    errors: dict[str, Fraction]
    score: Score
    spur_offset_hz: Fraction | None = None


@dataclass
class PllSearch:
    """The ranked candidates of a search, and what bounded it."""

    candidates: list[PllCandidate]
    notes: list[str] = field(default_factory=list)
    evaluated: int = 0

    @property
    def best(self) -> PllCandidate | None:
        """The best candidate, or None if the part cannot run at all."""
        return self.candidates[0] if self.candidates else None


# --------------------------------------------------------------------------- per-output model


@dataclass(frozen=True)
class _Output:
    spec: OutputSpec
    t_lo: Fraction
    t_hi: Fraction
    center: Fraction  # where one unit's error curve bottoms out (harmonic mean of t_lo, t_hi)
    window_lo: Fraction  # the output frequency range that keeps every target in tolerance
    window_hi: Fraction
    ladder: Ladder  # every allowed divider (product) in the window: exact look-ups
    bottoms: Sequence[Fraction]  # d * center for each value d of ``sweep``, computed on access
    sweep: Ladder  # the dividers whose bottoms the sweep enumerates (``ladder``, or an even subset of a huge one)
    center_f: float = 0.0
    t_lo_f: float = 0.0
    t_hi_f: float = 0.0

    def errors(self, out_hz: Fraction) -> dict[str, Fraction]:
        return {t.label: out_hz / t.hz - 1 for t in self.spec.targets}

    def curve_error(self, v: Fraction, d: int) -> Fraction:
        """The worst |error| of this output's targets for VCO ``v`` and divider product ``d``."""
        low = v / (d * self.t_lo) - 1
        high = 1 - v / (d * self.t_hi)
        return max(low, high)

    def feasible(self, v: Fraction, d: int) -> bool:
        return d * self.window_lo <= v <= d * self.window_hi

    def candidate_dividers(self, v: Fraction) -> set[int]:
        x = v / self.center
        found = {self.ladder.below(floor_fraction(x)), self.ladder.above(ceil_fraction(x))}
        if self.window_lo <= self.window_hi:
            first = self.ladder.above(ceil_fraction(v / self.window_hi))
            last = self.ladder.below(floor_fraction(v / self.window_lo)) if self.window_lo > 0 else None
            found |= {first, last}
        found.discard(None)
        return found  # type: ignore[return-value]

    def best_divider(self, v: Fraction) -> tuple[int, Fraction, bool] | None:
        """Divider product for VCO ``v``: inside tolerance first, then smallest error, then smallest."""
        best = None
        for d in self.candidate_dividers(v):
            entry = (not self.feasible(v, d), self.curve_error(v, d), d)
            if best is None or entry < best:
                best = entry
        if best is None:
            return None
        return best[2], best[1], not best[0]


class _Scaled(Sequence[Fraction]):
    """``values[i] * factor`` on access: a ladder may hold 10^9 dividers, which must not become a list."""

    def __init__(self, values: Sequence[int], factor: Fraction) -> None:
        self.values = values
        self.factor = factor

    def __len__(self) -> int:
        return len(self.values)

    def __getitem__(self, index):  # type: ignore[override]
        if isinstance(index, slice):
            return [v * self.factor for v in self.values[index]]
        return self.values[index] * self.factor


def _build_output(spec: OutputSpec, vlo: Fraction, vhi: Fraction, limits: SearchLimits, notes: list[str]) -> _Output:
    hz = [t.hz for t in spec.targets]
    t_lo, t_hi = min(hz), max(hz)
    center = 2 * t_lo * t_hi / (t_lo + t_hi)
    window_lo = max(t.hz * (1 - t.tolerance) for t in spec.targets)
    window_hi = min(t.hz * (1 + t.tolerance) for t in spec.targets)
    smallest = min(center, window_lo) if window_lo > 0 else center / 2
    lo = max(1, floor_fraction(vlo / max(center, window_hi)))
    hi = ceil_fraction(vhi / smallest)
    if len(spec.chain) == 1:
        ladder = ladder_of(spec.chain[0], lo, hi)  # a lazy range: look-ups stay exact however wide it is
        sweep = ladder
        if len(ladder.values) > limits.max_ladder:
            # A range of 10^9 dividers (a 1 Hz output of a GHz VCO) cannot be swept whole: the
            # sweep enumerates an even subset, while the exact path and every visited point still
            # look the nearest allowed divider up in the whole range (exact divisors are never lost).
            total = len(ladder.values)
            stride = -(-total // limits.max_ladder)
            sweep = Ladder(ladder.values[::stride], truncated=True)
            notes.append(
                f"output {spec.name}: {total} divider values are too many to search in full; every "
                f"{stride}th was swept (exact divisors and the dividers next to each visited point "
                "were all tried)"
            )
    else:
        ladder = product_ladder(spec.chain, max(1, lo // 2), 2 * hi + 2, limits.max_ladder)
        if ladder.truncated:
            notes.append(f"output {spec.name}: only the first {limits.max_ladder} divider products were searched")
        sweep = ladder
    bottoms = _Scaled(sweep.values, center)
    return _Output(spec, t_lo, t_hi, center, window_lo, window_hi, ladder, bottoms, sweep, float(center), float(t_lo), float(t_hi))


# --------------------------------------------------------------------------- the grid per R


@dataclass(frozen=True)
class _RGrid:
    r: int
    pfd: Fraction
    n_lo: Fraction
    n_hi: Fraction

    @property
    def vco_lo(self) -> Fraction:
        return self.pfd * self.n_lo

    @property
    def vco_hi(self) -> Fraction:
        return self.pfd * self.n_hi


def _r_grids(problem: PllProblem, limits: SearchLimits | None = None, notes: list[str] | None = None) -> list[_RGrid]:
    pll, f_in = problem.pll, problem.input_hz
    # R must put the PFD in range and let some N in range reach the VCO range:
    # f_in * n_min / R <= vco_hi and f_in * n_max / R >= vco_lo.
    lo = max(ceil_fraction(f_in / pll.pfd.hi), ceil_fraction(f_in * pll.feedback_min / pll.vco.hi))
    hi = min(floor_fraction(f_in / pll.pfd.lo), floor_fraction(f_in * pll.feedback_max / pll.vco.lo))
    values: Iterable[int]
    if problem.r_pin is not None:
        values = [problem.r_pin] if problem.r_pin in pll.ref_divider and lo <= problem.r_pin <= hi else []
    else:
        values = ladder_of(pll.ref_divider, max(lo, 1), hi).between(max(lo, 1), hi)
        cap = (limits or SearchLimits()).max_r_values
        if len(values) > cap:
            # Smallest R first: the highest PFD frequencies (common practice for low in-band noise).
            if notes is not None:
                notes.append(f"{pll.id}: only the {cap} smallest of {len(values)} allowed R values were searched")
            values = values[:cap]
    grids = []
    for r in values:
        pfd = f_in / r
        n_lo = max(pll.feedback_min, pll.vco.lo / pfd)
        n_hi = min(pll.feedback_max, pll.vco.hi / pfd)
        if n_lo <= n_hi:
            grids.append(_RGrid(r, pfd, n_lo, n_hi))
    return grids


def _grid_points(pll: Pll, grid: _RGrid, m: Fraction) -> list[tuple[int, bool, Fraction]]:
    """Nearest feedback ratios to VCO ``m`` on this R's grid: (side, integer?, N); side -1 below, +1 above."""
    x = m / grid.pfd
    points: list[tuple[int, bool, Fraction]] = []

    def add(side: int, n: Fraction) -> None:
        if grid.n_lo <= n <= grid.n_hi:
            points.append((side, n.denominator == 1, n))

    add(-1, Fraction(floor_fraction(x)))
    add(1, Fraction(ceil_fraction(x)))
    if pll.mode == "fractional" and pll.denominator is not None:
        if pll.denominator.fixed is not None:
            modulus = pll.denominator.fixed
            below, above = Fraction(floor_fraction(x * modulus), modulus), Fraction(ceil_fraction(x * modulus), modulus)
        else:
            below, above = bounded_neighbors(x, pll.denominator.limit or 1)
        if below.denominator != 1:
            add(-1, below)
        if above.denominator != 1:
            add(1, above)
    return points


def _on_grid(loop: Pll, ratio: Fraction) -> bool:
    return loop.allows_n(ratio)


# --------------------------------------------------------------------------- the solver


class _Solver:
    def __init__(self, problem: PllProblem, limits: SearchLimits) -> None:
        self.problem = problem
        self.pll = problem.pll
        self.limits = limits
        self.notes: list[str] = []
        self.grids = _r_grids(problem, limits, self.notes)
        self.evaluated = 0
        self.found: dict[tuple[int, Fraction], PllCandidate] = {}
        self._exact_settled = False
        self._divide_cache: dict[Fraction, tuple | None] = {}
        if self.grids:
            self.vlo = min(g.vco_lo for g in self.grids)
            self.vhi = max(g.vco_hi for g in self.grids)
            self.outputs = [_build_output(s, self.vlo, self.vhi, limits, self.notes) for s in problem.outputs]

    # ----------------------------------------------------------------- scoring

    def _divide(self, v: Fraction) -> tuple | None:
        cached = self._divide_cache.get(v, False)
        if cached is not False:
            return cached  # type: ignore[return-value]
        dividers: dict[str, tuple[int, ...]] = {}
        errors: dict[str, Fraction] = {}
        violations = 0
        for out in self.outputs:
            choice = out.best_divider(v)
            if choice is None:
                self._divide_cache[v] = None
                return None
            d = choice[0]
            dividers[out.spec.name] = out.ladder.split(d)
            for target in out.spec.targets:
                error = v / (d * target.hz) - 1
                errors[target.label] = error
                violations += abs(error) > target.tolerance
        worst = max((abs(e) for e in errors.values()), default=Fraction(0))
        flat = [d for split in dividers.values() for d in split]
        result = (dividers, errors, violations, worst, flat)
        self._divide_cache[v] = result
        return result

    def _consider(self, grid: _RGrid, n: Fraction) -> PllCandidate | None:
        key = (grid.r, n)
        if key in self.found:
            return self.found[key]
        v = grid.pfd * n
        divided = self._divide(v)
        self.evaluated += 1
        if divided is None:
            return None
        dividers, errors, violations, worst, flat = divided
        offset = boundary_spur_offset(grid.pfd, n)
        score = Score(
            violations=violations,
            worst_error=worst,
            fractional=int(n.denominator != 1),
            pfd_product=grid.pfd,
            spurs_in_band=int(spur_in_band(offset, self.problem.loop_bandwidth)),
            spur_offset=offset,
        ).with_dividers(flat)
        candidate = PllCandidate(grid.r, n, grid.pfd, v, dividers, errors, score, offset)
        self.found[key] = candidate
        return candidate

    def ranked(self) -> list[PllCandidate]:
        return sorted(self.found.values(), key=lambda c: (c.score.key(), c.r, c.n))

    def _out_of_time(self) -> bool:
        if self.limits.deadline is not None and time.monotonic() > self.limits.deadline:
            self.notes.append("the search stopped at its time limit")
            return True
        return False

    # ----------------------------------------------------------------- strategies

    def solve(self) -> PllSearch:
        if not self.grids:
            return PllSearch([], self.notes)
        if self.problem.n_pin is not None:
            self._pinned_n()
        elif not self.outputs:
            self._unconstrained()
        else:
            if not self._exact() or len(self.found) < self.limits.keep:
                self._sweep()
        if not self.found:
            self._fallback()
        ranked = self.ranked()
        return PllSearch(ranked, list(dict.fromkeys(self.notes)), self.evaluated)

    def _fallback(self) -> None:
        """Out of time with nothing found: visit the few most promising points regardless of the clock."""
        if self.problem.n_pin is not None:
            return
        if not self.outputs:
            grid = self.grids[0]
            self._consider(grid, Fraction(ceil_fraction(grid.n_lo)))
            return
        if self.limits.deadline is not None and time.monotonic() > self.limits.deadline:
            # Past the deadline: a bounded look (the first R values, the two best points), so that
            # the run still ends near its limit however many R values the part allows.
            if len(self.grids) > _LATE_GRIDS:
                self.notes.append(f"{self.pll.id}: past the time limit only the {_LATE_GRIDS} smallest R values "
                                  "were tried for a nearest setting")
                self.grids = self.grids[:_LATE_GRIDS]
            count = 2
        else:
            count = 8
        points = sorted(self._critical_points(), key=lambda item: item[0])[:count]
        for _, point in points:
            self._visit_point(point.point if isinstance(point, _Crossing) else point)

    def _pinned_n(self) -> None:
        n = self.problem.n_pin
        assert n is not None
        for grid in self.grids:
            if grid.n_lo <= n <= grid.n_hi and _on_grid(self.pll, ratio=n):
                self._consider(grid, n)

    def _unconstrained(self) -> None:
        """No output has a target yet: offer whole-N points at the highest PFDs."""
        budget = self.limits.max_free_points
        for grid in self.grids[: max(1, self.limits.keep)]:
            for n in range(ceil_fraction(grid.n_lo), floor_fraction(grid.n_hi) + 1):
                self._consider(grid, Fraction(n))
                budget -= 1
                if budget <= 0:
                    self.notes.append(f"{self.pll.id}: only {self.limits.max_free_points} VCO frequencies were offered to the parts it feeds")
                    return

    def _exact(self) -> bool:
        """Every output exact: VCO = multiple of the lcm of the output frequencies."""
        if any(out.t_lo != out.t_hi for out in self.outputs):
            return False
        step = lcm_fractions(out.t_lo for out in self.outputs)
        multiples = multiples_in(step, self.vlo, self.vhi)
        # With every tolerance zero, feasible means exact: a complete exact search settles feasibility.
        self._exact_settled = all(t.tolerance == 0 for out in self.outputs for t in out.spec.targets)
        found = False
        if len(multiples) > self.limits.max_multiples:
            self._exact_settled = False
            self.notes.append(
                f"{self.pll.id}: {len(multiples)} VCO frequencies are common multiples of the outputs; "
                f"those on the feedback grid of each R (whole N, and k/M for a fixed modulus), and only the lowest "
                f"{self.limits.max_multiples} others were examined"
            )
            multiples = multiples[: self.limits.max_multiples]
            found = self._exact_on_grids(step)
            rule = self.pll.denominator if self.pll.mode == "fractional" else None
            if rule is None or rule.fixed is not None:
                return found  # every grid point (whole N, k/M) that is a common multiple was visited above
        for index, m in enumerate(multiples):
            if index % 256 == 0 and self._out_of_time():
                self._exact_settled = False
                break
            v = m * step
            if not all(_whole_in(out.ladder, v / out.t_lo) for out in self.outputs):
                continue
            for grid in self._exact_grids(v):
                found = self._consider(grid, v / grid.pfd) is not None or found
        return found

    def _exact_on_grids(self, step: Fraction) -> bool:
        """Exact VCO frequencies found from the feedback grid of each R, when the common multiples are too many.

        On R's grid the VCO is ``pfd * N``. With ``pfd / step = p / q`` in lowest
        terms, ``pfd * N`` is a multiple of ``step`` exactly when ``N * p / q`` is
        whole: for a whole N when ``q | N``; for ``N = k / M`` (a fixed modulus)
        when ``q | k p / M``... written as ``pfd / (M step) = p' / q'`` and ``q' | k``.
        Only the grid points that are common multiples are visited, so a 1 Hz
        output of a GHz VCO finds its exact divider at once. Up to ``keep + 1``
        per R and class are kept (the smallest N first), within
        ``max_multiples`` points in all.
        """
        found = False
        budget = self.limits.max_multiples
        keep = self.limits.keep + 1
        moduli = [1]
        if self.pll.mode == "fractional" and self.pll.denominator is not None and self.pll.denominator.fixed is not None:
            moduli.append(self.pll.denominator.fixed)
        for index, grid in enumerate(self.grids):
            if index % 64 == 0 and self._out_of_time():
                return found
            for modulus in moduli:
                q = (grid.pfd / (modulus * step)).denominator
                first = ceil_fraction(grid.n_lo * modulus / q)
                last = floor_fraction(grid.n_hi * modulus / q)
                hits = 0
                for j in range(first, last + 1):
                    budget -= 1
                    if budget < 0:
                        return found
                    n = Fraction(j * q, modulus)
                    v = grid.pfd * n
                    if all(_whole_in(out.ladder, v / out.t_lo) for out in self.outputs):
                        found = self._consider(grid, n) is not None or found
                        hits += 1
                        if hits >= keep:
                            break
        return found

    def _exact_grids(self, v: Fraction) -> list[_RGrid]:
        """The R values that put ``v`` on the feedback grid, best (smallest R) first per class."""
        ratio = v / self.problem.input_hz  # N = ratio * R
        b = ratio.denominator
        keep = self.limits.keep + 1
        integer: list[_RGrid] = []
        fractional: list[_RGrid] = []
        rule = self.pll.denominator if self.pll.mode == "fractional" else None
        for grid in self.grids:
            if not grid.vco_lo <= v <= grid.vco_hi:
                continue
            if grid.r % b == 0:
                if len(integer) < keep:
                    integer.append(grid)
            elif rule is not None and len(fractional) < keep:
                if rule.fixed is not None:
                    ok = (grid.r * rule.fixed) % b == 0
                else:
                    ok = b // math.gcd(b, grid.r) <= (rule.limit or 1)
                if ok:
                    fractional.append(grid)
            if len(integer) >= keep and (rule is None or len(fractional) >= keep):
                break
        return integer + fractional

    # ----------------------------------------------------------------- the sweep

    def _sweep(self) -> None:
        points = sorted(self._critical_points(), key=lambda item: item[0])
        if not self._exact_settled:
            self._visit(points, feasible_only=True)
        if not any(c.score.feasible for c in self.found.values()):
            self._visit(points, feasible_only=False)

    def _critical_points(self) -> list[tuple[float, "Fraction | _Crossing"]]:
        """(error bound, VCO point) for every point an optimum can sit next to.

        The bound is the worst-error curve at the point, computed in floats
        (from a superset of the nearest dividers, so it never overstates);
        :meth:`_visit` prunes only with a margin far above float rounding.
        """
        points: set[Fraction] = {self.vlo, self.vhi}
        points |= {g.vco_lo for g in self.grids} | {g.vco_hi for g in self.grids}
        for out in self.outputs:
            for index, d in enumerate(out.sweep.values):
                if index % 64 == 63 and self._out_of_time():
                    break
                for edge in (d * out.center, d * out.window_lo, d * out.window_hi):
                    if self.vlo <= edge <= self.vhi:
                        points.add(edge)
        # Floats order the points; exact comparison only breaks float ties.
        boundaries = sorted(points, key=lambda p: (float(p), p))
        result = []
        for index, p in enumerate(boundaries):
            if index % 256 == 255 and self._out_of_time():
                break
            e = self._pure_error_float(float(p))
            if e is not None:
                result.append((e, p))
        return result + self._crossings(boundaries)  # type: ignore[operator]

    def _crossings(self, boundaries: list[Fraction]) -> list[tuple[float, "_Crossing"]]:
        """Local minima of the worst-error curve strictly inside elementary intervals.

        Inside an interval each output's error is a tent ``min(v/B - 1, 1 - v/A)``;
        a local minimum of the worst error is where one output's falling side
        meets another output's rising side on top of every other tent (an
        output's own sides meet at its peak, never at a minimum). Floats discard
        the pairs that are clearly not on top (with a margin far above rounding);
        the point itself, ``2AB/(A+B)``, is made exact only when visited.
        """
        found = []
        # Per output: how many bottoms lie at or below p (advanced as p moves right).
        below = [bisect.bisect_right(out.bottoms, boundaries[0]) for out in self.outputs] if boundaries else []
        for index, (p, q) in enumerate(zip(boundaries, boundaries[1:])):
            # Each interval costs a pass over every pair of outputs: check the clock often.
            if index % 64 == 63 and self._out_of_time():
                break
            lines = []  # per output: (B or None, A or None), exact
            for k, out in enumerate(self.outputs):
                while below[k] < len(out.bottoms) and out.bottoms[below[k]] <= p:
                    below[k] += 1
                i = below[k] - 1
                # The first bottom at or above q: the next one, unless it lies strictly inside (p, q).
                j = below[k]
                if j < len(out.bottoms) and out.bottoms[j] < q:
                    j = bisect.bisect_left(out.bottoms, q, j)
                rise = out.sweep.values[i] * out.t_lo if i >= 0 else None
                fall = out.sweep.values[j] * out.t_hi if j < len(out.bottoms) else None
                lines.append((rise, fall))
            floats = [(float(b) if b is not None else None, float(a) if a is not None else None) for b, a in lines]
            pf, qf = float(p), float(q)
            for ia, (_, a) in enumerate(lines):
                if a is None:
                    continue
                af = floats[ia][1]
                for ib, (b, _) in enumerate(lines):
                    if b is None or ia == ib:
                        continue
                    bf = floats[ib][0]
                    vf = 2 * af * bf / (af + bf)
                    if not pf * (1 - 1e-12) < vf < qf * (1 + 1e-12):
                        continue
                    level_f = 1 - vf / af
                    if level_f < -1e-12 or any(_tent(vf, rb, fa) > level_f + 1e-12 for rb, fa in floats):
                        continue
                    # Kept without an exact check: an extra point costs a visit, a missing one optimality.
                    found.append((level_f, _Crossing(a, b)))
        return found

    def _pure_error_float(self, v: float) -> float | None:
        worst = 0.0
        for out in self.outputs:
            x = v / out.center_f
            units = {out.ladder.below(math.floor(x) + 1), out.ladder.below(math.floor(x)), out.ladder.above(math.ceil(x)), out.ladder.above(math.ceil(x) - 1)}
            errors = [max(v / (d * out.t_lo_f) - 1, 1 - v / (d * out.t_hi_f)) for d in units if d]
            if not errors:
                return None
            worst = max(worst, min(errors))
        return worst

    def _inside(self, v: Fraction) -> bool:
        vf = float(v)
        for out in self.outputs:
            x = vf / out.center_f
            near = {out.ladder.below(math.floor(x) + 1), out.ladder.above(math.ceil(x) - 1)}
            # Quick float rejection: no nearby divider's window comes within rounding of v.
            lo_f, hi_f = float(out.window_lo), float(out.window_hi)
            if lo_f <= hi_f and all(d is None or vf < d * lo_f * (1 - 1e-12) or vf > d * hi_f * (1 + 1e-12) for d in near):
                far = out.candidate_dividers(v) - near
                if not any(out.feasible(v, d) for d in far):
                    return False
                continue
            if not any(out.feasible(v, d) for d in out.candidate_dividers(v)):
                return False
        return True

    def _visit(self, points: Sequence[tuple[float, "Fraction | _Crossing"]], feasible_only: bool) -> None:
        best = self._best_error(feasible_only)
        for index, (bound, point) in enumerate(points):
            if best is not None and bound > float(best) * (1 + 1e-9) + 1e-15:
                return
            m = point.point if isinstance(point, _Crossing) else point
            if feasible_only and not self._inside(m):
                continue
            if index % 16 == 0 and self._out_of_time():
                return
            self._visit_point(m)
            best = self._best_error(feasible_only)

    def _best_error(self, feasible_only: bool) -> Fraction | None:
        errors = [c.score.worst_error for c in self.found.values() if c.score.feasible or not feasible_only]
        return min(errors) if errors else None

    def _visit_point(self, m: Fraction) -> None:
        """Evaluate the nearest grid points to ``m``, per side and per class, over every R."""
        keep = self.limits.keep + 1
        lanes: dict[tuple[int, bool], list[tuple[Fraction, int, _RGrid, Fraction]]] = {}
        for grid in self.grids:
            if not grid.vco_lo <= m <= grid.vco_hi:
                continue
            for side, whole, n in _grid_points(self.pll, grid, m):
                v = grid.pfd * n
                lanes.setdefault((side, whole), []).append((abs(v - m), grid.r, grid, n))
        for lane in lanes.values():
            lane.sort(key=lambda item: (item[0], item[1]))
            distances: list[Fraction] = []
            for distance, _, grid, n in lane:
                if distance not in distances:
                    if len(distances) >= keep:
                        break
                    distances.append(distance)
                self._consider(grid, n)


def _tent(v: float, rise: float | None, fall: float | None) -> float:
    levels = [x for x in (v / rise - 1 if rise else None, 1 - v / fall if fall else None) if x is not None]
    return min(levels)


@dataclass(frozen=True)
class _Crossing:
    """Where a falling side ``1 - v/A`` meets a rising side ``v/B - 1``: ``v = 2AB/(A+B)``."""

    a: Fraction
    b: Fraction

    @property
    def point(self) -> Fraction:
        return 2 * self.a * self.b / (self.a + self.b)


def _whole_in(ladder: Ladder, d: Fraction) -> bool:
    return d.denominator == 1 and ladder.below(d.numerator) == d.numerator


def solve_pll(problem: PllProblem, limits: SearchLimits | None = None) -> PllSearch:
    """Rank settings of one PLL for the targets of its outputs.

    Parameters
    ----------
    problem
        The PLL, its exact input frequency, the constrained outputs and pins.
    limits
        How many ranked candidates to keep and when to stop.

    Returns
    -------
    PllSearch
        Candidates best first (by :class:`~clockplan.plan.objective.Score`),
        with notes when a bound cut the search short.

    Examples
    --------
    A 25 MHz input, outputs of 125 MHz and 100 MHz: the VCO lands on a
    multiple of 500 MHz (2.5 GHz or 3 GHz in a 2.4-3.2 GHz range), exactly.

    >>> from clockplan.parts import Pll, PllOutput, IntChoices, FrequencyRange
    >>> part = Pll("synth", "ref", FrequencyRange(Fraction(2_400_000_000), Fraction(3_200_000_000)),
    ...           FrequencyRange(Fraction(5_000_000), Fraction(100_000_000)), IntChoices(1, 255),
    ...           Fraction(16), Fraction(4095), "integer",
    ...           (PllOutput("a", IntChoices(4, 256)), PllOutput("b", IntChoices(4, 256))))
    >>> outs = (OutputSpec("a", (Target("eth", Fraction(125_000_000)),), (IntChoices(4, 256),)),
    ...         OutputSpec("b", (Target("pcie", Fraction(100_000_000)),), (IntChoices(4, 256),)))
    >>> best = solve_pll(PllProblem(part, Fraction(25_000_000), outs)).best
    >>> best.vco_hz, best.r, best.n, best.score.worst_error
    (Fraction(2500000000, 1), 1, Fraction(100, 1), Fraction(0, 1))
    """
    return _Solver(problem, limits or SearchLimits()).solve()
