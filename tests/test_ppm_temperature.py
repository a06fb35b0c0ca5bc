"""Frequency-versus-temperature models checked against published curves and reference libraries."""

from fractions import Fraction

import numpy as np
import pytest
import sympy
from scipy.optimize import minimize_scalar

from clockplan.errors import BoardError
from clockplan.ppm.temperature import (
    AT_CUT_CUBIC,
    AT_CUT_LINEAR_PER_ARCMIN,
    AT_CUT_QUADRATIC,
    AtCutCurve,
    PointTable,
    StabilityBand,
    TuningForkCurve,
)
from clockplan.units import PPM, parse_ppm

# Published AT-cut coefficients about 25 °C (values from memory):
#   first order  -5.15e-6 /°C per degree of cut-angle offset   Bechmann 1956, Proc. IRE 44, "Frequency-temperature-
#                                                                angle characteristics of AT-type resonators"
#   second order -0.45e-9 /°C²                                  Bechmann, Ballato & Lukaszek 1962, Proc. IRE 50
#   third order  109.5e-12 /°C³                                 Bechmann, Ballato & Lukaszek 1962, Proc. IRE 50
PUBLISHED_AT_CUT = [
    ("linear per arcmin", AT_CUT_LINEAR_PER_ARCMIN, -5.15e-6 / 60),
    ("quadratic", AT_CUT_QUADRATIC, -0.45e-9),
    ("cubic", AT_CUT_CUBIC, 109.5e-12),
]


@pytest.mark.parametrize("name, ours, published", PUBLISHED_AT_CUT, ids=[row[0] for row in PUBLISHED_AT_CUT])
def test_at_cut_coefficients_match_published_values(name, ours, published):
    assert ours == pytest.approx(published, rel=1e-12)


def test_at_cut_inflection_near_published_26_c():
    # The AT-cut inflection lies a little above room temperature, about 26-27 °C
    # (Bechmann-type curve families; from memory).
    assert 25.5 < AtCutCurve.from_angle(0).inflection_c < 28.0


@pytest.mark.parametrize("offset_arcmin", [-2.0, 0.0, 2.0, 4.0, 8.0])
def test_at_cut_curve_is_the_bechmann_cubic(offset_arcmin):
    # Evaluate the defining cubic independently with sympy (reference library).
    t = sympy.Symbol("t")
    dt = t - 25
    cubic = (sympy.Rational(-515, 6_000_000_000) * offset_arcmin * dt
             + sympy.Rational(-45, 10**11) * dt**2 + sympy.Rational(1095, 10**13) * dt**3)
    curve = AtCutCurve.from_angle(offset_arcmin)
    temps = np.array([-55.0, -40.0, 0.0, 25.0, 60.0, 85.0, 105.0])
    expected = [float(cubic.subs(t, value)) for value in temps]
    assert curve.fractional_error(temps) == pytest.approx(expected, rel=1e-12, abs=1e-18)


@pytest.mark.parametrize("offset_arcmin", [1.0, 3.0, 6.0, 8.0])
def test_at_cut_turning_points_match_sympy_roots(offset_arcmin):
    # Stationary points of the cubic: roots of its derivative, solved exactly by sympy.
    curve = AtCutCurve.from_angle(offset_arcmin)
    t = sympy.Symbol("t", real=True)
    dt = t - 25
    poly = curve.a1 * dt + curve.a2 * dt**2 + curve.a3 * dt**3
    roots = sorted(float(r) for r in sympy.solve(sympy.diff(poly, t), t))
    extremes = curve.extremes(roots[0] - 1, roots[1] + 1)
    # Positive offset: upper turning point (maximum) below the inflection, minimum above.
    assert extremes.high_at_c == pytest.approx(roots[0], abs=1e-9)
    assert extremes.low_at_c == pytest.approx(roots[1], abs=1e-9)
    # Turning points sit symmetrically about the inflection (a property of any cubic).
    assert (roots[0] + roots[1]) / 2 == pytest.approx(curve.inflection_c, abs=1e-9)


@pytest.mark.parametrize(
    "curve, t_lo, t_hi",
    [
        (AtCutCurve.from_angle(4.0), -40.0, 85.0),
        (AtCutCurve.from_angle(-1.0), -20.0, 70.0),
        (AtCutCurve.from_angle(7.0), 0.0, 50.0),
        (TuningForkCurve(), -40.0, 85.0),
        (TuningForkCurve(turnover_c=30.0), 35.0, 85.0),
    ],
)
def test_worst_case_over_range_matches_scipy_bounded_search(curve, t_lo, t_hi):
    # scipy.optimize.minimize_scalar (bounded) plus the range ends as the reference search.
    def scipy_extreme(sign):
        found = minimize_scalar(lambda x: sign * float(curve.fractional_error(np.array([x]))[0]),
                                bounds=(t_lo, t_hi), method="bounded", options={"xatol": 1e-9})
        candidates = [found.x, t_lo, t_hi]
        return min(sign * float(curve.fractional_error(np.array([x]))[0]) for x in candidates) * sign

    extremes = curve.extremes(t_lo, t_hi)
    assert extremes.low == pytest.approx(scipy_extreme(+1), abs=1e-12)
    assert extremes.high == pytest.approx(scipy_extreme(-1), abs=1e-12)


def test_worst_case_is_not_limited_to_a_grid():
    # A coarse grid would miss the turning point; the exact evaluation finds it.
    curve = AtCutCurve.from_angle(4.0)
    extremes = curve.extremes(-40.0, 85.0)
    grid = curve.fractional_error(np.arange(-40.0, 86.0, 25.0))
    assert extremes.high > grid.max()


def test_tuning_fork_parabola_at_minus_40_c():
    # -0.034 ppm/°C² over 25 °C to -40 °C gives about -144 ppm: -0.034 * 65² = -143.65 ppm
    # (tuning-fork crystal parabola; common practice, figure from memory).
    fork = TuningForkCurve()
    value = float(fork.fractional_error(np.array([-40.0]))[0])
    assert value * 1e6 == pytest.approx(-0.034 * 65**2, rel=1e-12)
    assert value * 1e6 == pytest.approx(-144, abs=0.5)


def test_tuning_fork_extremes_include_turnover():
    extremes = TuningForkCurve().extremes(-40.0, 85.0)
    assert extremes.high == 0.0 and extremes.high_at_c == 25.0
    assert extremes.low_at_c == -40.0  # farther from the 25 °C turnover than 85 °C


def test_band_has_exact_edges_and_no_temperature():
    band = StabilityBand(*parse_ppm("±0.5 ppm"))
    extremes = band.extremes(-40, 85)
    assert (extremes.low, extremes.high) == (Fraction(-1, 2) * PPM, Fraction(1, 2) * PPM)
    assert extremes.low_at_c is None and extremes.high_at_c is None
    assert np.isnan(band.fractional_error(np.array([-40.0, 85.0]))).all()  # no curve is invented


def test_band_monte_carlo_draw_stays_inside_band():
    band = StabilityBand(*parse_ppm("-1..+3 ppm"))
    draws = band.sample(np.zeros(10_000), np.random.default_rng(3))
    assert draws.min() >= -1e-6 and draws.max() <= 3e-6
    assert draws.mean() == pytest.approx(1e-6, abs=0.05e-6)


def test_point_table_matches_numpy_interp_and_finds_interior_peak():
    points = ((-40.0, 10e-6), (0.0, 14e-6), (25.0, 0.0), (85.0, -12e-6))
    table = PointTable(points)
    temps = np.linspace(-40, 85, 11)
    assert np.array_equal(table.fractional_error(temps), np.interp(temps, [p[0] for p in points], [p[1] for p in points]))
    extremes = table.extremes(-40, 85)
    assert (extremes.high, extremes.high_at_c) == (14e-6, 0.0)
    assert (extremes.low, extremes.low_at_c) == (-12e-6, 85.0)


def test_point_table_refuses_to_extrapolate():
    table = PointTable(((-20.0, 0.0), (70.0, 1e-6)))
    with pytest.raises(BoardError, match="covers"):
        table.extremes(-40, 85)


@pytest.mark.parametrize("points", [((25.0, 0.0),), ((25.0, 0.0), (0.0, 1e-6))])
def test_point_table_needs_rising_points(points):
    with pytest.raises(BoardError):
        PointTable(points)


def test_backwards_range_is_refused():
    with pytest.raises(BoardError, match="not a range"):
        AtCutCurve.from_angle(1).extremes(85, -40)
