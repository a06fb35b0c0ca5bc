"""PLL loop responses checked against scipy.signal on the same polynomials."""

from __future__ import annotations

import math

import numpy as np
import pytest

from clockplan.errors import ClockplanError
from clockplan.jitter.loop import (
    damping_from_phase_margin,
    loop_from_open_loop,
    phase_margin_from_damping,
    second_order_loop,
)

signal = pytest.importorskip("scipy.signal")
optimize = pytest.importorskip("scipy.optimize")

FREQS_HZ = np.geomspace(1.0, 1e9, 400)


def _freqs(num, den, f_hz):
    """scipy.signal's frequency response of num/den at f_hz (Hz)."""
    _, h = signal.freqs(num, den, worN=2 * np.pi * np.asarray(f_hz))
    return h


@pytest.mark.parametrize("bandwidth_hz", [50.0, 10e3, 400e3])
@pytest.mark.parametrize("damping", [0.3, 0.707, 1.0, 4.0])
@pytest.mark.parametrize("bandwidth_is", ["closed_loop_3db", "crossover"])
def test_second_order_responses_match_scipy_freqs(bandwidth_hz, damping, bandwidth_is):
    loop = second_order_loop(bandwidth_hz, damping=damping, bandwidth_is=bandwidth_is)
    np.testing.assert_allclose(loop.closed_loop(FREQS_HZ), _freqs(loop.closed_num, loop.closed_den, FREQS_HZ), rtol=1e-12)
    np.testing.assert_allclose(loop.error(FREQS_HZ), _freqs(loop.error_num, loop.error_den, FREQS_HZ), rtol=1e-12)
    np.testing.assert_allclose(loop.open_loop(FREQS_HZ), _freqs(loop.open_num, loop.open_den, FREQS_HZ), rtol=1e-12)
    # H + (1 - H) = 1 and H = G / (1 + G), from scipy's open-loop response.
    g = _freqs(loop.open_num, loop.open_den, FREQS_HZ)
    np.testing.assert_allclose(loop.closed_loop(FREQS_HZ), g / (1 + g), rtol=1e-9)
    np.testing.assert_allclose(loop.closed_loop(FREQS_HZ) + loop.error(FREQS_HZ), 1.0, atol=1e-12)


@pytest.mark.parametrize("damping", [0.4, 0.707, 1.0, 2.5])
def test_closed_loop_bandwidth_is_the_3db_point(damping):
    # Definition: |H|^2 = 1/2 at the loop bandwidth, evaluated by scipy.signal.freqs.
    loop = second_order_loop(123e3, damping=damping)
    h = _freqs(loop.closed_num, loop.closed_den, [123e3])[0]
    assert abs(h) ** 2 == pytest.approx(0.5, rel=1e-12)


@pytest.mark.parametrize("phase_margin", [30.0, 45.0, 60.0, 75.0, 85.0])
def test_phase_margin_design_meets_the_margin_at_crossover(phase_margin):
    # Reference: find the crossover |G| = 1 numerically on scipy's response, read the phase there.
    loop = second_order_loop(80e3, phase_margin_deg=phase_margin, bandwidth_is="crossover")

    def gain_minus_one(log_f):
        return abs(_freqs(loop.open_num, loop.open_den, [10**log_f])[0]) - 1.0

    crossover = 10 ** optimize.brentq(gain_minus_one, 2, 7, xtol=1e-14)
    assert crossover == pytest.approx(80e3, rel=1e-9)
    g = _freqs(loop.open_num, loop.open_den, [crossover])[0]
    assert 180.0 + math.degrees(np.angle(g)) == pytest.approx(phase_margin, abs=1e-7)
    assert phase_margin_from_damping(damping_from_phase_margin(phase_margin)) == pytest.approx(phase_margin)


def test_in_band_and_out_of_band_limits():
    # Common practice: H -> 1 well inside the loop, 1 - H -> 1 well outside; the type-II
    # loop's 1 - H rises 40 dB/decade inside the loop (s^2 in its numerator).
    loop = second_order_loop(10e3, damping=0.707)
    assert loop.closed_loop_power([1.0])[0] == pytest.approx(1.0, abs=1e-6)
    assert loop.error_power([1e9])[0] == pytest.approx(1.0, abs=1e-6)
    low = loop.error_power([1.0, 10.0])
    assert 10 * math.log10(low[1] / low[0]) == pytest.approx(40.0, abs=1e-3)


def _third_order_open_loop(kphi, kvco, n, c1, c2, r2):
    """Charge-pump PLL with a passive 2nd-order filter: G = Kphi Kvco Z(s) / (N s).

    Z(s) = (1 + s R2 C2) / (s (C1 + C2) (1 + s R2 C1 C2 / (C1 + C2))) (common practice).
    """
    c_total = c1 + c2
    t2 = r2 * c2
    t1 = r2 * c1 * c2 / c_total
    num = np.array([kphi * kvco * t2, kphi * kvco]) / (n * c_total)
    den = np.array([t1, 1.0, 0.0, 0.0])
    return num, den


@pytest.mark.parametrize(
    "params",
    [
        # Invented loop values for the check (charge pump A, VCO rad/s/V, N, C1, C2, R2).
        (5e-3, 2 * math.pi * 30e6, 100, 1e-9, 10e-9, 2e3),
        (1e-3, 2 * math.pi * 100e6, 2500, 0.5e-9, 22e-9, 680.0),
    ],
)
def test_explicit_open_loop_polynomials_match_scipy(params):
    num, den = _third_order_open_loop(*params)
    loop = loop_from_open_loop(num, den)
    g = _freqs(num, den, FREQS_HZ)
    np.testing.assert_allclose(loop.closed_loop(FREQS_HZ), g / (1 + g), rtol=1e-9)
    np.testing.assert_allclose(loop.error(FREQS_HZ), 1 / (1 + g), rtol=1e-9)
    np.testing.assert_allclose(
        loop.closed_loop_power(FREQS_HZ), np.abs(_freqs(loop.closed_num, loop.closed_den, FREQS_HZ)) ** 2, rtol=1e-12
    )
    np.testing.assert_allclose(
        loop.error_power(FREQS_HZ), np.abs(_freqs(loop.error_num, loop.error_den, FREQS_HZ)) ** 2, rtol=1e-12
    )


def test_error_response_is_accurate_deep_inside_the_loop():
    # 1 - H computed as den / (num + den) keeps its digits where H rounds to 1.
    loop = second_order_loop(1e6, damping=1.0)
    f = np.array([1e-2])
    wn = loop.closed_den[2] ** 0.5
    expected = (2 * math.pi * f[0]) ** 4 / wn**4  # |s^2 / wn^2|^2 to first order
    assert loop.error_power(f)[0] == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize(
    ("kwargs", "key"),
    [
        (dict(bandwidth_hz=1e5), "loop"),
        (dict(bandwidth_hz=1e5, damping=0.7, phase_margin_deg=60), "loop"),
        (dict(bandwidth_hz=-1.0, damping=0.7), "bandwidth"),
        (dict(bandwidth_hz=1e5, damping=0.0), "damping"),
        (dict(bandwidth_hz=1e5, phase_margin_deg=95.0), "phase_margin"),
        (dict(bandwidth_hz=1e5, damping=0.7, bandwidth_is="unity"), "bandwidth_is"),
    ],
)
def test_bad_second_order_parameters(kwargs, key):
    with pytest.raises(ClockplanError) as caught:
        second_order_loop(**kwargs)
    assert caught.value.key == key and caught.value.hint


@pytest.mark.parametrize(
    ("num", "den", "key"),
    [
        ([1.0, 0.0, 0.0], [1.0, 0.0], "open_loop_numerator"),  # improper
        ([0.0], [1.0, 0.0], "open_loop_numerator"),  # zero
        ([1.0], [float("nan"), 1.0], "open_loop_denominator"),
        ([1e9], [1.0, 0.0, 0.0, 0.0], "loop"),  # K / s^3 closes unstable
        ([1.0], [1.0, -1.0], "loop"),  # right-half-plane open loop not rescued
    ],
)
def test_bad_open_loop_polynomials(num, den, key):
    with pytest.raises(ClockplanError) as caught:
        loop_from_open_loop(num, den)
    assert caught.value.key == key and caught.value.hint
