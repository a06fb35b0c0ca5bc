"""Benchmark: integrating a 100,000-point phase-noise profile (goal: under 5 ms).

Prints the median time of our exact power-law integration and, measured in the
same run on the same profile, two baselines: numpy's trapezoid on the linear
density (fast but wrong for log-spaced data) and a pure-Python loop doing the
same closed-form segment integrals (the same answer, one segment at a time).

    python bench/bench_jitter.py [--points N] [--repeats R] [--quick]

(``python -m bench`` runs it with every other benchmark: ``jitter``.)
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench.common import Row, median_seconds  # noqa: E402
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


def _python_loop(offsets: list[float], levels: list[float]) -> float:
    """Same closed form, segment by segment in pure Python, first point to last."""
    total = 0.0
    for f1, f2, l1, l2 in zip(offsets, offsets[1:], levels, levels[1:]):
        ln_r = math.log(f2 / f1)
        x = (l2 - l1) / 10 * math.log(10) + ln_r
        ratio = 1.0 + x / 2 if abs(x) < 1e-9 else math.expm1(x) / x
        total += 10 ** (l1 / 10) * f1 * ln_r * ratio
    return total


FULL = {"points": 100_000, "repeats": 30}
QUICK = {"points": 10_000, "repeats": 3}


def measure(points: int, repeats: int, verbose: bool = True) -> list[Row]:
    """Time the integration of a ``points``-point profile and its baselines; print them if ``verbose``."""
    say = print if verbose else (lambda *args, **kwargs: None)
    table = _profile_table(points)
    profile = PhaseNoiseProfile.from_points(table)
    # The whole profile is integrated, so every method works through every point.
    inside = table
    low, high = float(table[0, 0]), float(table[-1, 0])
    integrated_power(profile, low, high)  # fill the profile's cached logarithms
    offsets, levels = table[:, 0].tolist(), table[:, 1].tolist()
    trapezoid = getattr(np, "trapezoid", None) or np.trapz

    timings = {
        "exact, built profile (warm)": median_seconds(lambda: integrated_power(profile, low, high), repeats, warm_up=False),
        "exact, from (n, 2) array (cold)": median_seconds(
            lambda: rms_jitter(table, CARRIER_HZ, low, high), repeats, warm_up=False
        ),
        "baseline: numpy trapezoid (linear)": median_seconds(
            lambda: trapezoid(10 ** (inside[:, 1] / 10), inside[:, 0]), repeats, warm_up=False
        ),
        "baseline: pure-Python closed form": median_seconds(
            lambda: _python_loop(offsets, levels), max(3, repeats // 10), warm_up=False
        ),
    }
    exact = integrated_power(profile, low, high)
    loop_value = _python_loop(offsets, levels)
    trap_value = float(trapezoid(10 ** (inside[:, 1] / 10), inside[:, 0]))

    say(f"profile: {points:,} points, band {low:.6g}..{high:.6g} Hz ({len(inside):,} points inside)")
    say(f"{'method':38s} {'median':>10s} {'vs exact warm':>14s}")
    warm = timings["exact, built profile (warm)"]
    for name, seconds in timings.items():
        say(f"{name:38s} {seconds * 1e3:8.3f} ms {seconds / warm:13.1f}x")
    cold = timings["exact, from (n, 2) array (cold)"]
    say(f"goal: under {GOAL_SECONDS * 1e3:.0f} ms -> "
        f"warm {'met' if warm < GOAL_SECONDS else 'MISSED'}, "
        f"cold {'met' if cold < GOAL_SECONDS else 'MISSED'}")
    say(f"agreement: exact vs pure-Python loop {abs(exact / loop_value - 1):.2e} relative; "
        f"linear trapezoid is off by {trap_value / exact - 1:+.2e}")
    consumer = median_seconds(lambda: integrated_power(profile, *CONSUMER_BAND), repeats, warm_up=False)
    say(f"12 kHz..20 MHz sub-band (band edges interpolated): {consumer * 1e3:.3f} ms, "
        f"rms jitter at {CARRIER_HZ / 1e6:g} MHz {rms_jitter(profile, CARRIER_HZ, *CONSUMER_BAND) * 1e15:.2f} fs")
    loop_ms = timings["baseline: pure-Python closed form"] * 1e3
    loop_name = "pure-Python closed form"
    agreement = f"agrees with the pure-Python loop to {abs(exact / loop_value - 1):.1e}; goal {GOAL_SECONDS * 1e3:g} ms"
    return [
        Row("jitter", f"integrate {points:,}-point profile, warm", warm * 1e3, "ms", loop_ms, loop_name, agreement),
        Row("jitter", f"integrate {points:,}-point profile, cold", cold * 1e3, "ms", loop_ms, loop_name),
        Row("jitter", f"numpy trapezoid, {points:,} points (fast, wrong)", timings["baseline: numpy trapezoid (linear)"] * 1e3,
            "ms", warm * 1e3, "exact, warm", f"linear trapezoid off by {trap_value / exact - 1:+.1e}"),
    ]


def rows(quick: bool = False) -> list[Row]:
    """The ``jitter`` benchmark's rows."""
    return measure(**(QUICK if quick else FULL), verbose=False)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=FULL["points"])
    parser.add_argument("--repeats", type=int, default=FULL["repeats"])
    parser.add_argument("--quick", action="store_true", help="a %d-point profile" % QUICK["points"])
    args = parser.parse_args(argv)
    if args.quick:
        args.points, args.repeats = QUICK["points"], QUICK["repeats"]
    measure(args.points, args.repeats)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
