"""Benchmark: the planner against an exhaustive search, and planning time against board size.

Run from the repository root::

    python bench/bench_planner.py            # full run
    python bench/bench_planner.py --quick    # a smaller part and smaller boards

(``python -m bench`` runs it with every other benchmark: ``planner`` and ``boards``.)

Part 1 solves one 4-output fractional-N loop (input divider up to 1023, N up to 4095,
output dividers up to 256) with the planner and with an exhaustive search,
in the same run, and prints both worst errors and the speed ratio (planner:
best of five runs; exhaustive: one run).

How the exhaustive baseline is restricted so that it finishes: it visits
*every* allowed R and *every* feedback ratio on the part's grid, which is
only finite for a fixed modulus, so the benchmark part uses a modulus of
1000 (k/1000) instead of a 2^24 one. For each grid point it takes, per
output, the better of the two dividers around ``vco / target`` (the error
of one output is unimodal in its divider, so this equals trying all 256).
The scan runs vectorised in float64 with numpy; every point within 1e-12
of the float minimum is re-evaluated exactly with fractions, so the
baseline's worst error is exact.

With ``--quick`` the part's input divider stops at 15 and N at 511 (the
exhaustive scan shrinks accordingly).

Part 2 plans synthetic boards of 10, 100, 1,000 and 5,000 consumers (five
consumers per PLL drawn from network, audio and video frequency families,
every eighth PLL from a mixed family with no common VCO frequency, every
fourth PLL fed by another PLL's spare output), then audits each with its
planned settings (the whole analysis: exact audit and budget stages), and
prints both times per board size. The baseline of each is the 10-consumer
board's time scaled linearly (time x n / 10): a ratio of 1 is linear growth.
``--quick`` plans 10 and 20 consumers.

This is a script that prints figures, not a timed test.
"""

from __future__ import annotations

import argparse
import math
import random
import sys
import time
from fractions import Fraction
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench.common import Row  # noqa: E402
from clockplan.analysis import analyze  # noqa: E402
from clockplan.boardfile import parse_board  # noqa: E402
from clockplan.parts import Denominator, FrequencyRange, IntChoices, Pll, PllOutput  # noqa: E402
from clockplan.plan.board_planner import PlanOptions, plan_board  # noqa: E402
from clockplan.plan.pll_solver import OutputSpec, PllProblem, SearchLimits, Target, solve_pll  # noqa: E402

MODULUS = 1000
F_IN = Fraction(50_000_000)


FULL_PART = (1023, 4095)
QUICK_PART = (15, 511)
FULL_SIZES = [10, 100, 1000, 5000]
QUICK_SIZES = [10, 20]


def bench_pll(targets: list[Fraction], r_max: int = 1023, n_max: int = 4095) -> Pll:
    """The benchmark part: 4 outputs, R 1..r_max, N 16..n_max, dividers 1..256, k/1000 fractions."""
    return Pll(
        id="bench",
        input="ref",
        vco=FrequencyRange(Fraction(3_000_000_000), Fraction(6_000_000_000)),
        pfd=FrequencyRange(Fraction(50_000), Fraction(100_000_000)),
        ref_divider=IntChoices(1, r_max),
        feedback_min=Fraction(16),
        feedback_max=Fraction(n_max),
        mode="fractional",
        outputs=tuple(PllOutput(f"o{i}", IntChoices(1, 256)) for i in range(len(targets))),
        denominator=Denominator(fixed=MODULUS),
    )


def _exact_worst(ref_div: int, k: int, targets: list[Fraction]) -> Fraction:
    vco = F_IN / ref_div * Fraction(k, MODULUS)
    worst = Fraction(0)
    for target in targets:
        x = vco / target
        options = [d for d in (math.floor(x), math.ceil(x)) if 1 <= d <= 256] or [1 if x < 1 else 256]
        worst = max(worst, min(abs(vco / (d * target) - 1) for d in options))
    return worst


def exhaustive(pll: Pll, targets: list[Fraction]) -> tuple[Fraction, int]:
    """Minimum worst error over every (R, N) grid point; returns (exact minimum, points visited)."""
    f_in = float(F_IN)
    best = math.inf
    near: list[tuple[int, int]] = []
    visited = 0
    n_lo, n_hi = float(pll.feedback_min), float(pll.feedback_max)
    for r in range(1, pll.ref_divider.hi + 1):
        pfd = f_in / r
        if not float(pll.pfd.lo) <= pfd <= float(pll.pfd.hi):
            continue
        k_lo = math.ceil(max(n_lo, float(pll.vco.lo) / pfd) * MODULUS)
        k_hi = math.floor(min(n_hi, float(pll.vco.hi) / pfd) * MODULUS)
        if k_lo > k_hi:
            continue
        k = np.arange(k_lo, k_hi + 1, dtype=np.int64)
        vco = pfd * k / MODULUS
        worst = np.zeros(k.size)
        for target in targets:
            t = float(target)
            x = vco / t
            d_lo = np.clip(np.floor(x), 1, 256)
            d_hi = np.clip(np.ceil(x), 1, 256)
            err = np.minimum(np.abs(vco / (d_lo * t) - 1), np.abs(vco / (d_hi * t) - 1))
            np.maximum(worst, err, out=worst)
        visited += k.size
        low = float(worst.min())
        if low < best - 1e-12:
            near = []
        best = min(best, low)
        for index in np.nonzero(worst <= best + 1e-12)[0]:
            near.append((r, int(k[index])))
    exact = min(_exact_worst(ref_div, k, targets) for ref_div, k in near)
    return exact, visited


def part_one(quick: bool = False, verbose: bool = True) -> list[Row]:
    """Planner against exhaustive search on one loop; rows: the planner's time against the scan's."""
    r_max, n_max = QUICK_PART if quick else FULL_PART
    if verbose:
        print(f"Part 1: one 4-output fractional-N loop (input divider 1..{r_max}, N 16..{n_max}, dividers 1..256, N = k/1000)")
    cases = {
        "exact reachable (156.25, 125, 100, 250 MHz)": [Fraction(156_250_000), Fraction(125_000_000), Fraction(100_000_000), Fraction(250_000_000)],
        "no exact plan (156.25, 122.88, 148.5/1.001, 33.333 MHz)": [
            Fraction(156_250_000),
            Fraction(122_880_000),
            Fraction(148_500_000_000, 1001),
            Fraction(33_333_000),
        ],
    }
    rows = []
    for name, targets in cases.items():
        pll = bench_pll(targets, r_max, n_max)
        outputs = tuple(OutputSpec(f"o{i}", (Target(f"c{i}", t),), (IntChoices(1, 256),)) for i, t in enumerate(targets))
        planner_s = math.inf
        for _ in range(5):  # best of five: the planner's runs are short enough for timer noise to matter
            started = time.perf_counter()
            search = solve_pll(PllProblem(pll, F_IN, outputs), SearchLimits(keep=1))
            planner_s = min(planner_s, time.perf_counter() - started)
        started = time.perf_counter()
        reference, visited = exhaustive(pll, targets)
        exhaustive_s = time.perf_counter() - started
        planned = search.best.score.worst_error
        if verbose:
            print(f"  {name}")
            print(f"    planner:    worst error {float(planned) * 1e6:.6g} ppm in {planner_s * 1000:.1f} ms, best of 5 ({search.evaluated} settings evaluated)")
            print(f"    exhaustive: worst error {float(reference) * 1e6:.6g} ppm in {exhaustive_s:.2f} s ({visited:,} grid points)")
            print(f"    same worst error: {planned == reference}; speed ratio: {exhaustive_s / planner_s:,.0f}x")
        rows.append(Row(
            "planner", f"{name.split(' (')[0]}: planner, one loop", planner_s * 1e3, "ms", exhaustive_s * 1e3,
            f"exhaustive scan of {visited:,} points",
            f"R 1..{r_max}, N 16..{n_max}; worst error {float(planned) * 1e6:.6g} ppm; same as exhaustive: {planned == reference}",
        ))
    return rows


# --------------------------------------------------------------------------- synthetic boards

# Families of consumer frequencies that share a VCO (plus a mixed one that does not).
FAMILIES = {
    "network": ["156.25 MHz", "125 MHz", "100 MHz", "250 MHz", "25 MHz", "50 MHz"],
    "audio": ["12.288 MHz", "24.576 MHz", "49.152 MHz", "98.304 MHz"],
    "video": ["148.5 MHz", "74.25 MHz", "27 MHz", "13.5 MHz"],
    "mixed": ["156.25 MHz", "122.88 MHz", "148.5/1.001 MHz", "33.333 MHz", "11.2896 MHz", "40 MHz"],
}
_PATTERN = [("network", "integer"), ("audio", "fractional"), ("video", "integer"), ("network", "fractional"),
            ("network", "integer"), ("audio", "fractional"), ("video", "integer"), ("mixed", "fractional")]


def synthetic_board(consumers: int, seed: int = 1) -> str:
    """A board of ``consumers`` consumers, five per PLL.

    PLLs cycle through frequency families (network, audio, video, and every
    eighth a mixed family with no common VCO, where the sweep has to work);
    every fourth PLL is fed by the previous PLL's spare output (a cascade).
    """
    rng = random.Random(seed)
    lines = ['[board]\nname = "synthetic"\n', '[[reference]]\nid = "ref"\nfrequency = "25 MHz"\n']
    plls = (consumers + 4) // 5
    for p in range(plls):
        family, mode = _PATTERN[p % len(_PATTERN)]
        source = f"synth{p - 1}.spare" if p % 4 == 3 else "ref"
        rule = 'mode = "fractional"\nmax_denominator = 16777215\n' if mode == "fractional" else 'mode = "integer"\n'
        lines.append(
            f'[[pll]]\nid = "synth{p}"\ninput = "{source}"\nvco = ["2.4 GHz", "3.2 GHz"]\npfd = ["1 MHz", "100 MHz"]\n'
            f'r = [1, 255]\nn = [8, 4095]\n{rule}'
        )
        for o in range(5):
            lines.append(f"outputs.o{o} = {{ divider = [1, 256] }}\n")
        lines.append("outputs.spare = { divider = [1, 256] }\n")
        for o in range(5):
            if p * 5 + o >= consumers:
                break
            freq = rng.choice(FAMILIES[family])
            tolerance = '\nmax_synthesis_error = "±100 ppm"' if family == "mixed" else ""
            lines.append(f'[[consumer]]\nid = "c{p}_{o}"\nsource = "synth{p}.o{o}"\nfrequency = "{freq}"{tolerance}\n')
    return "\n".join(lines)


def part_two(sizes: list[int], verbose: bool = True) -> list[Row]:
    """Plan, then audit with the planned settings, synthetic boards of each size; rows against linear growth."""
    if verbose:
        print("Part 2: planning and audit time for synthetic boards (five consumers per PLL, every fourth PLL cascaded,")
        print("        every eighth PLL with a mixed family that has no common VCO frequency)")
    rows: list[Row] = []
    first: tuple[int, float, float] | None = None
    warm = parse_board(synthetic_board(5), "warm-up.toml")
    analyze(warm, plan_board(warm).settings)  # imports and caches out of the first timing
    for size in sizes:
        board = parse_board(synthetic_board(size), f"synthetic-{size}.toml")
        started = time.perf_counter()
        plan = plan_board(board, PlanOptions(time_limit_s=600))
        plan_s = time.perf_counter() - started
        started = time.perf_counter()
        analysis = analyze(board, plan.settings)
        audit_s = time.perf_counter() - started
        first = first or (size, plan_s, audit_s)
        scale = size / first[0]
        if verbose:
            print(
                f"  {size:5d} consumers, {len(board.plls):4d} PLLs: plan {plan_s:7.3f} s, audit {audit_s:6.3f} s "
                f"(feasible: {plan.feasible}, worst error {float(plan.best.score.worst_error) * 1e6:.3g} ppm, "
                f"notes: {len(plan.notes)}, findings: {len(analysis.findings)})"
            )
        note = f"{len(board.plls)} PLLs; feasible: {plan.feasible}; planner notes: {len(plan.notes)}"
        linear = f"{first[0]}-consumer time x {scale:g}"
        rows.append(Row("boards", f"plan {size:,} consumers", plan_s, "s", first[1] * scale, linear, note))
        rows.append(Row("boards", f"audit {size:,} consumers", audit_s, "s", first[2] * scale, linear))
    return rows


def planner_rows(quick: bool = False) -> list[Row]:
    """The ``planner`` benchmark's rows (planner against exhaustive search)."""
    return part_one(quick, verbose=False)


def board_rows(quick: bool = False) -> list[Row]:
    """The ``boards`` benchmark's rows (plan and audit of synthetic boards by size)."""
    return part_two(QUICK_SIZES if quick else FULL_SIZES, verbose=False)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--quick", action="store_true", help="a smaller part for the exhaustive comparison, smaller boards")
    args = parser.parse_args()
    part_one(args.quick)
    part_two(QUICK_SIZES if args.quick else FULL_SIZES)


if __name__ == "__main__":
    main()
