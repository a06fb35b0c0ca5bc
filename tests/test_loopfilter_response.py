"""Closed-loop and error transfer functions, their measures, and the lock-time estimate.

Reference: scipy.signal (freqs, step) on the same polynomials; loop algebra
H = G/(1+G), E = 1/(1+G) (feedback theory, common practice).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from clockplan.errors import ClockplanError
from clockplan.loopfilter.design import FilterDesign, LoopSpec, design_filter, snap_design
from clockplan.loopfilter.response import (
    closed_loop_bandwidth_hz,
    closed_loop_peaking_db,
    closed_loop_polynomials,
    error_polynomials,
    frequency_error_step,
    frequency_response,
    lock_time,
    loop_margins,
    open_loop_polynomials,
)

SPEC = LoopSpec(2.5e-3, 30e6, 100, 25e6)  # invented demo loop
DESIGNS = [
    design_filter(SPEC, 100e3, 55, order=2),
    design_filter(SPEC, 100e3, 55, order=3, pole_ratio=0.5),
    snap_design(design_filter(SPEC, 40e3, 65, order=3, pole_ratio=0.3)),
    FilterDesign(3, r1=820.0, c1=6.8e-9, c2=270e-12, r3=6.2e3, c3=39e-12),
]
GRID_HZ = np.geomspace(10.0, 100e6, 301)


@pytest.mark.parametrize("design", DESIGNS)
def test_closed_loop_and_error_follow_from_the_open_loop(design: FilterDesign) -> None:
    # Feedback algebra on scipy's evaluation of G: H = G/(1+G), E = 1/(1+G).
    w = 2 * math.pi * GRID_HZ
    _, g = signal.freqs(*open_loop_polynomials(design, SPEC), worN=w)
    _, h = signal.freqs(*closed_loop_polynomials(design, SPEC), worN=w)
    _, e = signal.freqs(*error_polynomials(design, SPEC), worN=w)
    np.testing.assert_allclose(h, g / (1 + g), rtol=1e-9)
    np.testing.assert_allclose(e, 1 / (1 + g), rtol=1e-9, atol=1e-15)
    np.testing.assert_allclose(h + e, 1.0, rtol=0, atol=1e-9)


@pytest.mark.parametrize("design", DESIGNS)
def test_limits_of_the_closed_loop(design: FilterDesign) -> None:
    # A type-2 loop tracks the reference exactly at DC and leaves the VCO alone far out.
    h_num, h_den = closed_loop_polynomials(design, SPEC)
    e_num, e_den = error_polynomials(design, SPEC)
    assert h_num[-1] / h_den[-1] == pytest.approx(1.0, abs=1e-15)
    assert e_num[-1] == 0 and e_num[-2] == 0  # E(s) ~ s^2 at low frequency (type 2)
    far = frequency_response(h_num, h_den, [1e9])[0]
    assert abs(far) < 1e-3
    assert abs(frequency_response(e_num, e_den, [1e9])[0]) == pytest.approx(1.0, abs=1e-3)


def test_frequency_response_matches_scipy_freqs() -> None:
    num, den = closed_loop_polynomials(DESIGNS[1], SPEC)
    _, reference = signal.freqs(num, den, worN=2 * math.pi * GRID_HZ)
    np.testing.assert_allclose(frequency_response(num, den, GRID_HZ), reference, rtol=1e-12)


@pytest.mark.parametrize("design", DESIGNS)
def test_peaking_and_3db_bandwidth_against_a_scipy_grid(design: FilterDesign) -> None:
    num, den = closed_loop_polynomials(design, SPEC)
    f = np.geomspace(1e3, 10e6, 200001)
    _, h = signal.freqs(num, den, worN=2 * math.pi * f)
    magnitude_db = 20 * np.log10(np.abs(h))
    assert closed_loop_peaking_db(design, SPEC) == pytest.approx(max(magnitude_db.max(), 0.0), abs=1e-3)
    last_above = f[np.flatnonzero(magnitude_db >= -10 * math.log10(2))[-1]]
    assert closed_loop_bandwidth_hz(design, SPEC) == pytest.approx(last_above, rel=1e-4)


def _scaled_step(num: np.ndarray, den: np.ndarray, scale: float, t: np.ndarray) -> np.ndarray:
    """scipy.signal.step of num/den with s = scale*p (time in units of 1/scale) for conditioning."""
    def rescale(poly: np.ndarray) -> np.ndarray:
        return poly * scale ** np.arange(len(poly) - 1, -1, -1)

    scaled_den = rescale(den)
    _, response = signal.step((rescale(num) / scaled_den[0], scaled_den / scaled_den[0]), T=t * scale)
    return response


@pytest.mark.parametrize("design", DESIGNS)
def test_frequency_error_step_matches_scipy_step(design: FilterDesign) -> None:
    # scipy.signal.step of E(s): the frequency error after a unit frequency step.
    num, den = error_polynomials(design, SPEC)
    t = np.linspace(0, 60e-6, 3001)
    reference = _scaled_step(num, den, 2 * math.pi * 100e3, t)
    ours = frequency_error_step(design, SPEC)(t)
    np.testing.assert_allclose(ours, reference, rtol=0, atol=1e-9)
    assert ours[0] == pytest.approx(1.0, abs=1e-12)


@pytest.mark.parametrize("design", DESIGNS)
@pytest.mark.parametrize(("step_hz", "tolerance_hz"), [(10e6, 1e3), (1e6, 100.0), (50e6, 10.0)])
def test_lock_time_is_the_last_exit_from_the_tolerance_band(design, step_hz: float, tolerance_hz: float) -> None:
    # Last time the scipy step response of E(s), times the jump, leaves the band.
    t_lock = lock_time(design, SPEC, frequency_step_hz=step_hz, tolerance_hz=tolerance_hz)
    num, den = error_polynomials(design, SPEC)
    t = np.linspace(0, 3 * t_lock, 60001)
    error = step_hz * _scaled_step(num, den, 2 * math.pi * 100e3, t)
    last_outside = t[np.flatnonzero(np.abs(error) > tolerance_hz)[-1]]
    assert t_lock == pytest.approx(last_outside, abs=2 * (t[1] - t[0]))


def test_lock_time_grows_with_smaller_tolerance_and_shrinks_with_bandwidth() -> None:
    wide = design_filter(SPEC, 200e3, 55, order=3)
    narrow = design_filter(SPEC, 50e3, 55, order=3)
    kwargs = {"frequency_step_hz": 10e6}
    assert lock_time(narrow, SPEC, tolerance_hz=1e3, **kwargs) > lock_time(wide, SPEC, tolerance_hz=1e3, **kwargs)
    assert lock_time(wide, SPEC, tolerance_hz=10.0, **kwargs) > lock_time(wide, SPEC, tolerance_hz=1e3, **kwargs)
    assert lock_time(wide, SPEC, frequency_step_hz=500.0, tolerance_hz=1e3) == 0.0


def test_second_order_lock_time_against_the_damped_envelope() -> None:
    # Classic underdamped-loop estimate (common practice): the error envelope decays as
    # exp(-zeta*wn*t) where -zeta*wn is the real part of the dominant complex poles.
    design = design_filter(SPEC, 100e3, 45, order=2)
    error = frequency_error_step(design, SPEC)
    complex_poles = [p for p in error.poles if abs(p.imag) > 0]
    decay = -max(p.real for p in complex_poles)
    t1 = lock_time(design, SPEC, frequency_step_hz=1e7, tolerance_hz=1e3)
    t2 = lock_time(design, SPEC, frequency_step_hz=1e7, tolerance_hz=1e1)
    # Each factor e of tolerance costs about 1/decay seconds (within one ringing period).
    period = 2 * math.pi / max(abs(p.imag) for p in complex_poles)
    assert t2 - t1 == pytest.approx(math.log(100) / decay, abs=period)


def test_margins_of_a_hand_entered_filter_are_measured_not_assumed() -> None:
    design = DESIGNS[3]
    margins = loop_margins(design, SPEC)
    num, den = open_loop_polynomials(design, SPEC)
    _, g = signal.freqs(num, den, worN=[2 * math.pi * margins.crossover_hz])
    assert abs(g[0]) == pytest.approx(1.0, rel=1e-9)
    assert margins.phase_margin_deg == pytest.approx(math.degrees(np.angle(-g[0])), abs=1e-9)


@pytest.mark.parametrize(("step", "tolerance"), [(1e6, 0.0), (float("inf"), 1.0), (1e6, -1.0)])
def test_lock_time_refuses_bad_arguments(step: float, tolerance: float) -> None:
    with pytest.raises(ClockplanError) as caught:
        lock_time(DESIGNS[0], SPEC, frequency_step_hz=step, tolerance_hz=tolerance)
    assert caught.value.hint
