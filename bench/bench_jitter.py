"""Benchmark: integrating a 100,000-point phase-noise profile (goal: under 5 ms).

Prints the median time of our exact power-law integration and, measured in the
same run on the same profile, two baselines: numpy's trapezoid on the linear
density (fast but wrong for log-spaced data) and a pure-Python loop doing the
same closed-form segment integrals (the same answer, one segment at a time).

    python bench/bench_jitter.py [--points N] [--repeats R]
"""

from __future__ import annotations

import argparse
import math
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from clockplan.jitter import PhaseNoiseProfile, integrated_power, rms_jitter  # noqa: E402

GOAL_SECONDS = 5e-3
CONSUMER_BAND = (12e3, 20e6)
CARRIER_HZ = 156.25e6


def _profile_table(points: int, seed: int = 1) -> np.ndarray:
    """A measured-looking profile: 1 Hz..100 MHz, 1/f^3 .. floor, with small ripple."""
    rng = np.random.default_rng(seed)
    f = np.geomspace(1.0, 1e8, points)
    density = 1e-6 / f**3 + 1e-11 / f + 1e-16
    dbc = 10 * np.log10(density) + rng.normal(0.0, 0.5, points)
    return np.column_stack((f, dbc))


def _median_seconds(action, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        action()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def _python_loop(offsets: list[float], levels: list[float]) -> float:
    """Same closed form, segment by segment in pure Python, first point to last."""
    total = 0.0
    for f1, f2, l1, l2 in zip(offsets, offsets[1:], levels, levels[1:]):
        ln_r = math.log(f2 / f1)
        x = (l2 - l1) / 10 * math.log(10) + ln_r
        ratio = 1.0 + x / 2 if abs(x) < 1e-9 else math.expm1(x) / x
        total += 10 ** (l1 / 10) * f1 * ln_r * ratio
    return total


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=100_000)
    parser.add_argument("--repeats", type=int, default=30)
    args = parser.parse_args(argv)

    table = _profile_table(args.points)
    profile = PhaseNoiseProfile.from_points(table)
    # The whole profile is integrated, so every method works through every point.
    inside = table
    low, high = float(table[0, 0]), float(table[-1, 0])
    integrated_power(profile, low, high)  # fill the profile's cached logarithms
    offsets, levels = table[:, 0].tolist(), table[:, 1].tolist()
    trapezoid = getattr(np, "trapezoid", None) or np.trapz

    timings = {
        "exact, built profile (warm)": _median_seconds(lambda: integrated_power(profile, low, high), args.repeats),
        "exact, from (n, 2) array (cold)": _median_seconds(
            lambda: rms_jitter(table, CARRIER_HZ, low, high), args.repeats
        ),
        "baseline: numpy trapezoid (linear)": _median_seconds(
            lambda: trapezoid(10 ** (inside[:, 1] / 10), inside[:, 0]), args.repeats
        ),
        "baseline: pure-Python closed form": _median_seconds(
            lambda: _python_loop(offsets, levels), max(3, args.repeats // 10)
        ),
    }
    exact = integrated_power(profile, low, high)
    loop_value = _python_loop(offsets, levels)
    trap_value = float(trapezoid(10 ** (inside[:, 1] / 10), inside[:, 0]))

    print(f"profile: {args.points:,} points, band {low:.6g}..{high:.6g} Hz ({len(inside):,} points inside)")
    print(f"{'method':38s} {'median':>10s} {'vs exact warm':>14s}")
    warm = timings["exact, built profile (warm)"]
    for name, seconds in timings.items():
        print(f"{name:38s} {seconds * 1e3:8.3f} ms {seconds / warm:13.1f}x")
    print(f"goal: under {GOAL_SECONDS * 1e3:.0f} ms -> "
          f"warm {'met' if warm < GOAL_SECONDS else 'MISSED'}, "
          f"cold {'met' if timings['exact, from (n, 2) array (cold)'] < GOAL_SECONDS else 'MISSED'}")
    print(f"agreement: exact vs pure-Python loop {abs(exact / loop_value - 1):.2e} relative; "
          f"linear trapezoid is off by {trap_value / exact - 1:+.2e}")
    consumer = _median_seconds(lambda: integrated_power(profile, *CONSUMER_BAND), args.repeats)
    print(f"12 kHz..20 MHz sub-band (band edges interpolated): {consumer * 1e3:.3f} ms, "
          f"rms jitter at {CARRIER_HZ / 1e6:g} MHz {rms_jitter(profile, CARRIER_HZ, *CONSUMER_BAND) * 1e15:.2f} fs")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
