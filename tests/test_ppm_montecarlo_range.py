"""Monte Carlo yield judged over the whole temperature range and the whole life (issue 22, item 7).

A board must work at every temperature of its range and on every day of its
life. Each test computes the true yield independently: in closed form from
the uniform or truncated-normal CDF (scipy.stats) and the temperature curve's
extremes found here with the quadratic formula, or by brute force, board by
board, on a dense temperature grid and a grid over the life. The old method
(one uniform temperature per board, judged at end of life only) is computed
too, to show it fails the same check.
"""

import math
from fractions import Fraction

import numpy as np
import pytest
from scipy import integrate, stats

from clockplan.ppm.accuracy import ConsumerBudget, consumer_accuracy
from clockplan.ppm.aging import SECONDS_PER_YEAR, AgingLinear
from clockplan.ppm.montecarlo import ConsumerChain, monte_carlo_yield, sample_reference_spans
from clockplan.ppm.oscillator import SIGMA_PER_LIMIT, OscillatorSpec
from clockplan.ppm.temperature import AT_CUT_CUBIC, AT_CUT_LINEAR_PER_ARCMIN, AT_CUT_QUADRATIC, AtCutCurve
from clockplan.units import parse_ppm

SAMPLES = 200_000
RANGE = (-40.0, 85.0)


def _within(got: float, expected: float, samples: int = SAMPLES) -> bool:
    """Five binomial standard errors of a fixed-seed run."""
    return abs(got - expected) <= 5 * math.sqrt(max(expected * (1 - expected), 1e-12) / samples) + 1e-12


def _budget(text: str) -> ConsumerBudget:
    return ConsumerBudget(parse_ppm(text))


def _cubic(a1: float, a2: float, a3: float, t: np.ndarray | float) -> np.ndarray | float:
    dt = np.asarray(t, dtype=float) - 25.0
    return a1 * dt + a2 * dt**2 + a3 * dt**3


def _cubic_extremes(a1: float, a2: float, a3: float, t_lo: float, t_hi: float) -> tuple[float, float]:
    """Extremes of the AT-cut cubic on a range: the ends and the roots of a1 + 2 a2 x + 3 a3 x² (quadratic formula)."""
    candidates = [t_lo, t_hi]
    disc = (2 * a2) ** 2 - 4 * (3 * a3) * a1
    if disc >= 0:
        for sign in (-1, 1):
            x = (-2 * a2 + sign * math.sqrt(disc)) / (2 * 3 * a3)
            if t_lo < x + 25.0 < t_hi:
                candidates.append(x + 25.0)
    values = [float(_cubic(a1, a2, a3, t)) for t in candidates]
    return min(values), max(values)


# AT-cut crystal 4' off the zero-slope angle (the coefficients quoted from memory, see test_ppm_temperature),
# a uniform ±20 ppm initial tolerance and a ±25 ppm budget over -40..85 °C.
A1, A2, A3 = AT_CUT_LINEAR_PER_ARCMIN * 4.0, AT_CUT_QUADRATIC, AT_CUT_CUBIC


def test_curve_yield_matches_closed_form_and_the_old_method_overstated_it():
    spec = OscillatorSpec("crystal", parse_ppm("±20 ppm"), AtCutCurve.from_angle(4.0))
    result = monte_carlo_yield([spec], [ConsumerChain(0, Fraction(0), _budget("±25 ppm"))], RANGE, 0.0,
                               samples=SAMPLES, seed=21)
    lowest, highest = _cubic_extremes(A1, A2, A3, *RANGE)
    # Inside everywhere when the initial error e keeps e + lowest >= -25 ppm and e + highest <= 25 ppm.
    initial = stats.uniform(loc=-20e-6, scale=40e-6)
    true = initial.cdf(25e-6 - highest) - initial.cdf(-25e-6 - lowest)
    assert true == pytest.approx(0.835, abs=0.001)
    assert _within(result.yields[0], true)
    # The old method: the probability at one uniformly drawn temperature, averaged over the range (scipy quad).
    old = integrate.quad(
        lambda t: initial.cdf(25e-6 - _cubic(A1, A2, A3, t)) - initial.cdf(-25e-6 - _cubic(A1, A2, A3, t)),
        *RANGE, limit=200,
    )[0] / (RANGE[1] - RANGE[0])
    assert old == pytest.approx(0.978, abs=0.001)
    assert not _within(old, true)  # the old figure fails the same check


def test_curve_yield_matches_a_brute_force_dense_grid():
    # Board by board: draw the initial error, evaluate the cubic on 2,001 temperatures, pass if all inside.
    rng = np.random.default_rng(5)
    boards = 20_000
    temps = np.linspace(*RANGE, 2001)
    errors = rng.uniform(-20e-6, 20e-6, (boards, 1)) + _cubic(A1, A2, A3, temps)[None, :]
    brute = float(np.mean(np.all(np.abs(errors) <= 25e-6, axis=1)))
    spec = OscillatorSpec("crystal", parse_ppm("±20 ppm"), AtCutCurve.from_angle(4.0))
    result = monte_carlo_yield([spec], [ConsumerChain(0, Fraction(0), _budget("±25 ppm"))], RANGE, 0.0,
                               samples=SAMPLES, seed=22)
    sigma = math.sqrt(brute * (1 - brute) / boards + brute * (1 - brute) / SAMPLES)
    assert abs(result.yields[0] - brute) <= 5 * sigma


def test_normal_part_with_a_curve_matches_the_truncated_normal_cdf():
    # Limits at ±3 sigma, parts outside screened out: scipy.stats.truncnorm is the reference.
    spec = OscillatorSpec("crystal", parse_ppm("±30 ppm"), AtCutCurve.from_angle(4.0), distribution="normal")
    result = monte_carlo_yield([spec], [ConsumerChain(0, Fraction(0), _budget("±30 ppm"))], RANGE, 0.0,
                               samples=SAMPLES, seed=23)
    lowest, highest = _cubic_extremes(A1, A2, A3, *RANGE)
    initial = stats.truncnorm(-SIGMA_PER_LIMIT, SIGMA_PER_LIMIT, loc=0.0, scale=30e-6 / SIGMA_PER_LIMIT)
    true = initial.cdf(30e-6 - highest) - initial.cdf(-30e-6 - lowest)
    assert 0.5 < true < 0.99
    assert _within(result.yields[0], true)


def _aging_yield_closed_form(tol: float, drift: float, window: float) -> float:
    """P(|e| <= w and |e + a| <= w) for e uniform on ±tol and a uniform on ±drift (scipy quad over e)."""

    def inside_at_end(e: float) -> float:
        lo, hi = max(-window - e, -drift), min(window - e, drift)
        return max(0.0, hi - lo) / (2 * drift)

    reach = min(window, tol)
    kinks = [x for x in (window - drift, drift - window) if -reach < x < reach]  # where the overlap changes shape
    return integrate.quad(inside_at_end, -reach, reach, points=kinks or None)[0] / (2 * tol)


def test_boards_are_judged_at_start_and_end_of_life():
    # Initial ±10 ppm, aging ±10 ppm after the first year, a ±8 ppm budget, at one temperature.
    spec = OscillatorSpec("xo", parse_ppm("±10 ppm"), aging=AgingLinear(parse_ppm("±10 ppm")))
    result = monte_carlo_yield([spec], [ConsumerChain(0, Fraction(0), _budget("±8 ppm"))], (25.0, 25.0),
                               float(SECONDS_PER_YEAR), samples=SAMPLES, seed=24)
    true = _aging_yield_closed_form(10e-6, 10e-6, 8e-6)
    end_only = stats.triang(c=0.5, loc=-20e-6, scale=40e-6)
    old = end_only.cdf(8e-6) - end_only.cdf(-8e-6)  # the old method judged only the end of life: 0.64
    # By hand: for 0 <= e <= 2 every drift in [-8-e, 8-e] fits (16 ppm of 20), for 2 <= e <= 8 only
    # [-10, 8-e] (18-e); (2·16 + ∫(18-e) de over 2..8) · 2 / (20 · 20) = 220/400.
    assert true == pytest.approx(0.55, abs=1e-9)
    assert _within(result.yields[0], true)
    assert not _within(old, true)


def test_mixed_reference_matches_brute_force_over_temperature_and_life():
    # AT-cut crystal, uniform initial, normal-shaped aging, uniform supply sensitivity, 10 years, -20..70 °C.
    aging = AgingLinear(parse_ppm("±3 ppm"), parse_ppm("±1 ppm"))
    spec = OscillatorSpec("crystal", parse_ppm("±10 ppm"), AtCutCurve.from_angle(2.0), aging,
                          supply_sensitivity=parse_ppm("±2 ppm"))
    lifetime = 10 * SECONDS_PER_YEAR
    span = (-20.0, 70.0)
    result = monte_carlo_yield([spec], [ConsumerChain(0, Fraction(0), _budget("±18 ppm"))], span, lifetime,
                               samples=SAMPLES, seed=25)
    rng = np.random.default_rng(6)
    boards = 20_000
    a1 = AT_CUT_LINEAR_PER_ARCMIN * 2.0
    curve = _cubic(a1, A2, A3, np.linspace(*span, 901))
    end = 12e-6  # 3 ppm in the first year, 1 ppm in each of the nine later ones
    fixed = rng.uniform(-10e-6, 10e-6, boards) + rng.uniform(-2e-6, 2e-6, boards)
    drift = rng.uniform(-end, end, boards)
    life = np.linspace(0.0, 1.0, 11)  # each part drifts one way from 0 to its end-of-life value
    errors = fixed[:, None, None] + curve[None, :, None] + drift[:, None, None] * life[None, None, :]
    brute = float(np.mean(np.all(np.abs(errors) <= 18e-6, axis=(1, 2))))
    assert 0.3 < brute < 0.99
    sigma = math.sqrt(brute * (1 - brute) / boards + brute * (1 - brute) / SAMPLES)
    assert abs(result.yields[0] - brute) <= 5 * sigma


@pytest.mark.parametrize("edge, expected", [(0, 1.0), (Fraction(-1, 10**9), 0.0)])
def test_zero_width_tolerances_give_the_worst_case_verdict(edge, expected):
    # With no random term the yield is the deterministic worst case: 1 when the budget is exactly the worst
    # case (inside, boundary included), 0 when it is a hair narrower.
    spec = OscillatorSpec("crystal", (Fraction(0), Fraction(0)), AtCutCurve.from_angle(4.0))
    worst = consumer_accuracy(spec, Fraction(0), None, RANGE, 0.0, _budget("±100 ppm"))
    lo, hi = Fraction(worst.carrier_min) - edge, Fraction(worst.carrier_max) + edge
    budget = ConsumerBudget((min(lo, Fraction(0)), max(hi, Fraction(0))))
    result = monte_carlo_yield([spec], [ConsumerChain(0, Fraction(0), budget)], RANGE, 0.0, samples=1000, seed=1)
    assert result.yields == (expected,)


def test_spans_hold_both_ends_of_life_and_the_curve_extremes():
    spec = OscillatorSpec("crystal", (Fraction(0), Fraction(0)), AtCutCurve.from_angle(4.0),
                          AgingLinear(parse_ppm("±5 ppm")))
    low, high = sample_reference_spans(spec, RANGE, float(SECONDS_PER_YEAR), np.random.default_rng(2), 5000)
    lowest, highest = _cubic_extremes(A1, A2, A3, *RANGE)
    # Start of life (drift 0) always belongs to the span; the end-of-life drift widens one side only.
    assert np.all(low <= lowest + 1e-18) and np.all(high >= highest - 1e-18)
    assert np.all(low >= lowest - 5e-6 - 1e-18) and np.all(high <= highest + 5e-6 + 1e-18)
    widened = (lowest - low) + (high - highest)
    assert np.all(widened <= 5e-6 + 1e-18) and np.all(np.minimum(lowest - low, high - highest) <= 1e-18)
