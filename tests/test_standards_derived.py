"""Budgets derived from the design, against worked numbers and independent references."""

from __future__ import annotations

import math
from fractions import Fraction as F

import numpy as np
import pytest

from clockplan.errors import ClockplanError
from clockplan.standards.derived import (
    SECONDS_PER_DAY,
    can_oscillator_tolerance,
    can_tolerance_conditions,
    converter_jitter_for_snr,
    ideal_adc_snr_db,
    rtc_drift_for_ppm,
    rtc_ppm_for_drift,
    snr_for_jitter,
    uart_baud_error,
    uart_best_divider,
    uart_frame_bits,
    uart_receiver_window,
    uart_tolerance,
)

PPM = F(1, 10**6)

# --------------------------------------------------------------------------- CAN


# Source of the CAN conditions and the worked example: F. Hartwich and A. Bassemir, "The Configuration
# of the CAN Bit Timing", 6th International CAN Conference (iCC), 1999, with the bit-time segments
# of ISO 11898-1 (Prop_Seg, Phase_Seg1, Phase_Seg2, SJW in time quanta).


def test_can_worked_example_is_1_58_percent():
    # Hartwich and Bassemir (1999): Prop_Seg = 1, Phase_Seg1 = Phase_Seg2 = SJW = 4 gives an
    # oscillator tolerance of 1.58 %.
    tolerance = can_oscillator_tolerance(1, 4, 4, 4)
    assert tolerance == F(4, 2 * (13 * 10 - 4))
    assert math.floor(tolerance * 10000) / 100 == 1.58


def test_can_conditions_follow_the_two_published_formulas():
    # Hartwich and Bassemir (1999), conditions I and II: min(PS1, PS2) / (2 (13 T - PS2)) and
    # SJW / (20 T), T the bit time in quanta.
    first, second = can_tolerance_conditions(prop_seg=5, phase_seg1=6, phase_seg2=4, sjw=3)
    bit_time = 1 + 5 + 6 + 4
    assert first == F(4, 2 * (13 * bit_time - 4))
    assert second == F(3, 20 * bit_time)
    assert can_oscillator_tolerance(5, 6, 4, 3) == min(first, second)


def test_can_short_jump_width_is_the_limit():
    # With SJW = 1 over 10 quanta, condition II (1/200 = 0.5 %) binds, not condition I.
    assert can_oscillator_tolerance(1, 4, 4, 1) == F(1, 200)


@pytest.mark.parametrize(
    "args",
    [(1, 2, 2, 3), (0, 4, 4, 4), (1, 4, 4, 4, 0), (1.5, 4, 4, 4), (True, 4, 4, 4)],
)
def test_can_rejects_impossible_timings(args):
    with pytest.raises(ClockplanError):
        can_oscillator_tolerance(*args)


# --------------------------------------------------------------------------- UART


@pytest.mark.parametrize(("frame", "bits"), [("8N1", 10), ("7E1", 10), ("8E2", 12), ("8N1.5", 11), ("9O1", 12)])
def test_uart_frame_bits(frame, bits):
    assert uart_frame_bits(frame) == bits


@pytest.mark.parametrize("frame", ["8X1", "10N1", "8N3", "", 8])
def test_uart_frame_rejects_nonsense(frame):
    with pytest.raises(ClockplanError):
        uart_frame_bits(frame)


# The receiver's sampling window, checked against a simulation of the receiver instead of a printed
# table. Model (common practice for asynchronous serial receivers): the receiver's bit time is 1; the
# incoming bits last 1/rate each, the start edge at time 0; the receiver samples bit i of the frame
# (i = 0 the start bit, i = frame_bits - 1 the last stop bit) at instants from i + early to i + late,
# where early and late are sample ticks / oversampling. A rate is accepted when every sample instant
# of every bit falls inside that incoming bit. The simulation tries every bit and both ends of the
# window, bisecting on exact rates; the closed form of uart_receiver_window uses the last bit only.


def _simulated_window(frame_bits, early, late, steps=24):
    """Slowest and fastest accepted rate, each bracketed by bisection to 2**-steps of the rate."""

    def accepted(rate):
        for bit in range(frame_bits):
            start, end = F(bit) / rate, F(bit + 1) / rate
            if not all(start <= bit + at < end for at in (early, late)):
                return False
        return True

    def edge(inside, outside):
        assert accepted(inside) and not accepted(outside)
        for _ in range(steps):
            middle = (inside + outside) / 2
            inside, outside = (middle, outside) if accepted(middle) else (inside, middle)
        return inside, outside

    return edge(F(1), F(4, 5)), edge(F(1), F(5, 4))


@pytest.mark.parametrize("oversampling", [16, 8])
@pytest.mark.parametrize("data_bits", [5, 6, 7, 8, 9])
@pytest.mark.parametrize("mode", ["mid-bit", "three-sample"])
def test_uart_window_matches_a_simulated_receiver(oversampling, data_bits, mode):
    # mid-bit: one sample at oversampling/2 ticks after an edge seen up to one tick late (the default);
    # three-sample: samples one tick either side of mid-bit, (o/2 - 1 .. o/2 + 1) ticks.
    frame_bits = data_bits + 2  # start + data + one stop bit
    ticks = None if mode == "mid-bit" else (oversampling // 2 - 1, oversampling // 2 + 1)
    early, late = (F(oversampling // 2, oversampling), F(oversampling // 2 + 1, oversampling)) if ticks is None \
        else (F(ticks[0], oversampling), F(ticks[1], oversampling))
    low, high = uart_receiver_window(frame_bits, oversampling, sample_ticks=ticks)
    (low_in, low_out), (high_in, high_out) = _simulated_window(frame_bits, early, late)
    assert low_out < low <= low_in  # the exact edges lie inside the simulated brackets
    assert high_in <= high < high_out
    # Each end's allowance splits the window evenly: the rate ratio (1 + e) / (1 - e) stays inside it.
    e = uart_tolerance(frame_bits, oversampling, sample_ticks=ticks)
    assert low <= (1 - e) / (1 + e) and (1 + e) / (1 - e) <= high
    assert low == (1 - e) / (1 + e) or (1 + e) / (1 - e) == high


def test_uart_8n1_16x_mid_bit_allowance():
    # 8N1, 16x, mid-bit sample after a one-tick edge delay: the stop bit's sample sits 9.5..9.5625 bits in.
    assert uart_receiver_window(10, 16) == (F(9) / F(19, 2), F(10) / F(153, 16))
    assert uart_tolerance(10, 16) == F(7, 313)  # ≈ 2.24 % each end (common practice quotes about ±2 % per end)


def test_uart_ideal_receiver_tends_to_half_a_bit_over_the_frame():
    # The limit with unbounded oversampling: half a bit of slip over the 9.5 bits to the stop bit's
    # middle (±5.26 % total for 8N1), the model's own limit (common practice).
    low, high = uart_receiver_window(10, 2**20)
    assert float(low) == pytest.approx(9 / 9.5, abs=1e-5)
    assert float(high) == pytest.approx(10 / 9.5, abs=1e-5)


def test_uart_longer_frames_tolerate_less():
    allowances = [uart_tolerance(bits, 16) for bits in range(7, 14)]
    assert allowances == sorted(allowances, reverse=True)


@pytest.mark.parametrize(
    ("clock", "divider", "baud", "percent"),
    [
        (16_000_000, 9, 115200, -3.5),  # 16 MHz / (16 x 9) = 111111 baud: -3.5 %
        (16_000_000, 104, 9600, 0.2),   # 16 MHz / (16 x 104) = 9615.4 baud: +0.2 %
        (8_000_000, 4, 115200, 8.5),    # 8 MHz / (16 x 4) = 125000 baud: +8.5 %
    ],
)
def test_uart_baud_error_of_whole_dividers(clock, divider, baud, percent):
    error = uart_baud_error(F(clock), divider, 16, baud)
    assert error == F(clock, 16 * divider * baud) - 1
    assert round(float(error) * 100, 1) == percent


def test_uart_baud_error_is_exactly_zero_for_baud_crystals():
    for clock in (1_843_200, 7_372_800, 18_432_000):
        divider = uart_best_divider(F(clock), 16, 115200)
        error = uart_baud_error(F(clock), divider, 16, 115200)
        assert error == 0 and isinstance(error, F)


def test_uart_fractional_divider_shrinks_the_error():
    whole = uart_baud_error(F(16_000_000), uart_best_divider(F(16_000_000), 16, 115200), 16, 115200)
    fine = uart_baud_error(F(16_000_000), uart_best_divider(F(16_000_000), 16, 115200, 4), 16, 115200)
    assert abs(fine) < abs(whole) and abs(fine) < F(1, 100)


@pytest.mark.parametrize("bad", [dict(clock_hz=0), dict(divider=-1), dict(oversampling=0), dict(baud="fast")])
def test_uart_baud_error_rejects_bad_input(bad):
    args = dict(clock_hz=F(16_000_000), divider=9, oversampling=16, baud=115200) | bad
    with pytest.raises(ClockplanError):
        uart_baud_error(**args)


# --------------------------------------------------------------------------- RTC


def test_rtc_one_ppm_is_86_4_ms_per_day():
    # 1e-6 x 86400 s = 0.0864 s, exactly.
    assert rtc_drift_for_ppm(PPM, SECONDS_PER_DAY) == F(864, 10000)
    assert rtc_ppm_for_drift(F(864, 10000), SECONDS_PER_DAY) == PPM


def test_rtc_twenty_ppm_crystal_drifts_about_52_s_a_month():
    # Common practice: a 20 ppm watch crystal loses or gains ~1.7 s a day, ~52 s in a 30-day month.
    assert rtc_drift_for_ppm(20 * PPM, SECONDS_PER_DAY) == F(1728, 1000)
    assert float(rtc_drift_for_ppm(20 * PPM, 30 * SECONDS_PER_DAY)) == pytest.approx(51.84)


def test_rtc_rejects_negative_drift_and_zero_period():
    with pytest.raises(ClockplanError):
        rtc_ppm_for_drift(F(-1), SECONDS_PER_DAY)
    with pytest.raises(ClockplanError):
        rtc_ppm_for_drift(F(1), 0)


# --------------------------------------------------------------------------- converters


def test_converter_snr_of_1_ps_at_100_mhz():
    # Jitter-limited SNR = -20 log10(2 pi f t_j) (M. Shinagawa, Y. Akazawa, T. Wakimoto, "Jitter analysis
    # of high-speed sampling systems", IEEE J. Solid-State Circuits 25(1), 1990; from memory): 64.0 dB.
    assert snr_for_jitter(1e-12, 100e6) == pytest.approx(-20 * math.log10(2 * math.pi * 1e-4))
    assert round(snr_for_jitter(1e-12, 100e6), 1) == 64.0


def test_converter_jitter_round_trips():
    for snr, f_in in ((74.0, 100e6), (120.0, 20e3), (60.0, 1e9)):
        assert snr_for_jitter(converter_jitter_for_snr(snr, f_in), f_in) == pytest.approx(snr, abs=1e-9)


def test_converter_formula_agrees_with_a_sampling_simulation():
    # Independent check: sample a full-scale sine at Gaussian-jittered instants and measure the SNR.
    rng = np.random.default_rng(7)
    f_in, sigma = 100e6, 1e-12
    t = np.arange(200_000) / 245.76e6
    jittered = np.sin(2 * np.pi * f_in * (t + rng.normal(0.0, sigma, t.size)))
    error = jittered - np.sin(2 * np.pi * f_in * t)
    measured = 10 * np.log10(0.5 / np.mean(error**2))
    assert measured == pytest.approx(snr_for_jitter(sigma, f_in), abs=0.1)


def test_ideal_adc_snr_is_6_02_n_plus_1_76():
    # Ideal N-bit quantizer with a full-scale sine: SNR = 6.02 N + 1.76 dB (W. R. Bennett, "Spectra of
    # quantized signals", Bell System Technical Journal 27, 1948; the sine form is common practice).
    for bits in (8, 12, 16, 24):
        assert ideal_adc_snr_db(bits) == pytest.approx(6.02 * bits + 1.76, abs=0.02)


def test_converter_rejects_zero_frequency():
    with pytest.raises(ClockplanError):
        converter_jitter_for_snr(70.0, 0.0)
    with pytest.raises(ClockplanError):
        snr_for_jitter(0.0, 1e6)
