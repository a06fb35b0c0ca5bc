"""Monte Carlo yield checked against closed-form probabilities from scipy.stats."""

from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from clockplan.errors import ClockplanError
from clockplan.ppm.accuracy import ConsumerBudget, consumer_accuracy
from clockplan.ppm.aging import SECONDS_PER_YEAR, AgingLinear
from clockplan.ppm.crystal_load import CrystalLoad
from clockplan.ppm.montecarlo import ConsumerChain, monte_carlo_yield, reference_window, sample_reference_errors
from clockplan.ppm.oscillator import SIGMA_PER_LIMIT, OscillatorSpec
from clockplan.ppm.spread import SpreadAllowance, SpreadSpectrum
from clockplan.ppm.temperature import StabilityBand, TuningForkCurve
from clockplan.units import PPM, parse_ppm

SAMPLES = 200_000
ROOM = (25.0, 25.0)


def _within(result_yield, expected, samples=SAMPLES):
    """Five binomial standard errors: a fixed-seed run, loose enough for any seed."""
    return abs(result_yield - expected) <= 5 * np.sqrt(expected * (1 - expected) / samples) + 1e-12


def _budget(text):
    return ConsumerBudget(parse_ppm(text))


def test_uniform_initial_tolerance_matches_uniform_cdf():
    xo = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    consumers = [ConsumerChain(0, Fraction(0), _budget(f"±{b} ppm")) for b in (5, 10, 15, 25)]
    result = monte_carlo_yield([xo], consumers, ROOM, 0.0, samples=SAMPLES, seed=11)
    for consumer, got in zip(consumers, result.yields):
        b = float(consumer.budget.tolerance[1])
        expected = min(1.0, stats.uniform(loc=-20e-6, scale=40e-6).cdf(b) - stats.uniform(loc=-20e-6, scale=40e-6).cdf(-b))
        assert _within(got, expected)


def test_normal_part_is_truncated_normal_at_three_sigma():
    # Limits at ±3 sigma, parts outside screened out: scipy.stats.truncnorm is the reference.
    xo = OscillatorSpec("xo", parse_ppm("±30 ppm"), distribution="normal")
    sigma = 30e-6 / SIGMA_PER_LIMIT
    reference = stats.truncnorm(-SIGMA_PER_LIMIT, SIGMA_PER_LIMIT, loc=0.0, scale=sigma)
    consumers = [ConsumerChain(0, Fraction(0), _budget(f"±{b} ppm")) for b in (5, 10, 20)]
    result = monte_carlo_yield([xo], consumers, ROOM, 0.0, samples=SAMPLES, seed=12)
    for consumer, got in zip(consumers, result.yields):
        b = float(consumer.budget.tolerance[1])
        assert _within(got, reference.cdf(b) - reference.cdf(-b))


def test_two_uniform_terms_add_to_a_triangle():
    # Initial ±10 ppm plus a ±10 ppm supply sensitivity: the sum is triangular on ±20 ppm (scipy.stats.triang).
    spec = OscillatorSpec("tcxo", parse_ppm("±10 ppm"), supply_sensitivity=parse_ppm("±10 ppm"))
    triangle = stats.triang(c=0.5, loc=-20e-6, scale=40e-6)
    result = monte_carlo_yield([spec], [ConsumerChain(0, Fraction(0), _budget("±10 ppm"))], ROOM, 0.0, samples=SAMPLES, seed=13)
    assert _within(result.yields[0], triangle.cdf(10e-6) - triangle.cdf(-10e-6))  # 0.75


def test_a_stability_band_counts_with_its_full_width_on_every_board():
    # A ±10 ppm band says only where the frequency stays: every board may reach both edges, so with a
    # uniform ±10 ppm initial tolerance a ±15 ppm budget holds where |initial| <= 5 ppm (uniform CDF: 1/2).
    # The old draw, one uniform band value per board, gave the triangle's 1 - 25/400 = 0.9375.
    spec = OscillatorSpec("tcxo", parse_ppm("±10 ppm"), StabilityBand(*parse_ppm("±10 ppm")))
    result = monte_carlo_yield([spec], [ConsumerChain(0, Fraction(0), _budget("±15 ppm"))], (-40, 85), 0.0,
                               samples=SAMPLES, seed=13)
    uniform = stats.uniform(loc=-10e-6, scale=20e-6)
    assert _within(result.yields[0], uniform.cdf(5e-6) - uniform.cdf(-5e-6))
    assert not _within(result.yields[0], 0.9375)


def test_a_curve_counts_over_the_whole_range_not_at_one_drawn_temperature():
    # Tuning fork, no other error, on -40..85 °C: -143.65 ppm at -40 °C (common practice, -0.034 ppm/°C²),
    # so no board keeps inside ±100 ppm everywhere and every board keeps inside ±150 ppm.
    # One drawn temperature per board (the old method) reported the share of the range inside ±100 ppm.
    fork = OscillatorSpec("crystal", (Fraction(0), Fraction(0)), TuningForkCurve())
    chains = [ConsumerChain(0, Fraction(0), _budget("±100 ppm")), ConsumerChain(0, Fraction(0), _budget("±150 ppm"))]
    result = monte_carlo_yield([fork], chains, (-40, 85), 0.0, samples=SAMPLES, seed=14)
    assert result.yields == (0.0, 1.0)
    half = np.sqrt(100 / 0.034)
    old = (min(85.0, 25 + half) - max(-40.0, 25 - half)) / 125.0
    assert old > 0.6  # what the old method reported for a board that fails at -40 °C every time


def test_yield_is_one_when_worst_case_fits_and_agrees_with_worst_case_edges():
    spec = OscillatorSpec(
        "xo", parse_ppm("±20 ppm"), StabilityBand(*parse_ppm("±25 ppm")),
        AgingLinear(parse_ppm("±3 ppm"), parse_ppm("±1 ppm")), parse_ppm("±1 ppm"), distribution="normal",
    )
    lifetime = 10 * SECONDS_PER_YEAR
    worst = consumer_accuracy(spec, Fraction(0), None, (-40, 85), lifetime, _budget("±100 ppm"))
    edge = max(abs(worst.carrier_min), abs(worst.carrier_max))
    fits = ConsumerChain(0, Fraction(0), ConsumerBudget((-edge, edge)))
    result = monte_carlo_yield([spec], [fits], (-40, 85), lifetime, samples=50_000, seed=15)
    assert result.yields[0] == 1.0 and result.board_yield == 1.0


def test_seed_makes_runs_reproducible_and_progress_is_reported():
    xo = OscillatorSpec("xo", parse_ppm("±20 ppm"), StabilityBand(*parse_ppm("±25 ppm")))
    consumers = [ConsumerChain(0, Fraction(0), _budget("±30 ppm"))]
    calls = []
    first = monte_carlo_yield([xo], consumers, (-40, 85), 0.0, samples=10_000, seed=5, chunk=3_000,
                              progress=lambda done, total: calls.append((done, total)))
    second = monte_carlo_yield([xo], consumers, (-40, 85), 0.0, samples=10_000, seed=5, chunk=3_000)
    assert first.yields == second.yields
    assert calls == [(3_000, 10_000), (6_000, 10_000), (9_000, 10_000), (10_000, 10_000)]


def test_board_yield_needs_every_consumer_and_references_are_independent():
    a = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    b = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    consumers = [ConsumerChain(0, Fraction(0), _budget("±10 ppm")), ConsumerChain(1, Fraction(0), _budget("±10 ppm"))]
    result = monte_carlo_yield([a, b], consumers, ROOM, 0.0, samples=SAMPLES, seed=16)
    assert _within(result.yields[0], 0.5) and _within(result.yields[1], 0.5)
    assert _within(result.board_yield, 0.25)  # independent references: 0.5 * 0.5


def test_synthesis_error_shifts_the_window():
    # A PLL 10 ppm high on a ±20 ppm reference against ±20 ppm: inside when ref < +10 ppm -> 75 %.
    xo = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    chain = ConsumerChain(0, 10 * PPM, _budget("±20 ppm"))
    low, high = reference_window(chain)
    assert high == pytest.approx(float((1 + 20 * PPM) / (1 + 10 * PPM) - 1), rel=1e-15)
    result = monte_carlo_yield([xo], [chain], ROOM, 0.0, samples=SAMPLES, seed=17)
    assert _within(result.yields[0], 0.75)


def test_spread_within_allowance_is_not_error_and_outside_it_is():
    xo = OscillatorSpec("xo", parse_ppm("±50 ppm"))
    allowance = SpreadAllowance("down", 5000 * PPM, (Fraction(30_000), Fraction(33_000)))
    pcie = ConsumerBudget(parse_ppm("±300 ppm"), allowance)
    good = ConsumerChain(0, Fraction(0), pcie, SpreadSpectrum("down", 5000 * PPM, Fraction(31_500)))
    bad = ConsumerChain(0, Fraction(0), pcie, SpreadSpectrum("center", 5000 * PPM, Fraction(31_500)))
    result = monte_carlo_yield([xo], [good, bad], ROOM, 0.0, samples=20_000, seed=18)
    assert result.yields == (1.0, 0.0)


def test_crystal_load_tolerance_spreads_the_pulling():
    pF, fF = Fraction(1, 10**12), Fraction(1, 10**15)
    load = CrystalLoad(12 * pF, 5 * fF, 2 * pF, 18 * pF, 18 * pF, 3 * pF, Fraction(1, 20), Fraction(1, 2) * pF)
    spec = OscillatorSpec("crystal", (Fraction(0), Fraction(0)), crystal_load=load)
    errors = sample_reference_errors(spec, np.full(20_000, 25.0), 0.0, np.random.default_rng(19))
    low, high = load.pulling_range()
    assert low <= errors.min() < 0 < errors.max() <= high


def test_bad_reference_index_and_sample_count_are_refused():
    xo = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    with pytest.raises(ClockplanError, match="reference 3"):
        monte_carlo_yield([xo], [ConsumerChain(3, Fraction(0), _budget("±10 ppm"), name="uart0")], ROOM, 0.0)
    with pytest.raises(ClockplanError, match="positive number"):
        monte_carlo_yield([xo], [], ROOM, 0.0, samples=0)
