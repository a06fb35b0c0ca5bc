"""Noise through the chain: dividers, PLLs, buffers, budgets and the dominant contributor."""

from __future__ import annotations

import math

import numpy as np
import pytest

from clockplan.errors import ClockplanError
from clockplan.jitter import rms_jitter
from clockplan.jitter.chain import (
    add_buffer,
    combine,
    divide,
    log_grid,
    modulator_density,
    pll,
    pll_floor_dbc_hz,
    source_chain,
)
from clockplan.jitter.loop import second_order_loop
from clockplan.jitter.profile import PhaseNoiseProfile, Spur

signal = pytest.importorskip("scipy.signal")

# Invented demo-style profiles (not from any part): a quiet reference and a VCO.
REFERENCE = PhaseNoiseProfile.from_points(
    [(10, -95), (100, -125), (1e3, -145), (1e4, -155), (1e5, -162), (1e6, -165)],
    spurs=[Spur(250e3, -100)],
)
VCO = PhaseNoiseProfile.from_points([(1e3, -55), (1e4, -85), (1e5, -112), (1e6, -135), (1e7, -152), (1e8, -158)])
GRID = log_grid(1.0, 1e9, 80)


def _scipy_power(num, den, f_hz):
    _, h = signal.freqs(num, den, worN=2 * np.pi * f_hz)
    return np.abs(h) ** 2


def test_source_chain_matches_exact_profile_integration():
    # The sampled grid (80 points/decade, power law between samples) must agree with the
    # exact profile integration to well within 0.1 %.
    chain = source_chain("reference", REFERENCE, 25e6, GRID)
    for band in [(12e3, 20e6), (10, 1e3), (1.875e6, 20e6), (100, 1e6)]:
        result = chain.jitter(*band)
        assert result.rms_seconds == pytest.approx(rms_jitter(REFERENCE, 25e6, *band), rel=1e-3)


@pytest.mark.parametrize("ratio", [2, 5, 64, 125])
def test_divider_keeps_time_jitter_and_lowers_noise_20_log_d(ratio):
    # Common practice: an ideal divider by D lowers L(f) by 20 log10 D; the time jitter is unchanged.
    chain = source_chain("reference", REFERENCE, 500e6, GRID)
    out = divide(chain, ratio)
    np.testing.assert_allclose(out.total_dbc(), chain.total_dbc() - 20 * math.log10(ratio), atol=1e-9)
    assert out.jitter(12e3, 20e6).rms_seconds == pytest.approx(chain.jitter(12e3, 20e6).rms_seconds, rel=1e-12)
    assert out.jitter(12e3, 20e6).rms_phase_rad == pytest.approx(
        chain.jitter(12e3, 20e6).rms_phase_rad / ratio, rel=1e-12
    )


def test_divider_output_stops_at_its_additive_floor():
    chain = source_chain("reference", PhaseNoiseProfile.flat(-140), 1e9, GRID)
    out = divide(chain, 1000, floor_dbc_hz=-155, name="div_a")
    expected = 10 * math.log10(10 ** ((-140 - 60) / 10) + 10 ** (-155 / 10))
    np.testing.assert_allclose(out.total_dbc(), expected, atol=1e-9)
    result = out.jitter(12e3, 20e6)
    assert result.dominant == "div_a floor"
    assert set(out.names) == {"reference", "div_a floor"}


def test_pll_shapes_reference_vco_and_floor_like_scipy_responses():
    # Reference: |H|^2 and |1-H|^2 from scipy.signal.freqs of the loop's polynomials;
    # in-band floor FOM + 10 log10 f_PFD + 20 log10 N (common practice).
    loop = second_order_loop(100e3, damping=0.8)
    m, f_ref = 100, 25e6
    ref = source_chain("reference", REFERENCE, f_ref, GRID)
    out = pll(ref, m, loop, name="pll_a", vco=VCO, fom_dbc_hz=-227.0)
    lowpass = _scipy_power(loop.closed_num, loop.closed_den, GRID)
    highpass = _scipy_power(loop.error_num, loop.error_den, GRID)
    floor = 10 ** ((-227 + 10 * math.log10(f_ref) + 20 * math.log10(m)) / 10)
    np.testing.assert_allclose(out.contributor("reference"), REFERENCE.density_at(GRID) * m**2 * lowpass, rtol=1e-9)
    np.testing.assert_allclose(out.contributor("pll_a VCO"), VCO.density_at(GRID) * highpass, rtol=1e-9)
    np.testing.assert_allclose(out.contributor("pll_a floor"), floor * lowpass, rtol=1e-9)
    assert out.carrier_hz == f_ref * m
    # The reference spur at 250 kHz rides through x m^2 |H(250 kHz)|^2.
    spur_power = 10 ** (-100 / 10) * m**2 * _scipy_power(loop.closed_num, loop.closed_den, np.array([250e3]))[0]
    assert out.spur_power[0] == pytest.approx(spur_power, rel=1e-9)


def test_pll_in_band_is_reference_plus_20_log_m_and_out_of_band_is_vco():
    loop = second_order_loop(20e3, damping=1.0)
    m = 40
    out = pll(source_chain("reference", REFERENCE, 25e6, GRID), m, loop, vco=VCO)
    inside = GRID < 20.0
    outside = GRID > 50e6
    np.testing.assert_allclose(
        out.total_dbc()[inside], REFERENCE.dbc_at(GRID[inside]) + 20 * math.log10(m), atol=0.01
    )
    np.testing.assert_allclose(out.total_dbc()[outside], VCO.dbc_at(GRID[outside]), atol=0.01)


def test_pll_floor_formula_hand_values():
    # FOM -226 dBc/Hz, f_PFD 100 MHz (+80 dB), N 50 (+33.98 dB) -> -112.02 dBc/Hz.
    assert round(pll_floor_dbc_hz(-226, 100e6, 50), 2) == -112.02


def test_pll_flicker_term_falls_10_db_per_decade():
    # Normalised flicker: L = FOM_flicker + 20 log10 f_VCO - 10 log10 f (common practice).
    loop = second_order_loop(1e8, damping=1.0)  # wide loop: |H| ~ 1 at the offsets checked
    ref = source_chain("reference", PhaseNoiseProfile.flat(-250), 100e6, GRID)
    out = pll(ref, 30, loop, flicker_fom_dbc_hz=-270.0)
    floor = 10 * np.log10(out.contributor("pll floor"))
    for f in (10.0, 100.0, 1000.0):
        i = int(np.argmin(abs(GRID - f)))
        assert floor[i] == pytest.approx(-270 + 20 * math.log10(3e9) - 10 * math.log10(GRID[i]), abs=1e-6)


def _mash_111(fraction_numerator, bits, steps):
    """Simulate a MASH 1-1-1 modulator; return its integer output sequence."""
    modulus = 1 << bits
    acc1 = acc2 = acc3 = 0
    c2_prev = c3_prev = c3_prev2 = 0
    out = np.empty(steps)
    for n in range(steps):
        acc1 += fraction_numerator
        c1, acc1 = divmod(acc1, modulus)
        acc2 += acc1
        c2, acc2 = divmod(acc2, modulus)
        acc3 += acc2
        c3, acc3 = divmod(acc3, modulus)
        out[n] = c1 + (c2 - c2_prev) + (c3 - 2 * c3_prev + c3_prev2)
        c2_prev, c3_prev2, c3_prev = c2, c3_prev, c3
    return out


def test_modulator_noise_matches_a_simulated_mash_111():
    # Reference: a bit-true MASH 1-1-1 simulation; the output-phase error (the running sum
    # of the division-ratio error, in VCO cycles x 2 pi) has the variance and the spectrum
    # the closed form of a third-order MASH modulator predicts (|1 - z^-1|^(2m) shaping of white
    # quantization noise, common practice; checked with scipy.signal.welch).
    bits, steps, f_pfd = 20, 1 << 16, 1.0
    numerator = 349_525  # ~1/3 with a long period in 20 bits
    y = _mash_111(numerator, bits, steps)
    phase = 2 * math.pi * np.cumsum(y - numerator / (1 << bits))
    phase = phase[1000:] - phase[1000:].mean()
    from scipy.integrate import quad

    predicted_variance = 2 * quad(lambda f: modulator_density(np.array([f]), f_pfd, 3)[0], 0, f_pfd / 2)[0]
    assert predicted_variance == pytest.approx((2 * math.pi) ** 2 / 12 * 6, rel=1e-9)  # sum of (1,-2,1)^2 = 6
    assert phase.var() == pytest.approx(predicted_variance, rel=0.05)
    f, psd_one_sided = signal.welch(phase, fs=f_pfd, nperseg=4096)
    band = (f > 0.05) & (f < 0.45)
    predicted = 2 * modulator_density(f[band], f_pfd, 3)
    assert np.median(psd_one_sided[band] / predicted) == pytest.approx(1.0, rel=0.1)


def test_fractional_n_modulator_noise_is_low_passed():
    loop = second_order_loop(50e3, damping=0.707)
    ref = source_chain("reference", PhaseNoiseProfile.flat(-250), 50e6, GRID)
    out = pll(ref, 60.25, loop, modulator_order=3)
    expected = modulator_density(GRID, 50e6, 3) * _scipy_power(loop.closed_num, loop.closed_den, GRID)
    np.testing.assert_allclose(out.contributor("pll modulator"), expected, rtol=1e-9)


def test_buffer_additive_jitter_adds_root_sum_square():
    chain = source_chain("reference", REFERENCE, 156.25e6, GRID)
    before = chain.jitter(12e3, 20e6).rms_seconds
    out = add_buffer(chain, 90e-15, name="fanout_1")
    after = out.jitter(12e3, 20e6)
    assert after.rms_seconds == pytest.approx(math.hypot(before, 90e-15), rel=1e-9)
    assert dict(after.contributions)["fanout_1"] == pytest.approx(90e-15, rel=1e-9)
    # Divided afterwards, the buffer's time jitter stays 90 fs (time is preserved by division).
    assert dict(divide(out, 4).jitter(12e3, 20e6).contributions)["fanout_1"] == pytest.approx(90e-15, rel=1e-9)


def test_budget_margin_and_dominant_contributor():
    loop = second_order_loop(200e3, damping=0.707)
    ref = source_chain("reference", REFERENCE, 25e6, GRID)
    out = add_buffer(
        pll(ref, 100, loop, name="pll_a", vco=VCO, fom_dbc_hz=-226.0), 50e-15, name="fanout"
    )
    result = out.jitter(12e3, 20e6, budget_seconds=1e-12)
    seconds = dict(result.contributions)
    assert result.dominant == max(seconds, key=seconds.get)
    assert result.rms_seconds == pytest.approx(math.sqrt(sum(s * s for s in seconds.values())), rel=1e-12)
    assert result.margin_seconds == pytest.approx(1e-12 - result.rms_seconds)
    assert sum(result.shares().values()) == pytest.approx(1.0)
    tight = out.jitter(12e3, 20e6, budget_seconds=result.rms_seconds / 2)
    assert tight.passes is False and tight.margin_seconds < 0


def test_noisy_vco_with_narrow_loop_is_named_dominant():
    loop = second_order_loop(2e3, damping=0.707)
    out = pll(source_chain("reference", REFERENCE, 25e6, GRID), 100, loop, name="pll_b", vco=VCO)
    assert out.jitter(12e3, 20e6).dominant == "pll_b VCO"


def test_combine_adds_power_and_checks_compatibility():
    a = source_chain("a", PhaseNoiseProfile.flat(-150), 100e6, GRID)
    b = source_chain("b", PhaseNoiseProfile.flat(-150), 100e6, GRID)
    both = combine(a, b)
    assert both.jitter(12e3, 20e6).rms_seconds == pytest.approx(
        math.sqrt(2) * a.jitter(12e3, 20e6).rms_seconds, rel=1e-12
    )
    with pytest.raises(ClockplanError, match="grid"):
        combine(a, source_chain("c", PhaseNoiseProfile.flat(-150), 100e6, log_grid(1, 1e8)))
    with pytest.raises(ClockplanError, match="Hz"):
        combine(a, divide(b, 2))


@pytest.mark.parametrize(
    ("action", "key"),
    [
        (lambda c: c.jitter(0.1, 1e6), "band"),
        (lambda c: c.jitter(1e3, 1e10), "band"),
        (lambda c: divide(c, 0), "divider ratio"),
        (lambda c: pll(c, -3, second_order_loop(1e4, damping=1)), "PLL multiplication"),
        (lambda c: pll(c, 4, second_order_loop(1e4, damping=1), modulator_order=2.5), "modulator_order"),
        (lambda c: add_buffer(c, -1e-15), "additive_jitter"),
        (lambda c: c.contributor("nope"), "name"),
    ],
)
def test_chain_errors_carry_key_and_hint(action, key):
    chain = source_chain("reference", REFERENCE, 25e6, GRID)
    with pytest.raises(ClockplanError) as caught:
        action(chain)
    assert caught.value.key == key and caught.value.hint


def test_result_renders_for_the_reports():
    import json

    chain = add_buffer(source_chain("reference", REFERENCE, 156.25e6, GRID), 90e-15, name="fanout_1")
    result = chain.jitter(12e3, 20e6, budget_seconds=300e-15)
    doc = json.loads(json.dumps(result.json_fields(), allow_nan=False))["jitter"]
    assert doc["rms_s"] == result.rms_seconds and doc["band_hz"] == [12e3, 20e6]
    assert doc["dominant"] == result.dominant and doc["passes"] is result.passes
    assert sum(c["share"] for c in doc["contributors"]) == pytest.approx(1.0)
    assert "planning estimate" in doc["note"]
    cells = result.table_cells()
    assert cells["dominant"] == result.dominant and cells["jitter"].endswith("fs")
