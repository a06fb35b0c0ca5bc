"""Monte Carlo yield throughput: vectorized run against a naive per-board loop, same process.

Goal: at least one million board samples in under 2 s on the 2-core project
machine. Two boards: a synthetic one (invented for this benchmark: 10
references of mixed kinds and curve models, 30 consumers with mixed budgets,
synthesis errors and spread settings), and the largest demo board under
boards/ (the most consumers with a frequency-error budget; planned first when
its settings are open) run through the whole pipeline (load, exact audit, accuracy stage
with the Monte Carlo), as `clockplan audit --samples N` runs it.

Run from the repository root:  python bench/bench_montecarlo.py [--samples N] [--naive N] [--quick]
(``python -m bench`` runs it with every other benchmark: ``montecarlo``.)
"""

from __future__ import annotations

import argparse
import random
import sys
import time
from fractions import Fraction
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench.common import Row  # noqa: E402
from clockplan.ppm import (  # noqa: E402
    SECONDS_PER_YEAR,
    AgingLinear,
    AgingLog,
    AtCutCurve,
    ConsumerBudget,
    ConsumerChain,
    CrystalLoad,
    OscillatorSpec,
    PointTable,
    SpreadAllowance,
    SpreadSpectrum,
    StabilityBand,
    TuningForkCurve,
    monte_carlo_yield,
)
from clockplan.ppm.montecarlo import reference_window  # noqa: E402
from clockplan.ppm.oscillator import SIGMA_PER_LIMIT  # noqa: E402
from clockplan.units import PPM, parse_ppm  # noqa: E402

TEMPERATURE = (-40.0, 85.0)
LIFETIME = 10 * SECONDS_PER_YEAR
pF, fF = Fraction(1, 10**12), Fraction(1, 10**15)


def synthetic_board() -> tuple[list[OscillatorSpec], list[ConsumerChain]]:
    """Ten references and thirty consumers of an invented board."""
    aging = AgingLinear(parse_ppm("±3 ppm"), parse_ppm("±1 ppm"))
    references = [
        OscillatorSpec("crystal", parse_ppm("±10 ppm"), AtCutCurve.from_angle(3.0), aging,
                       crystal_load=CrystalLoad(12 * pF, 5 * fF, 2 * pF, 18 * pF, 18 * pF, 3 * pF, Fraction(1, 20), pF)),
        OscillatorSpec("xo", parse_ppm("±20 ppm"), StabilityBand(*parse_ppm("±25 ppm")), aging, parse_ppm("±1 ppm")),
        OscillatorSpec("tcxo", parse_ppm("±1 ppm"), StabilityBand(*parse_ppm("±0.5 ppm")),
                       AgingLinear(parse_ppm("±1 ppm"), parse_ppm("±0.5 ppm")), distribution="normal"),
        OscillatorSpec("crystal", parse_ppm("±20 ppm"), TuningForkCurve(), aging),
        OscillatorSpec("xo", parse_ppm("±15 ppm"), AtCutCurve.from_angle(6.0), AgingLog(parse_ppm("±2 ppm")),
                       distribution="normal"),
        OscillatorSpec("mems", parse_ppm("±10 ppm"), PointTable(((-40, 12e-6), (0, 4e-6), (25, 0.0), (85, -9e-6))), aging),
        OscillatorSpec("ocxo", parse_ppm("±0.3 ppm"), StabilityBand(*parse_ppm("±10 ppb")),
                       AgingLinear(parse_ppm("±0.3 ppm"), parse_ppm("±0.1 ppm"))),
        OscillatorSpec("vcxo", parse_ppm("±25 ppm"), StabilityBand(*parse_ppm("±20 ppm")), aging,
                       parse_ppm("±2 ppm"), parse_ppm("±1 ppm"), distribution="normal"),
        OscillatorSpec("rc", parse_ppm("±1 %"), StabilityBand(*parse_ppm("±2 %"))),
        OscillatorSpec("crystal", parse_ppm("±30 ppm"), AtCutCurve.from_angle(-1.0), aging),
    ]
    allowance = SpreadAllowance("down", 5000 * PPM, (Fraction(30_000), Fraction(33_000)))
    budgets = ["±100 ppm", "±50 ppm", "±300 ppm", "±500 ppm", "±0.25 %", "±20 ppm"]
    consumers = []
    for k in range(30):
        budget = ConsumerBudget(parse_ppm(budgets[k % len(budgets)]), allowance if k % 7 == 0 else None)
        spread = SpreadSpectrum("down", 5000 * PPM, Fraction(31_500)) if k % 7 == 0 else None
        consumers.append(ConsumerChain(k % 10, Fraction(k % 4, 3 * 10**7), budget, spread, name=f"c{k}"))
    return references, consumers


def _naive_draw(rnd: random.Random, limits, normal: bool) -> float:
    lo, hi = float(limits[0]), float(limits[1])
    if not normal:
        return rnd.uniform(lo, hi)
    centre, sigma = (lo + hi) / 2, (hi - lo) / (2 * SIGMA_PER_LIMIT)
    while True:
        value = rnd.gauss(centre, sigma)
        if lo <= value <= hi:
            return value


def _naive_temperature_extremes(model, temperature) -> tuple[float, float]:
    """The lowest and highest temperature error over the range: a band's edges, a curve's extremes on a fine grid
    refined around its lowest and highest grid points (plain Python, independent of the models' exact extremes)."""
    if isinstance(model, StabilityBand):
        return float(model.lo), float(model.hi)
    lo_t, hi_t = temperature

    def error(t: float) -> float:
        if isinstance(model, AtCutCurve):
            dt = t - model.reference_c
            return ((model.a3 * dt + model.a2) * dt + model.a1) * dt
        if isinstance(model, TuningForkCurve):
            return model.coefficient * (t - model.turnover_c) ** 2
        points = model.points
        for (t0, e0), (t1, e1) in zip(points, points[1:]):
            if t <= t1:
                return e0 + (e1 - e0) * (t - t0) / (t1 - t0)
        return points[-1][1]

    grid = [lo_t + (hi_t - lo_t) * k / 2000 for k in range(2001)]
    grid += [t for t, _ in getattr(model, "points", ()) if lo_t <= t <= hi_t]  # a table's corners exactly
    values = [error(t) for t in grid]
    return min(values), max(values)


def _naive_pulling(load: CrystalLoad, rnd: random.Random) -> float:
    tol = float(load.cap_tolerance)
    a = float(load.cap_a) * (1 + rnd.uniform(-tol, tol))
    b = float(load.cap_b) * (1 + rnd.uniform(-tol, tol))
    stray = rnd.uniform(float(load.stray - load.stray_tolerance), float(load.stray + load.stray_tolerance))
    c1, c0 = float(load.motional_c1), float(load.shunt_c0)
    actual = a * b / (a + b) + stray
    return ((1 + c1 / (c0 + actual)) / (1 + c1 / (c0 + float(load.specified_load)))) ** 0.5 - 1


def naive_yield(references, consumers, samples: int, seed: int, temperature=TEMPERATURE, lifetime=LIFETIME) -> list[float]:
    """The same model, one board and one reference at a time in plain Python.

    Each board is judged over the whole temperature range (the temperature term's extremes) and at the
    start and end of its life (aging 0, then the drawn end-of-life drift).
    """
    rnd = random.Random(seed)
    windows = [reference_window(c) for c in consumers]
    extremes = [_naive_temperature_extremes(spec.temperature, temperature) for spec in references]
    passed = [0] * len(consumers)
    for _ in range(samples):
        spans = []
        for spec, (t_low, t_high) in zip(references, extremes):
            normal = spec.distribution == "normal"
            fixed = _naive_draw(rnd, spec.initial, normal)
            aging = _naive_draw(rnd, spec.aging.drift(lifetime), normal)
            fixed += _naive_draw(rnd, spec.supply_sensitivity, normal) + _naive_draw(rnd, spec.load_sensitivity, normal)
            if spec.crystal_load is not None:
                fixed += _naive_pulling(spec.crystal_load, rnd)
            spans.append((fixed + t_low + min(aging, 0.0), fixed + t_high + max(aging, 0.0)))
        for k, consumer in enumerate(consumers):
            lo, hi = windows[k]
            low, high = spans[consumer.reference]
            passed[k] += lo <= low and high <= hi
    return [p / samples for p in passed]


def _best_over_seeds(run, repeat: int):
    """The shortest time of ``run(seed)`` over seeds ``0 .. repeat-1``, and the last run's result."""
    best, result = float("inf"), None
    for seed in range(max(1, repeat)):
        start = time.perf_counter()
        result = run(seed)
        best = min(best, time.perf_counter() - start)
    return best, result


def demo_settings(board):
    """The board's own settings, or the planner's when some are left open (edge-router is a planning demo)."""
    from clockplan.analysis import analyze
    from clockplan.plan.board_planner import plan_board

    if any(f.code == "unset" for f in analyze(board).findings):
        return plan_board(board).settings
    return None


def largest_demo_board() -> Path:
    """The demo board with the most consumers the Monte Carlo judges (then the most consumers)."""
    from clockplan.analysis import analyze
    from clockplan.boardfile import load_board
    from clockplan.ppm.board import board_chains, consumer_links, reference_models
    from clockplan.ppm.grades import load_grades

    def size(path: Path) -> tuple[int, int]:
        board = load_board(path)
        _, chains = board_chains(reference_models(board, load_grades()), consumer_links(analyze(board, demo_settings(board))))
        return len(chains), len(board.consumers)

    return max(sorted(Path(__file__).resolve().parents[1].joinpath("boards").glob("*.toml")), key=size)


def bench_demo_board(samples: int, naive_samples: int, repeat: int, verbose: bool = True) -> list[Row]:
    """Monte Carlo alone and the whole audit pipeline on the largest demo board, against the naive loop."""
    from clockplan.analysis import AnalysisOptions, analyze
    from clockplan.boardfile import load_board
    from clockplan.ppm.board import board_chains, consumer_links, reference_models
    from clockplan.ppm.grades import load_grades

    path = largest_demo_board()
    board = load_board(path)
    settings = demo_settings(board)
    specs, chains = board_chains(reference_models(board, load_grades()), consumer_links(analyze(board, settings)))
    say = print if verbose else (lambda *args, **kwargs: None)
    say(f"\ndemo board {path.name}: {len(board.references)} references, {len(board.consumers)} consumers "
        f"({len(chains)} with a budget), {board.temperature_c[0]:g}..{board.temperature_c[1]:g} °C, "
        f"{board.lifetime_s / SECONDS_PER_YEAR:g} years")

    best, result = _best_over_seeds(
        lambda seed: monte_carlo_yield(specs, chains, board.temperature_c, board.lifetime_s, samples=samples, seed=seed),
        repeat)
    say(f"monte carlo: {samples:>9,} boards in {best:.3f} s (best of {repeat}) -> {samples / best:,.0f} boards/s; "
        f"board yield {result.board_yield:.4f}")

    pipeline, _ = _best_over_seeds(
        lambda seed: analyze(load_board(path), settings, options=AnalysisOptions(samples=samples, seed=seed)), repeat)
    say(f"whole audit: {samples:>9,} boards in {pipeline:.3f} s (load, exact audit, stage, Monte Carlo)")

    start = time.perf_counter()
    naive = naive_yield(specs, chains, naive_samples, seed=1, temperature=board.temperature_c, lifetime=board.lifetime_s)
    naive_rate = naive_samples / (time.perf_counter() - start)
    gap = max(abs(a - b) for a, b in zip(result.yields, naive))
    say(f"naive loop : {naive_samples:>9,} boards -> {naive_rate:,.0f} boards/s; speed-up {samples / best / naive_rate:.0f}x; "
        f"largest per-consumer yield difference {gap:.4f}")
    per_million = pipeline * 1_000_000 / samples
    verdict = "meets" if per_million < 2.0 else "misses"
    say(f"goal       : 1,000,000 boards of {path.name} in {per_million:.3f} s through the whole audit "
        f"({verdict} the < 2 s goal)")
    naive_name = f"naive per-board loop, {naive_samples:,} boards"
    return [
        Row("montecarlo", f"{path.stem}: Monte Carlo, {samples:,} boards", samples / best, "boards/s",
            naive_rate, naive_name, f"largest yield difference to the naive loop {gap:.4f}"),
        Row("montecarlo", f"{path.stem}: whole audit per million boards", per_million, "s", 2.0, "the 2 s goal",
            f"load, exact audit, stages, Monte Carlo of {samples:,} boards, scaled to 1,000,000"),
    ]


def bench_synthetic(samples: int, naive_samples: int, repeat: int, verbose: bool = True) -> list[Row]:
    """Vectorized Monte Carlo on the synthetic board against the naive loop, same process."""
    say = print if verbose else (lambda *args, **kwargs: None)
    references, consumers = synthetic_board()
    say(f"synthetic board: {len(references)} references, {len(consumers)} consumers")

    best, result = _best_over_seeds(
        lambda seed: monte_carlo_yield(references, consumers, TEMPERATURE, LIFETIME, samples=samples, seed=seed), repeat)
    vector_rate = samples / best
    say(f"vectorized : {samples:>9,} boards in {best:.3f} s (best of {repeat}) "
        f"-> {vector_rate:,.0f} boards/s; board yield {result.board_yield:.4f}")

    start = time.perf_counter()
    naive = naive_yield(references, consumers, naive_samples, seed=1)
    naive_time = time.perf_counter() - start
    naive_rate = naive_samples / naive_time
    say(f"naive loop : {naive_samples:>9,} boards in {naive_time:.3f} s -> {naive_rate:,.0f} boards/s")

    worst_gap = max(abs(a - b) for a, b in zip(result.yields, naive))
    say(f"speed-up   : {vector_rate / naive_rate:.0f}x; largest per-consumer yield difference "
        f"{worst_gap:.4f} (sampling noise of the {naive_samples:,}-board baseline)")
    per_million = 1_000_000 / vector_rate
    verdict = "meets" if per_million < 2.0 else "misses"
    say(f"goal       : 1,000,000 boards in {per_million:.3f} s ({verdict} the < 2 s goal)")
    return [Row("montecarlo", f"synthetic board: Monte Carlo, {samples:,} boards", vector_rate, "boards/s",
                naive_rate, f"naive per-board loop, {naive_samples:,} boards",
                f"{len(references)} references, {len(consumers)} consumers; largest yield difference {worst_gap:.4f}")]


FULL = {"samples": 1_000_000, "naive_samples": 20_000, "repeat": 3}
QUICK = {"samples": 50_000, "naive_samples": 1_000, "repeat": 1}


def rows(quick: bool = False) -> list[Row]:
    """The ``montecarlo`` benchmark's rows (synthetic board, then the largest demo board)."""
    sizes = QUICK if quick else FULL
    return bench_synthetic(**sizes, verbose=False) + bench_demo_board(**sizes, verbose=False)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=FULL["samples"], help="boards for the vectorized run")
    parser.add_argument("--naive", type=int, default=FULL["naive_samples"], help="boards for the naive baseline")
    parser.add_argument("--repeat", type=int, default=FULL["repeat"], help="vectorized repeats (best is reported)")
    parser.add_argument("--quick", action="store_true", help="small runs: %(q)s" % {"q": QUICK})
    args = parser.parse_args()
    if args.quick:
        args.samples, args.naive, args.repeat = QUICK["samples"], QUICK["naive_samples"], QUICK["repeat"]
    bench_synthetic(args.samples, args.naive, args.repeat)
    bench_demo_board(args.samples, args.naive, args.repeat)


if __name__ == "__main__":
    main()
