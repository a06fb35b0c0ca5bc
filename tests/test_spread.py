"""Spread spectrum where the hardware makes it, and its time deviation in the jitter budget.

References outside the code under test:

- the time deviation of a triangular frequency sweep is checked against a
  numerical integration of the sweep (scipy.signal.sawtooth for the triangle,
  scipy.integrate.cumulative_trapezoid for the integral) and its harmonics
  against numpy's FFT of that integral;
- a PLL's filtering of the lines is checked with scipy.signal.freqs on the
  loop's closed-loop polynomials;
- the PCI Express allowance (down-spread to -0.5 % at 30-33 kHz on ±300 ppm)
  and 1000BASE-T's ±100 ppm without spreading come from the standards table
  (its sources are named there); the boards are invented for these tests.
"""

from __future__ import annotations

import math
from fractions import Fraction
import re

import numpy as np
import pytest
from scipy import integrate, signal

from clockplan.analysis import AnalysisOptions, analyze
from clockplan.boardfile import parse_board
from clockplan.errors import BoardError
from clockplan.jitter.chain import add_tones, log_grid, source_chain
from clockplan.jitter.profile import PhaseNoiseProfile
from clockplan.jitter.spread import (
    MAX_HARMONIC,
    SQUARE_WAVE_FACTOR,
    spread_tones,
    triangle_harmonics,
    triangle_peak_time_deviation,
    triangle_rms_time_deviation,
)

SAMPLES = 400_000  # per modulation period, for the numerical references


def _numerical_time_deviation(depth: float, rate_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """One period of x(t) = integral of the triangular fractional-frequency sweep, mean removed."""
    period = 1.0 / rate_hz
    t = np.linspace(0.0, period, SAMPLES + 1)
    y = depth / 2.0 * signal.sawtooth(2 * np.pi * rate_hz * t, width=0.5)  # -d/2..+d/2, a triangle
    x = integrate.cumulative_trapezoid(y, t, initial=0.0)[:-1]
    return t[:-1], x - x.mean()


def _fft_harmonic_rms(x: np.ndarray, count: int) -> np.ndarray:
    """RMS of harmonics 1..count of one sampled period (numpy's FFT)."""
    spectrum = np.fft.rfft(x) / x.size
    return np.sqrt(2.0) * np.abs(spectrum[1 : count + 1])


# --------------------------------------------------------------------------- closed forms


@pytest.mark.parametrize(("depth", "rate_hz"), [(0.005, 31.5e3), (0.0025, 30e3), (0.01, 33e3), (0.0005, 100e3)])
def test_triangle_time_deviation_against_numerical_integration(depth, rate_hz):
    _, x = _numerical_time_deviation(depth, rate_hz)
    assert triangle_peak_time_deviation(depth, rate_hz) == pytest.approx(x.max(), rel=1e-6)
    assert triangle_peak_time_deviation(depth, rate_hz) == pytest.approx(-x.min(), rel=1e-6)
    assert 2 * triangle_peak_time_deviation(depth, rate_hz) == pytest.approx(depth / (8 * rate_hz), rel=1e-15)
    assert triangle_rms_time_deviation(depth, rate_hz) == pytest.approx(math.sqrt(np.mean(x**2)), rel=1e-6)


def test_a_half_percent_spread_at_31_5_khz_is_nanoseconds():
    # The figure: 0.5 % at 31.5 kHz gives 9.92 ns peak, 7.25 ns RMS, 19.8 ns peak-to-peak.
    assert triangle_peak_time_deviation(0.005, 31.5e3) == pytest.approx(9.921e-9, rel=1e-4)
    assert triangle_rms_time_deviation(0.005, 31.5e3) == pytest.approx(7.245e-9, rel=1e-4)


def test_harmonics_against_the_fft_of_the_integrated_sweep():
    depth, rate = 0.005, 31.5e3
    _, x = _numerical_time_deviation(depth, rate)
    fft = _fft_harmonic_rms(x, 12)
    offsets, rms = triangle_harmonics(depth, rate, 12 * rate)
    assert offsets.tolist() == [n * rate for n in (1, 3, 5, 7, 9, 11)]
    # Odd harmonics fall as 1/n^3; the even ones are absent (the sweep is half-wave symmetric).
    np.testing.assert_allclose(rms[:-1], fft[0:10:2], rtol=1e-5)
    assert np.max(fft[1::2]) < 1e-8 * fft[0]
    # The last line kept also carries the variance of every harmonic above it.
    assert rms[-1] ** 2 == pytest.approx(np.sum(_fft_harmonic_rms(x, 4000)[10::2] ** 2), rel=1e-4)


def test_the_lines_carry_the_whole_variance_and_nothing_above_the_limit():
    depth, rate = 0.005, 31.5e3
    offsets, rms = triangle_harmonics(depth, rate, 1e12)
    assert offsets.size == (MAX_HARMONIC + 1) // 2 and offsets[-1] == MAX_HARMONIC * rate
    assert float(np.sum(rms**2)) == pytest.approx(triangle_rms_time_deviation(depth, rate) ** 2, rel=1e-12)
    # Band edges: a harmonic exactly at the limit is kept, one just above is not.
    assert triangle_harmonics(depth, rate, 3 * rate)[0].tolist() == [rate, 3 * rate]
    assert triangle_harmonics(depth, rate, 3 * rate * (1 - 1e-12))[0].tolist() == [rate]
    assert triangle_harmonics(depth, rate, rate * (1 - 1e-12))[0].size == 0


def test_the_square_wave_bound_on_other_profiles():
    # A square wave of frequency (the profile that dwells longest at its extremes) gives a triangular x(t):
    # integrate it numerically and compare with the triangle's RMS through the stated factor.
    depth, rate = 0.005, 31.5e3
    t = np.linspace(0.0, 1 / rate, SAMPLES + 1)
    y = depth / 2 * signal.square(2 * np.pi * rate * t)
    x = integrate.cumulative_trapezoid(y, t, initial=0.0)[:-1]
    x -= x.mean()
    ratio = math.sqrt(np.mean(x**2)) / triangle_rms_time_deviation(depth, rate)
    assert ratio == pytest.approx(SQUARE_WAVE_FACTOR, rel=1e-5)


def test_spread_tones_integrate_to_the_time_deviation_at_any_carrier():
    grid = log_grid(1e3, 1e9, 10)
    for carrier in (10e6, 100e6, 2.5e9):
        chain = source_chain("ref", PhaseNoiseProfile.flat(-250), carrier, grid)
        spread = add_tones(chain, "spread", *spread_tones(0.005, 31.5e3, carrier, grid[-1]))
        result = spread.jitter(1e3, 1e9)
        seconds = dict(result.contributions)["spread"]
        assert seconds == pytest.approx(triangle_rms_time_deviation(0.005, 31.5e3), rel=1e-9)


def test_a_band_edge_on_the_fundamental_counts_it():
    grid = log_grid(1e3, 1e8, 10)
    chain = source_chain("ref", PhaseNoiseProfile.flat(-250), 1e8, grid)
    spread = add_tones(chain, "spread", *spread_tones(0.005, 31.5e3, 1e8, grid[-1]))
    at_edge = dict(spread.jitter(31.5e3, 1e8).contributions)["spread"]
    above = dict(spread.jitter(31.5e3 * (1 + 1e-9), 1e8).contributions)["spread"]
    assert at_edge == pytest.approx(triangle_rms_time_deviation(0.005, 31.5e3), rel=1e-9)
    # Without the fundamental, the 3rd harmonic and up: 1/3^6 of its variance and less.
    assert above < 0.04 * at_edge


def test_bad_tones_and_figures_are_refused():
    from clockplan.errors import ClockplanError

    chain = source_chain("ref", PhaseNoiseProfile.flat(-150), 1e8, log_grid(1e3, 1e6, 5))
    with pytest.raises(ClockplanError, match="tones"):
        add_tones(chain, "x", [1e4, -1], [1e-6, 1e-6])
    with pytest.raises(ClockplanError, match="tones"):
        add_tones(chain, "x", [1e4], [float("nan")])
    with pytest.raises(ClockplanError, match="rate"):
        triangle_rms_time_deviation(0.005, 0.0)
    with pytest.raises(ClockplanError, match="depth"):
        triangle_peak_time_deviation(1.5, 31.5e3)


# --------------------------------------------------------------------------- boards

BOARD = '''
[board]
name = "spread test"
temperature = ["-40 C", "85 C"]
lifetime = "10 years"

[[reference]]
id = "ref"
frequency = "25 MHz"
kind = "xo"
tolerance = "±10 ppm"
phase_noise = [["100 Hz", -120], ["1 kHz", -140], ["10 kHz", -150], ["100 kHz", -155], ["1 MHz", -160]]

[[pll]]
id = "synth"
input = "ref"
vco = ["2.4 GHz", "3.2 GHz"]
pfd = ["1 MHz", "100 MHz"]
r = [1, 255]
n = [16, 4095]
mode = "fractional"
denominator = "2^24"
outputs.eth = { divider = [1, 256] }
outputs.pcie = { divider = [1, 256] }
outputs.dac = { divider = [1, 256] }
settings = { r = 1, n = 100, outputs = { eth = 20, pcie = 25, dac = 10 } }
loop = { bandwidth = "200 kHz", damping = 0.707 }
noise = { fom = "-229 dBc/Hz", modulator_order = 3, output_floor = "-165 dBc/Hz", vco_phase_noise = [["10 kHz", -90], ["100 kHz", -115], ["1 MHz", -138], ["10 MHz", -155]] }

[[consumer]]
id = "phy"
source = "synth.eth"
frequency = "125 MHz"
standard = "1000BASE-T"

[[consumer]]
id = "pcie"
source = "synth.pcie"
frequency = "100 MHz"
standard = "PCIe Gen3 reference"

[[consumer]]
id = "dac"
source = "synth.dac"
frequency = "250 MHz"
converter = { snr = "66 dB", f_in = "100 MHz", jitter_band = ["1 kHz", "125 MHz"] }
'''

SPREAD = 'spread = { mode = "down", depth = "0.5 %", rate = "31.5 kHz" }'
LOOP_SPREAD = BOARD.replace('loop = { bandwidth = "200 kHz", damping = 0.707 }', 'loop = { bandwidth = "200 kHz", damping = 0.707 }\n' + SPREAD)


def _alone(output: str, spread: str = SPREAD, text: str = BOARD) -> str:
    """The board with ``spread`` on one output that declares it spreads alone."""
    old = f"outputs.{output} = {{ divider = [1, 256] }}"
    return text.replace(old, f"outputs.{output} = {{ divider = [1, 256], independent_spread = true, {spread} }}")


def _audit(text: str):
    return analyze(parse_board(text, "spread.toml"), options=AnalysisOptions())


def _codes(analysis, node: str) -> set[str]:
    return {f.code for f in analysis.findings if f.node == node}


def test_an_output_spread_without_independent_spread_is_refused_with_the_fix():
    text = BOARD.replace("outputs.pcie = { divider = [1, 256] }", "outputs.pcie = { divider = [1, 256], " + SPREAD + " }")
    with pytest.raises(BoardError) as caught:
        parse_board(text, "spread.toml")
    err = caught.value
    assert err.key == "pll[0].outputs.pcie.spread" and err.file == "spread.toml" and err.line is not None
    assert "reaches every output" in err.message
    assert "spread = { ... } in its [[pll]]" in err.hint and "independent_spread = true" in err.hint


@pytest.mark.parametrize(
    ("text", "key", "words"),
    [
        (BOARD.replace("loop = {", 'spread = { mode = "down", depth = "0.5 %" }\nloop = {'), "pll[0].spread", "rate"),
        (BOARD.replace("outputs.eth = { divider = [1, 256] }", 'outputs.eth = { divider = [1, 256], independent_spread = "yes" }'),
         "pll[0].outputs.eth.independent_spread", "true or false"),
        (LOOP_SPREAD.replace('mode = "down"', 'mode = "sideways"'), "pll[0].spread", "spread mode"),
    ],
)
def test_bad_spread_keys_are_located(text, key, words):
    with pytest.raises(BoardError) as caught:
        parse_board(text, "spread.toml")
    assert caught.value.key == key and words in str(caught.value)


CASCADE = '''
[[pll]]
id = "cleaner"
input = "synth.eth"
vco = ["2.4 GHz", "3.2 GHz"]
pfd = ["1 MHz", "200 MHz"]
r = [1, 255]
n = [4, 4095]
settings = { r = 1, n = 20, outputs = { out = 25 } }
outputs.out = { divider = [1, 256] }
loop = { bandwidth = "1 kHz", damping = 0.707 }
noise = { fom = "-229 dBc/Hz" }

[[consumer]]
id = "far"
source = "cleaner.out"
frequency = "100 MHz"
ppm = "±1000 ppm"
jitter = "10 ps"
jitter_band = ["10 kHz", "20 MHz"]
'''


def test_two_spreads_on_one_clock_path_are_refused():
    text = LOOP_SPREAD + CASCADE.replace('loop = { bandwidth = "1 kHz"', SPREAD + '\nloop = { bandwidth = "1 kHz"')
    with pytest.raises(BoardError) as caught:
        parse_board(text, "spread.toml")
    assert caught.value.key == "pll[1].spread" and "cleaner" in caught.value.message and "synth" in caught.value.message


def test_a_loop_spread_reaches_every_output_and_fails_a_consumer_whose_standard_allows_none():
    analysis = _audit(LOOP_SPREAD)
    phy = analysis.consumer("phy").accuracy
    # 1000BASE-T: ±100 ppm, no spreading (standards table). The -0.5 % sweep counts as error.
    assert phy.spread is not None and phy.result.checked == "with spread" and not phy.passes
    finding = next(f for f in analysis.findings if f.code == "spread-not-allowed" and f.node == "phy")
    assert finding.severity.value == "error" and "made by synth" in finding.message and "pll[0].spread" in finding.message
    # PCI Express allows this spread: its carrier is checked, and no spread finding.
    pcie = analysis.consumer("pcie").accuracy
    assert pcie.result.checked == "carrier" and pcie.passes and "spread-not-allowed" not in _codes(analysis, "pcie")


def test_an_output_that_spreads_alone_leaves_the_other_outputs_clean():
    analysis = _audit(_alone("pcie"))
    assert analysis.consumer("phy").accuracy.spread is None and analysis.consumer("phy").accuracy.passes
    assert "spread-not-allowed" not in _codes(analysis, "phy")
    assert analysis.consumer("pcie").accuracy.spread is not None
    assert not any(name.endswith("spread") for name, _ in analysis.consumer("phy").jitter.contributions())


def test_the_spread_not_the_zero_synthesis_error_is_named_as_what_breaks_a_budget():
    # An inline ±100 ppm budget (no standard, no allowance) on the exact 125 MHz output.
    analysis = _audit(LOOP_SPREAD.replace('standard = "1000BASE-T"', 'ppm = "±100 ppm"'))
    message = next(f.message for f in analysis.findings if f.code == "ppm-budget" and f.node == "phy")
    assert "the down-spread 0.5 % at 31.5 kHz made by synth breaks it, not the synthesis error (0 ppm)" in message
    assert "turn the spread of synth off" in message and "its synthesis error alone" not in message
    assert "spread-not-allowed" not in _codes(analysis, "phy")  # a budget of the board's own: no standard to cite


def test_a_synthesis_error_that_also_breaks_the_budget_is_named_with_the_spread():
    text = LOOP_SPREAD.replace('standard = "1000BASE-T"', 'ppm = "±100 ppm"\nmax_synthesis_error = "±200 ppm"')
    text = text.replace('frequency = "125 MHz"', 'frequency = "124.9875 MHz"')  # 125 / 124.9875 - 1 = +100.01 ppm
    analysis = _audit(text)
    message = next(f.message for f in analysis.findings if f.code == "ppm-budget" and f.node == "phy")
    assert "its synthesis error (+100 ppm) and the down-spread 0.5 % at 31.5 kHz made by synth leave no margin" in message
    assert "re-plan the chain" in message


def test_a_cascaded_pll_passes_the_spread_in_ppm_and_filters_it_in_jitter():
    analysis = _audit(LOOP_SPREAD + CASCADE)
    far = analysis.consumer("far")
    # ppm: the whole sweep is passed on (conservative for a narrow loop) and counts as error.
    assert far.accuracy.spread is not None and far.accuracy.result.checked == "with spread"
    # jitter: the 1 kHz loop filters each harmonic by |H(n f_m)|^2 (scipy.signal.freqs on its polynomials).
    loop = analysis.board.part("cleaner").loop
    _, x = _numerical_time_deviation(0.005, 31.5e3)
    count = int(20e6 // 31.5e3)
    fft = _fft_harmonic_rms(x, count)
    harmonics = np.arange(1, count + 1) * 31.5e3
    _, response = signal.freqs(loop.closed_num, loop.closed_den, worN=2 * np.pi * harmonics)
    in_band = harmonics >= 10e3
    expected = math.sqrt(float(np.sum((fft**2 * np.abs(response) ** 2)[in_band])))
    seconds = dict(far.jitter.contributions())["synth spread"]
    assert seconds == pytest.approx(expected, rel=1e-3)
    # The narrow loop takes it down by about 30 dB, yet it still dwarfs a 10 ps budget.
    assert seconds < 0.05 * triangle_rms_time_deviation(0.005, 31.5e3) and far.jitter.passes is False


def test_a_spread_feeding_a_converter_clock_counts_its_time_deviation():
    clean = _audit(BOARD).consumer("dac").jitter
    assert clean.passes  # the same board without the spread: inside the converter's jitter budget
    analysis = _audit(_alone("dac"))
    dac = analysis.consumer("dac").jitter
    spread = dict(dac.contributions())["synth.dac spread"]
    # Band 1 kHz..125 MHz holds every harmonic up to the 3967th, and the lines above it fold into the last kept.
    _, x = _numerical_time_deviation(0.005, 31.5e3)
    assert spread == pytest.approx(math.sqrt(np.mean(x**2)), rel=1e-6)
    assert dac.rms_seconds == pytest.approx(math.hypot(spread, clean.rms_seconds), rel=1e-6)
    assert dac.passes is False and dac.dominant == "synth.dac spread"
    finding = next(f for f in analysis.findings if f.code == "jitter-budget" and f.node == "dac")
    assert "spread-spectrum time deviation" in finding.message and "does not spread" in finding.message
    assert any("counts: 7.2" in note for note in dac.notes)


def test_a_spread_inside_the_consumer_allowance_is_left_out_of_its_jitter():
    clean = _audit(BOARD).consumer("pcie").jitter
    within = _audit(_alone("pcie")).consumer("pcie").jitter
    assert within.rms_seconds == pytest.approx(clean.rms_seconds, rel=1e-12) and within.passes
    assert any("inside this consumer's spread allowance" in note and "not counted" in note for note in within.notes)
    outside = _audit(_alone("pcie", SPREAD.replace('"down"', '"center"'))).consumer("pcie").jitter
    assert outside.passes is False and any(note.startswith("The center-spread") for note in outside.notes)


def test_a_spreading_fractional_loop_runs_its_modulator_at_a_whole_n():
    assert "synth modulator" not in _audit(BOARD).consumer("phy").jitter.chain.names
    assert "synth modulator" in _audit(LOOP_SPREAD).consumer("phy").jitter.chain.names


def test_a_spread_that_alone_breaks_a_budget_is_reported_when_the_rest_is_not_computed():
    no_noise = re.sub(r"phase_noise = \[.*\]\n", "", LOOP_SPREAD, count=1)
    analysis = _audit(no_noise + CASCADE)
    dac = next(f for f in analysis.findings if f.code == "jitter-spread" and f.node == "dac")
    assert dac.severity.value == "error" and "made by synth" in dac.message and "7.2" in dac.message
    # Through the 1 kHz loop of the cascade, computed like the full chain does.
    far = next(f for f in analysis.findings if f.code == "jitter-spread" and f.node == "far")
    assert "10 ps" in far.message
    # PCI Express's allowance covers it: no claim; and a generous budget is not broken by it.
    assert "jitter-spread" not in _codes(analysis, "pcie")
    roomy = _audit(no_noise.replace('jitter_band = ["1 kHz", "125 MHz"] }', 'jitter_band = ["1 kHz", "125 MHz"] }\njitter = "10 ns"')
                   .replace('converter = { snr = "66 dB", f_in = "100 MHz", jitter_band = ["1 kHz", "125 MHz"] }',
                            'jitter_band = ["1 kHz", "125 MHz"]'))
    assert "jitter-spread" not in _codes(roomy, "dac")


def test_no_claim_through_a_loop_whose_response_is_unknown():
    no_noise = re.sub(r"phase_noise = \[.*\]\n", "", LOOP_SPREAD, count=1)
    text = no_noise + CASCADE.replace('loop = { bandwidth = "1 kHz", damping = 0.707 }\n', "")
    analysis = _audit(text)
    assert "jitter-spread" not in _codes(analysis, "far")
    assert "jitter-spread" in _codes(analysis, "dac")


def test_the_demo_gateway_spreads_only_its_pcie_output():
    from clockplan.boardfile import load_board

    analysis = analyze(load_board("boards/industrial-gateway.toml"))
    assert analysis.consumer("pcie_slot").accuracy.spread is not None
    assert all(analysis.consumer(c).accuracy.spread is None for c in ("phy0", "usb_phy", "ddr_ref", "uart_clk"))
    assert not any(f.code == "spread-not-allowed" for f in analysis.findings)


def test_the_json_names_where_the_spread_is_made():
    from clockplan.report.json import analysis_document

    doc = analysis_document(_audit(LOOP_SPREAD))
    phy = next(c for c in doc["consumers"] if c["id"] == "phy")
    assert phy["ppm_spread"]["source"] == "synth" and phy["ppm_spread"]["key"] == "pll[0].spread"
    assert phy["ppm_spread"]["within_allowance"] is False


def _through(text: str):
    return next(f for f in _audit(text).findings if f.code == "spread-through-pll" and f.node == "far")


def test_a_spread_through_a_pll_says_its_sweep_is_passed_whole_and_warns_of_peaking():
    narrow = _through(LOOP_SPREAD + CASCADE)
    assert narrow.severity.value == "info" and "through cleaner" in narrow.message and "|H|" not in narrow.message
    wide_text = LOOP_SPREAD + CASCADE.replace('bandwidth = "1 kHz"', 'bandwidth = "300 kHz"')
    wide = _through(wide_text)
    # The loop's own |H| at 31.5 kHz, from scipy.signal.freqs on its closed-loop polynomials.
    loop = _audit(wide_text).board.part("cleaner").loop
    _, response = signal.freqs(loop.closed_num, loop.closed_den, worN=[2 * np.pi * 31.5e3])
    assert abs(response[0]) > 1 and wide.severity.value == "warning"
    assert f"cleaner |H| = {abs(response[0]):.3f}" in wide.message and "not added" in wide.message
    unknown = _through(LOOP_SPREAD + CASCADE.replace('loop = { bandwidth = "1 kHz", damping = 0.707 }\n', ""))
    assert unknown.severity.value == "warning" and "not known" in unknown.message
    assert not any(f.code == "spread-through-pll" for f in _audit(LOOP_SPREAD).findings)


def test_the_explain_waterfall_names_the_spreading_part():
    rows = dict(_audit(LOOP_SPREAD).consumer("phy").accuracy.contributions())
    label = next(name for name in rows if name.startswith("spread sweep"))
    assert label.startswith("spread sweep made by synth (") and rows[label] == -Fraction(5, 1000)


def test_a_zero_depth_spread_adds_no_lines():
    analysis = _audit(LOOP_SPREAD.replace('depth = "0.5 %"', 'depth = "0 %"'))
    assert "synth spread" not in analysis.consumer("dac").jitter.chain.names


def test_a_standard_whose_spread_the_board_forbids_fails_the_inherited_spread():
    # PCI Express allows the spread, but the consumer writes spread = false over its standard.
    text = LOOP_SPREAD.replace('standard = "PCIe Gen3 reference"', 'standard = "PCIe Gen3 reference"\nspread = false')
    finding = next(f for f in _audit(text).findings if f.code == "spread-not-allowed" and f.node == "pcie")
    assert "made by synth" in finding.message


@pytest.mark.parametrize(
    ("sweep", "mode", "depth_ppm"),
    [
        (("-5000 ppm", "0 ppm"), "down", 5000),     # PCI Express-style down-spread
        (("0 ppm", "3000 ppm"), "up", 3000),
        (("-2500 ppm", "2500 ppm"), "center", 5000),
        (("-1000 ppm", "3000 ppm"), "center", 2000),  # asymmetric: the largest centre-spread inside it
    ],
)
def test_spread_allowance_reads_a_standard_sweep(sweep, mode, depth_ppm):
    from clockplan.spreading import spread_allowance
    from clockplan.standards.resolve import resolve_budget

    budget = resolve_budget(None, {"ppm": "±100 ppm", "spread": f"{sweep[0]}..{sweep[1]}"}, "consumer[0]")
    allowed = spread_allowance(budget)
    assert (allowed.mode, allowed.max_depth) == (mode, Fraction(depth_ppm, 10**6))


def test_no_allowance_without_a_sweep():
    from clockplan.spreading import spread_allowance
    from clockplan.standards.resolve import resolve_budget

    assert spread_allowance(None) is None
    assert spread_allowance(resolve_budget(None, {"ppm": "±100 ppm"}, "consumer[0]")) is None
    assert spread_allowance(resolve_budget(None, {"ppm": "±100 ppm", "spread": "0..0 ppm"}, "consumer[0]")) is None


def test_an_output_spreading_alone_on_a_spreading_loop_is_refused_and_two_outputs_alone_are_not():
    with pytest.raises(BoardError) as caught:
        parse_board(_alone("pcie", text=LOOP_SPREAD), "spread.toml")
    assert caught.value.key == "pll[0].outputs.pcie.spread" and caught.value.line is not None
    both = _audit(_alone("dac", text=_alone("pcie")))
    assert both.consumer("phy").accuracy.spread is None
    assert {s for s in ("synth.pcie spread", "synth.dac spread") if s in both.consumer("dac").jitter.chain.names} == {
        "synth.dac spread"
    }
