"""Jitter-limited SNR of data converters, both ways."""

from __future__ import annotations

import math

import pytest

from clockplan.errors import ClockplanError
from clockplan.jitter.converter import (
    combine_snr_db,
    jitter_limited_snr_db,
    max_jitter_for_snr,
    total_jitter,
)

# SNR = -20 log10(2 pi f_in sigma_t) (M. Shinagawa, Y. Akazawa, T. Wakimoto, "Jitter analysis of
# high-speed sampling systems", IEEE J. Solid-State Circuits 25(1), 1990; from memory).
PUBLISHED_SNR = [
    # Source: RF glossary entry "Aperture Jitter", reference values for sigma_t = 100 fs,
    # printed to the nearest dB.
    (100e6, 100e-15, 84),
    (1e9, 100e-15, 64),
    (5e9, 100e-15, 50),
    (10e9, 100e-15, 44),
]


@pytest.mark.parametrize(("f_in", "jitter", "snr_printed"), PUBLISHED_SNR)
def test_published_jitter_limited_snr(f_in, jitter, snr_printed):
    assert round(jitter_limited_snr_db(f_in, jitter)) == snr_printed


@pytest.mark.parametrize(("f_in", "jitter", "snr_printed"), PUBLISHED_SNR)
def test_max_jitter_inverts_snr(f_in, jitter, snr_printed):
    snr = jitter_limited_snr_db(f_in, jitter)
    assert max_jitter_for_snr(f_in, snr) == pytest.approx(jitter, rel=1e-12)
    assert jitter_limited_snr_db(f_in, max_jitter_for_snr(f_in, snr_printed)) == pytest.approx(snr_printed)


def test_doubling_input_frequency_costs_6_db():
    # Common practice: jitter-limited SNR falls 20 log10(2) = 6.02 dB per octave of input frequency.
    drop = jitter_limited_snr_db(100e6, 200e-15) - jitter_limited_snr_db(200e6, 200e-15)
    assert drop == pytest.approx(20 * math.log10(2), rel=1e-12)


def test_aperture_jitter_adds_root_sum_square():
    # Independent jitter sources add in root-sum-square (variances of independent errors add: elementary
    # probability; the converter's aperture jitter is such a source, common practice).
    with_aperture = jitter_limited_snr_db(70e6, 300e-15, aperture_jitter_s=400e-15)
    assert with_aperture == pytest.approx(jitter_limited_snr_db(70e6, 500e-15), rel=1e-12)
    allowed = max_jitter_for_snr(70e6, with_aperture, aperture_jitter_s=400e-15)
    assert allowed == pytest.approx(300e-15, rel=1e-9)
    assert total_jitter(300e-15, 400e-15) == pytest.approx(500e-15, rel=1e-15)


def test_combining_snrs_adds_noise_powers():
    assert combine_snr_db(70.0, 70.0) == pytest.approx(70 - 10 * math.log10(2))
    assert combine_snr_db(80.0) == pytest.approx(80.0)


@pytest.mark.parametrize(
    ("call", "key"),
    [
        (lambda: jitter_limited_snr_db(0.0, 1e-12), "input_hz"),
        (lambda: jitter_limited_snr_db(1e6, 0.0), "clock_jitter"),
        (lambda: jitter_limited_snr_db(1e6, -1e-12), "jitter"),
        (lambda: max_jitter_for_snr(1e6, float("nan")), "snr_db"),
        (lambda: max_jitter_for_snr(1e9, 80.0, aperture_jitter_s=1e-12), "snr_db"),
        (lambda: combine_snr_db(), "snr_db"),
    ],
)
def test_bad_converter_input(call, key):
    with pytest.raises(ClockplanError) as caught:
        call()
    assert caught.value.key == key and caught.value.hint
