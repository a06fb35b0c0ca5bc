"""Phase noise -> RMS jitter: worked profiles and random profiles against scipy quadrature, closed forms."""

from __future__ import annotations

import math

import numpy as np
import pytest

from clockplan.errors import ClockplanError
from clockplan.jitter import rms_jitter
from clockplan.jitter.integrate import integrated_power, profile_jitter, rms_phase
from clockplan.jitter.profile import PhaseNoiseProfile, Spur

# --------------------------------------------------------------------------- worked profiles

# Each row: points (offset Hz, dBc/Hz), carrier Hz, band, and the RMS jitter (s) to the printed rounding.
# The reference is scipy.integrate.quad over the same curve, read as straight lines on log-log axes
# (each segment a power law: common practice for phase-noise data), segment by segment; the printed
# figure is kept so that a change of the result shows in review.
WORKED_PROFILES = [
    pytest.param([(10, -60), (100, -75), (1e3, -85), (1e4, -95), (10001, -95)], 600e6, (10, 10001),
                 1.99e-12, 0.01e-12, id="600MHz-steep-close-in"),
    pytest.param([(1, -50), (10, -70), (100, -113), (1e3, -128), (1e4, -135), (1e5, -140)], 10e6, (1, 1e5),
                 68.66e-12, 0.01e-12, id="10MHz-from-1Hz"),
    pytest.param([(1, -39), (10, -73), (1e3, -122), (1e4, -131), (1e6, -149)], 70e6, (1, 1e6),
                 23.320e-12, 0.001e-12, id="70MHz-to-1MHz"),
    pytest.param([(1e4, -100), (1e7, -100)], 100e6, (1e4, 1e7), 71e-12, 1e-12, id="100MHz-flat"),
]


def _loglog_quad_jitter(points, carrier, f_low, f_high):
    """RMS jitter by scipy quadrature of the log-log interpolated density, breakpoints at the points."""
    from scipy.integrate import quad

    offsets = np.log10([p[0] for p in points])
    levels = np.array([p[1] for p in points], dtype=float)

    def density(f):
        return 10 ** (np.interp(math.log10(f), offsets, levels) / 10)

    edges = sorted({f_low, f_high, *(p[0] for p in points if f_low < p[0] < f_high)})
    power = sum(quad(density, a, b, epsabs=0, epsrel=1e-12, limit=200)[0] for a, b in zip(edges, edges[1:]))
    return math.sqrt(2 * power) / (2 * math.pi * carrier)


@pytest.mark.parametrize(("points", "carrier", "band", "printed", "rounding"), WORKED_PROFILES)
def test_worked_profiles_against_scipy_quadrature(points, carrier, band, printed, rounding):
    sigma = rms_jitter(points, carrier, *band)
    assert sigma == pytest.approx(_loglog_quad_jitter(points, carrier, *band), rel=1e-9)
    assert round(sigma / rounding) == round(printed / rounding)


def test_a_linear_trapezoid_is_not_the_integral():
    # The trapezoid rule on linear power over a few points per decade overstates the
    # noise of steep close-in segments more than twofold here; the exact power-law integral must not
    # follow it, and must agree with quadrature.
    offsets = np.array([1, 10, 100, 1e3, 1e4, 1e5])
    levels = np.array([-50, -70, -113, -128, -135, -140])
    density = 10 ** (levels / 10)
    trapezoid = float(np.sum(np.diff(offsets) * (density[1:] + density[:-1]) / 2))
    sigma_trapezoid = math.sqrt(2 * trapezoid) / (2 * math.pi * 10e6)
    exact = rms_jitter(list(zip(offsets, levels)), 10e6, 1, 1e5)
    assert exact == pytest.approx(_loglog_quad_jitter(list(zip(offsets, levels)), 10e6, 1, 1e5), rel=1e-9)
    assert sigma_trapezoid > 2 * exact


@pytest.mark.parametrize("integrated_dbc", [-80.0, -60.0, -100.0])
def test_integrated_dbc_to_rms_phase(integrated_dbc):
    # Closed form: an integrated single-sideband level A (dBc) is sigma_phi = sqrt(2 * 10^(A/10)) rad
    # (both sidebands; common practice); -80 dBc gives 1.414e-4 rad, 2.25 ps at 10 MHz.
    bandwidth = 1e6
    flat = PhaseNoiseProfile.flat(integrated_dbc - 10 * math.log10(bandwidth))
    result = profile_jitter(flat, 10e6, 1e3, 1e3 + bandwidth)
    expected_rad = math.sqrt(2 * 10 ** (integrated_dbc / 10))
    assert result.integrated_dbc == pytest.approx(integrated_dbc, abs=1e-9)
    assert result.rms_phase_rad == pytest.approx(expected_rad, rel=1e-12)
    assert result.rms_seconds == pytest.approx(expected_rad / (2 * math.pi * 10e6), rel=1e-12)
    if integrated_dbc == -80.0:
        assert round(result.rms_seconds * 1e12, 2) == 2.25


# --------------------------------------------------------------------------- closed forms


@pytest.mark.parametrize("level", [-170.0, -150.0, -120.0, -80.0])
@pytest.mark.parametrize(("f1", "f2"), [(12e3, 20e6), (1.875e6, 20e6), (10.0, 1e9), (1.0, 2.0)])
def test_flat_noise_closed_form(level, f1, f2):
    # Closed form for white phase noise: sigma_phi^2 = 2 * 10^(L/10) * (f2 - f1).
    expected_phase = math.sqrt(2 * 10 ** (level / 10) * (f2 - f1))
    assert rms_phase([(1e3, level), (1e6, level)], f1, f2) == pytest.approx(expected_phase, rel=1e-12)
    carrier = 156.25e6
    assert rms_jitter([(1e3, level)], carrier, f1, f2) == pytest.approx(
        expected_phase / (2 * math.pi * carrier), rel=1e-12
    )


@pytest.mark.parametrize("slope_db_per_decade", [-40.0, -30.0, -20.0, -10.0, 0.0, 10.0, 20.0])
def test_single_power_law_segment_closed_form(slope_db_per_decade):
    # Closed form of the power law p1 (f/f1)^b: p1 f1 / (b+1) ((f2/f1)^(b+1) - 1),
    # and p1 f1 ln(f2/f1) for b = -1 (-10 dB/decade).
    f1, f2, level = 1e3, 1e6, -100.0
    b = slope_db_per_decade / 10
    p1 = 10 ** (level / 10)
    level2 = level + slope_db_per_decade * math.log10(f2 / f1)
    if b == -1:
        expected = p1 * f1 * math.log(f2 / f1)
    else:
        expected = p1 * f1 / (b + 1) * ((f2 / f1) ** (b + 1) - 1)
    profile = PhaseNoiseProfile.from_points([(f1, level), (f2, level2)])
    assert integrated_power(profile, f1, f2) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("epsilon", [1e-13, 1e-10, 1e-7, 1e-4])
def test_segments_next_to_minus_ten_db_per_decade_stay_continuous(epsilon):
    # The b = -1 case is a limit; slopes just beside it must converge to p1 f1 ln(r).
    f1, f2, level = 1e2, 1e7, -90.0
    limit = 10 ** (level / 10) * f1 * math.log(f2 / f1)
    for sign in (-1, 1):
        slope = -10.0 + sign * epsilon
        profile = PhaseNoiseProfile.from_points([(f1, level), (f2, level + slope * 5)])
        assert integrated_power(profile, f1, f2) == pytest.approx(limit, rel=10 * epsilon + 1e-13)


# --------------------------------------------------------------------------- scipy quadrature


def _reference_density(offsets, levels, f, extrapolation):
    """L(f) as the test reads the datasheet: straight in dB against log10 f."""
    x, xs = math.log10(f), np.log10(offsets)
    if extrapolation == "slope" and len(offsets) > 1 and not xs[0] <= x <= xs[-1]:
        i = 0 if x < xs[0] else len(xs) - 2
        level = levels[i] + (levels[i + 1] - levels[i]) * (x - xs[i]) / (xs[i + 1] - xs[i])
    else:
        level = float(np.interp(x, xs, levels))  # np.interp holds the end values
    return 10 ** (level / 10)


def _quad_reference(offsets, levels, f_low, f_high, extrapolation):
    from scipy.integrate import quad

    edges = sorted({f_low, f_high, *[f for f in offsets if f_low < f < f_high]})
    total = 0.0
    for a, b in zip(edges[:-1], edges[1:]):
        # Integrate in u = ln f, where every power-law piece is a smooth exponential.
        value, _ = quad(
            lambda u: _reference_density(offsets, levels, math.exp(u), extrapolation) * math.exp(u),
            math.log(a),
            math.log(b),
            epsrel=1e-11,
            epsabs=0.0,
            limit=200,
        )
        total += value
    return total


@pytest.mark.parametrize("extrapolation", ["flat", "slope"])
@pytest.mark.parametrize("seed", range(12))
def test_random_profiles_against_scipy_quad(seed, extrapolation):
    # Reference: scipy.integrate.quad on the same piecewise definition; agreement within 0.1 %.
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 12))
    offsets = np.sort(10 ** rng.uniform(0, 8, n))
    offsets = offsets[np.concatenate(([True], np.diff(offsets) > 1e-6 * offsets[1:]))]
    levels = rng.uniform(-175, -60, offsets.size)
    if offsets.size > 2:  # make one segment exactly -10 dB/decade, the logarithmic case
        levels[2] = levels[1] - 10 * math.log10(offsets[2] / offsets[1])
    f_low, f_high = np.sort(10 ** rng.uniform(-0.5, 8.5, 2))
    profile = PhaseNoiseProfile.from_points(np.column_stack((offsets, levels)))
    ours = integrated_power(profile, f_low, f_high, extrapolation=extrapolation)
    reference = _quad_reference(offsets, levels, f_low, f_high, extrapolation)
    assert ours == pytest.approx(reference, rel=1e-3)


# --------------------------------------------------------------------------- floor, spurs, extension


def test_floor_adds_its_power_times_the_bandwidth():
    # Independent noises add in power: the floor adds 10^(F/10) * (f2 - f1).
    points = [(1e3, -110), (1e5, -150)]
    plain = integrated_power(PhaseNoiseProfile.from_points(points), 1e3, 1e7)
    floored = integrated_power(PhaseNoiseProfile.from_points(points, floor_dbc_hz=-160), 1e3, 1e7)
    assert floored - plain == pytest.approx(1e-16 * (1e7 - 1e3), rel=1e-9)


def test_spurs_count_only_inside_the_band_edges_included():
    # A spur of S dBc is a sideband tone: it adds 10^(S/10) to the single-sideband
    # integral, i.e. 2 * 10^(S/10) rad^2 to the phase variance (common practice).
    points = [(1e3, -200)]
    spurs = [Spur(12e3, -80), Spur(1e6, -90), Spur(30e6, -70)]
    profile = PhaseNoiseProfile.from_points(points, spurs=spurs)
    base = integrated_power(PhaseNoiseProfile.from_points(points), 12e3, 20e6)
    assert integrated_power(profile, 12e3, 20e6) - base == pytest.approx(1e-8 + 1e-9, rel=1e-12)


def test_band_beyond_the_points_flat_and_slope():
    # Flat: beyond the last point the last level holds; slope: the last segment continues.
    points = [(1e3, -100), (1e4, -120)]
    profile = PhaseNoiseProfile.from_points(points)
    flat_tail = integrated_power(profile, 1e4, 1e6)
    assert flat_tail == pytest.approx(1e-12 * (1e6 - 1e4), rel=1e-12)
    slope_tail = integrated_power(profile, 1e4, 1e6, extrapolation="slope")
    assert slope_tail == pytest.approx(1e-12 * 1e4**2 * (1 / 1e4 - 1 / 1e6), rel=1e-12)
    below = integrated_power(profile, 10, 1e3)
    assert below == pytest.approx(1e-10 * (1e3 - 10), rel=1e-12)


def test_band_inside_one_segment():
    # -20 dB/decade: integral of p1 f1^2 / f^2 from a to b = p1 f1^2 (1/a - 1/b).
    profile = PhaseNoiseProfile.from_points([(1e2, -80), (1e6, -160)])
    assert integrated_power(profile, 2e3, 3e3) == pytest.approx(1e-8 * 1e4 * (1 / 2e3 - 1 / 3e3), rel=1e-12)


# --------------------------------------------------------------------------- scaling


@pytest.mark.parametrize("n", [2, 4, 25, 100, 128.5])
def test_multiplying_by_n_raises_noise_by_20_log_n(n):
    # Phase scales with frequency: x N is +20 log10(N) dB, sigma_phi x N, sigma_t unchanged (the 20 log N
    # rule, common practice).
    profile = PhaseNoiseProfile.from_points(
        [(1e2, -90), (1e4, -125), (1e6, -150)], floor_dbc_hz=-160, spurs=[Spur(1e5, -85)]
    )
    up = profile.shifted(20 * math.log10(n))
    assert rms_phase(up, 12e3, 20e6) == pytest.approx(n * rms_phase(profile, 12e3, 20e6), rel=1e-12)
    assert rms_jitter(up, 25e6 * n, 12e3, 20e6) == pytest.approx(rms_jitter(profile, 25e6, 12e3, 20e6), rel=1e-12)


def test_result_phase_units_and_budget():
    result = profile_jitter(PhaseNoiseProfile.flat(-150), 100e6, 12e3, 20e6, budget_seconds=150e-15)
    assert result.rms_phase_deg == pytest.approx(math.degrees(result.rms_phase_rad), rel=1e-15)
    assert result.rms_phase_rad == pytest.approx(math.sqrt(2e-15 * (20e6 - 12e3)), rel=1e-12)
    assert result.margin_seconds == pytest.approx(150e-15 - result.rms_seconds, rel=1e-12)
    assert result.passes is (result.rms_seconds <= 150e-15)
    assert "planning estimate" in result.note


def test_numpy_table_and_pairs_agree():
    pairs = [(10.0, -60.0), (1e3, -100.0), (1e6, -150.0)]
    assert rms_jitter(np.array(pairs), 1e8, 10, 1e6) == rms_jitter(pairs, 1e8, 10, 1e6)


# --------------------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    ("points", "bad_index", "hint_word"),
    [
        ([(1e3, -100), (1e3, -110)], 1, "increasing"),
        ([(1e3, -100), (5e2, -110)], 1, "increasing"),
        ([(0.0, -100), (1e3, -110)], 0, "above 0"),
        ([(-5.0, -100)], 0, "above 0"),
        ([(1e3, -100), (float("nan"), -110)], 1, "above 0"),
        ([(1e3, -100), (1e4, float("nan"))], 1, "dBc/Hz"),
        ([(1e3, float("inf"))], 0, "dBc/Hz"),
    ],
)
def test_invalid_points_name_the_point_and_hint(points, bad_index, hint_word):
    with pytest.raises(ClockplanError) as caught:
        rms_jitter(points, 100e6, 1e3, 1e6)
    assert caught.value.key == f"points[{bad_index}]"
    assert hint_word in caught.value.hint


@pytest.mark.parametrize(
    ("points", "carrier", "band"),
    [
        ([], 100e6, (1e3, 1e6)),
        ([(1e3, -100, 5)], 100e6, (1e3, 1e6)),
        ([("a", -100)], 100e6, (1e3, 1e6)),
        ([(1e3, -100)], 0.0, (1e3, 1e6)),
        ([(1e3, -100)], float("nan"), (1e3, 1e6)),
        ([(1e3, -100)], 100e6, (1e6, 1e3)),
        ([(1e3, -100)], 100e6, (0.0, 1e3)),
        ([(1e3, -100)], 100e6, (1e3, float("inf"))),
    ],
)
def test_invalid_arguments_raise_clockplan_error(points, carrier, band):
    with pytest.raises(ClockplanError) as caught:
        rms_jitter(points, carrier, *band)
    assert caught.value.hint


def test_invalid_extrapolation_and_spur():
    with pytest.raises(ClockplanError, match="extrapolation"):
        rms_jitter([(1e3, -100)], 1e8, 1e3, 1e6, extrapolation="cubic")  # type: ignore[arg-type]
    with pytest.raises(ClockplanError, match="spur"):
        Spur(-1.0, -80)
    with pytest.raises(ClockplanError, match="floor"):
        PhaseNoiseProfile.from_points([(1e3, -100)], floor_dbc_hz=float("nan"))


@pytest.mark.parametrize(
    "build",
    [
        lambda: PhaseNoiseProfile(["x", "y"], [-100, -110]),
        lambda: PhaseNoiseProfile([1e3, 1e4], [-100]),
        lambda: PhaseNoiseProfile.from_points([(1e3, -100)], spurs=[(1e3,)]),
        lambda: PhaseNoiseProfile.from_points([(1e3, -100)], spurs=["loud"]),
    ],
)
def test_malformed_profiles_raise_clockplan_error(build):
    with pytest.raises(ClockplanError) as caught:
        build()
    assert caught.value.hint
