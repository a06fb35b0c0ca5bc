"""Defaults that must not make a verdict look better: the assumed loop, the converter band, typical figures.

Each regression board below passed before on an optimistic default and now gets the
verdict the independent figure gives. References outside the code under test:

- scipy.signal.freqs evaluates the loop's open- and closed-loop responses;
  scipy.optimize.brentq finds crossings; scipy.integrate.quad integrates densities;
- the phase margin of ``G = K (1 + s Tz) / (s**2 (1 + s T1) (1 + s T3))`` is
  ``atan(w Tz) - atan(w T1) - atan(w T3)`` at the crossover (the standard
  charge-pump loop-filter result, e.g. Banerjee, *PLL Performance, Simulation, and
  Design*, the loop-filter design chapters);
- the jitter-limited SNR of a sampling converter, ``SNR = -20 log10(2 pi f_in sigma_t)``
  (W. Kester (ed.), *Data Conversion Handbook*, Newnes 2005, the chapter on
  sampling-clock jitter), with the clock's jitter counted
  up to half the sample rate;
- flat noise L over a band integrates to ``sigma_phi**2 = 2 * 10**(L/10) * (f2 - f1)``
  (definition of L(f), IEEE Std 1139);
- a crystal's load resonance in the Butterworth-Van Dyke model,
  ``f_L / f_s = sqrt(1 + C1 / (C0 + CL))`` (IEC 60444 family of crystal measurements);
- a third-order MASH modulator's noise ``(2 pi)**2 / (12 f_PFD) (2 sin(pi f / f_PFD))**4``
  (the textbook delta-sigma result, from memory).

The boards are invented test data.
"""

from __future__ import annotations

import json
import math
import re
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import load_board, parse_board
from clockplan.errors import ClockplanError
from clockplan.jitter.chain import modulator_density
from clockplan.jitter.loop import passive_filter_loop, phase_margin_from_damping, second_order_loop
from clockplan.jitter.stage import CONVERTER_BAND_LOW_HZ, band_plan
from clockplan.jitter.tree import (
    TYPICAL_DIVIDER_FLOOR_DBC_HZ,
    TYPICAL_FLICKER_FOM_DBC_HZ,
    TYPICAL_OUTPUT_FLOOR_DBC_HZ,
)
from clockplan.parts import Consumer
from clockplan.ppm.crystal_load import TYPICAL_STRAY_F, TYPICAL_STRAY_TOLERANCE_F
from clockplan.report.json import analysis_document
from clockplan.standards.resolve import resolve_budget

signal = pytest.importorskip("scipy.signal")
optimize = pytest.importorskip("scipy.optimize")
integrate = pytest.importorskip("scipy.integrate")

RECEIVER = "boards/sampling-receiver.toml"


def _flat_jitter(level_dbc_hz: float, carrier_hz: float, band: tuple[float, float]) -> float:
    return math.sqrt(2 * 10 ** (level_dbc_hz / 10) * (band[1] - band[0])) / (2 * math.pi * carrier_hz)


def _codes(analysis, code):
    return [(f.severity.value, f.node) for f in analysis.findings if f.code == code]


# --------------------------------------------------------------------------- 14.6 the assumed loop


def _open_loop_db_and_phase(loop, f_hz):
    _, response = signal.freqs(loop.open_num, loop.open_den, worN=[2 * math.pi * f_hz])
    return 20 * math.log10(abs(response[0])), math.degrees(np.angle(-response[0]))


@pytest.mark.parametrize("margin", [35.0, 50.0, 60.0, 65.53, 75.0])
@pytest.mark.parametrize("bandwidth", [1e3, 100e3, 5e6])
def test_passive_loop_meets_its_crossover_and_margin(bandwidth, margin):
    loop = passive_filter_loop(bandwidth, phase_margin_deg=margin, bandwidth_is="crossover")
    gain_db, phase_margin = _open_loop_db_and_phase(loop, bandwidth)
    assert gain_db == pytest.approx(0.0, abs=1e-9) and phase_margin == pytest.approx(margin, abs=1e-7)
    # The same margin from the time constants read off the polynomials (closed form above).
    tz = loop.open_num[0] / loop.open_num[1]
    poles = np.sort(-1 / np.roots(loop.open_den[:-2]).real)  # T3 < T1
    w = 2 * math.pi * bandwidth
    closed = math.degrees(math.atan(w * tz) - math.atan(w * poles[1]) - math.atan(w * poles[0]))
    assert closed == pytest.approx(margin, abs=1e-7)
    assert poles[0] / poles[1] == pytest.approx(0.5, rel=1e-9)  # DEFAULT_POLE_RATIO
    # scipy: every closed-loop pole in the left half-plane.
    closed_poles = signal.tf2zpk(loop.closed_num, loop.closed_den)[1]
    assert np.all(closed_poles.real < 0)


@pytest.mark.parametrize("bandwidth", [20e3, 100e3, 400e3])
def test_passive_loop_bandwidth_is_the_closed_loop_3db_point(bandwidth):
    loop = passive_filter_loop(bandwidth, damping=0.707)
    magnitude = lambda f: abs(signal.freqs(loop.closed_num, loop.closed_den, worN=[2 * math.pi * f])[1][0])  # noqa: E731
    assert 20 * math.log10(magnitude(bandwidth)) == pytest.approx(-10 * math.log10(2), abs=1e-8)
    # It is the highest -3 dB crossing: |H| stays below it from there on (scipy on a dense grid).
    _, far = signal.freqs(loop.closed_num, loop.closed_den, worN=2 * math.pi * np.geomspace(bandwidth * 1.001, bandwidth * 1e4, 2000))
    assert np.all(np.abs(far) < 1 / math.sqrt(2))
    # A damping is read as the phase margin of the second-order loop with that damping.
    same = passive_filter_loop(bandwidth, phase_margin_deg=phase_margin_from_damping(0.707))
    np.testing.assert_allclose(same.closed_den, loop.closed_den, rtol=1e-12)
    # Far outside, |H| falls 60 dB/decade (G ~ 1/s**3); the second-order loop's only 20.
    w = 2 * math.pi * np.array([1e3, 1e4]) * bandwidth
    slope = np.diff(20 * np.log10(np.abs(signal.freqs(loop.closed_num, loop.closed_den, worN=w)[1])))[0]
    ideal = second_order_loop(bandwidth, damping=0.707)
    slope2 = np.diff(20 * np.log10(np.abs(signal.freqs(ideal.closed_num, ideal.closed_den, worN=w)[1])))[0]
    assert slope == pytest.approx(-60, abs=0.1) and slope2 == pytest.approx(-20, abs=0.1)


@pytest.mark.parametrize(
    ("kwargs", "key"),
    [
        ({}, "loop"),
        ({"damping": 0.7, "phase_margin_deg": 60}, "loop"),
        ({"phase_margin_deg": 90}, "phase_margin"),
        ({"phase_margin_deg": 0}, "phase_margin"),
        ({"phase_margin_deg": float("nan")}, "phase_margin"),
        ({"damping": 0}, "damping"),
        ({"phase_margin_deg": 60, "bandwidth_is": "unity"}, "bandwidth_is"),
    ],
)
def test_passive_loop_refuses_bad_input(kwargs, key):
    with pytest.raises(ClockplanError) as caught:
        passive_filter_loop(100e3, **kwargs)
    assert caught.value.key == key and caught.value.hint


def test_passive_loop_refuses_a_bad_bandwidth():
    with pytest.raises(ClockplanError) as caught:
        passive_filter_loop(-1.0, phase_margin_deg=60)
    assert caught.value.key == "bandwidth"


def _receiver_with_loop(model: str | None) -> str:
    # The demo's fractional-N synthesizer with its loop given by crossover and margin only.
    text = Path(RECEIVER).read_text()
    block = re.search(r"\[pll\.loop_filter\].*?\n\n", text, re.S).group(0)
    chosen = f', model = "{model}"' if model else ""
    loop = f'loop = {{ bandwidth = "50 kHz", phase_margin = 55, bandwidth_is = "crossover"{chosen} }}\n'
    return text.replace(block, "\n").replace('noise = { fom = "-227', loop + 'noise = { fom = "-227')


def test_modulator_noise_through_the_default_loop_is_near_the_designed_filter():
    designed = analyze(load_board(RECEIVER))
    assumed = analyze(parse_board(_receiver_with_loop(None)))
    idealised = analyze(parse_board(_receiver_with_loop("second-order")))

    def modulator(analysis):
        return dict(analysis.consumer("adc_clk").jitter.contributions())["conv_synth modulator"]

    # The designed filter (snapped parts) and the default assumed filter (same crossover,
    # margin and pole ratio) agree closely; the idealised second-order loop, which the
    # bandwidth alone used to mean, overstates it by orders of magnitude.
    assert modulator(assumed) == pytest.approx(modulator(designed), rel=0.25)
    assert modulator(idealised) > 100 * modulator(assumed)
    # The figure is the shaped modulator density integrated independently (scipy.quad, scipy.signal).
    loop = parse_board(_receiver_with_loop(None)).part("conv_synth").loop
    point = assumed.frequencies.plls["conv_synth"]
    f_pfd, f_vco = float(point.pfd_hz), float(point.vco_hz)

    def density(log_f):
        f = math.exp(log_f)
        h = signal.freqs(loop.closed_num, loop.closed_den, worN=[2 * math.pi * f])[1][0]
        shaped = (2 * math.pi) ** 2 / (12 * f_pfd) * (2 * math.sin(math.pi * f / f_pfd)) ** 4
        return shaped * abs(h) ** 2 * f

    band = assumed.consumer("adc_clk").jitter.band_hz
    edges = np.log(np.geomspace(band[0], band[1], 40))
    power = sum(integrate.quad(density, a, b, epsabs=0, epsrel=1e-10)[0] for a, b in zip(edges[:-1], edges[1:]))
    assert modulator(assumed) == pytest.approx(math.sqrt(2 * power) / (2 * math.pi * f_vco), rel=1e-3)
    # Same density function as the code's (a cross-check of the formula written above).
    assert modulator_density(np.array([1e6]), f_pfd, 3)[0] == pytest.approx(
        (2 * math.pi) ** 2 / (12 * f_pfd) * (2 * math.sin(math.pi * 1e6 / f_pfd)) ** 4, rel=1e-12
    )


def test_the_loop_model_is_a_finding_and_in_the_json():
    assumed = analyze(parse_board(_receiver_with_loop(None)))
    assert _codes(assumed, "loop-model") == [("warning", "conv_synth")]
    message = next(f.message for f in assumed.findings if f.code == "loop-model")
    assert "assumed" in message and "third-order passive-filter loop" in message and "loop_filter" in message
    assert "55.0° phase margin" in message and "adc_clk" in message
    stated = analyze(parse_board(_receiver_with_loop("third-order")))
    assert _codes(stated, "loop-model") == [("info", "conv_synth")]
    assert _codes(analyze(parse_board(_receiver_with_loop("second-order"))), "loop-model") == [("info", "conv_synth")]
    designed = analyze(load_board(RECEIVER))
    assert _codes(designed, "loop-model") == []  # the filter's own parts: nothing assumed
    document = json.loads(json.dumps(analysis_document(assumed), allow_nan=False))
    plls = {p["id"]: p for p in document["plls"]}
    assert plls["conv_synth"]["loop_model"] == "third-order (assumed)"
    assert "third-order passive-filter loop designed for 50 kHz (open-loop crossover)" in plls["conv_synth"]["loop"]
    receiver = {p["id"]: p for p in analysis_document(designed)["plls"]}
    assert receiver["conv_synth"]["loop_model"] == "loop_filter" and receiver["cleaner"]["loop_model"] == "third-order (assumed)"


def test_integer_n_loop_raises_no_loop_finding():
    # The modulator is what the extra poles decide; an integer-N plan has none.
    text = _receiver_with_loop(None).replace('n = "29.4912"', "n = 30")
    analysis = analyze(parse_board(text))
    assert analysis.frequencies.plls["conv_synth"].setting.n == 30
    assert "conv_synth modulator" not in analysis.consumer("adc_clk").jitter.chain.names
    assert _codes(analysis, "loop-model") == []


# --------------------------------------------------------------------------- 22.2 converter band

CONVERTER_BOARD = """
[board]
name = "converter band"
temperature = ["25 C", "25 C"]
lifetime = "10 years"

[[reference]]
id = "clk"
frequency = "245.76 MHz"
phase_noise = [["10 Hz", -150], ["1 GHz", -150]]

[[consumer]]
id = "adc"
source = "clk"
frequency = "245.76 MHz"
converter = {{ snr = "75 dB", f_in = "100 MHz"{band} }}
{extra}
"""


def _converter(band: str = "", extra: str = "") -> str:
    return CONVERTER_BOARD.format(band=band, extra=extra)


def test_converter_clock_is_judged_up_to_half_the_sample_rate():
    analysis = analyze(parse_board(_converter()))
    jitter = analysis.consumer("adc").jitter
    band = (CONVERTER_BAND_LOW_HZ, 245.76e6 / 2)
    assert jitter.band_hz == band and jitter.band_source == "converter"
    expected = _flat_jitter(-150, 245.76e6, band)
    assert jitter.rms_seconds == pytest.approx(expected, rel=1e-6)
    assert expected == pytest.approx(321e-15, abs=0.5e-15)
    # Kester's handbook: 75 dB at 100 MHz allows 10**(-75/20) / (2 pi 100 MHz) = 283 fs.
    budget = 10 ** (-75 / 20) / (2 * math.pi * 100e6)
    assert jitter.budget_seconds == pytest.approx(budget, rel=1e-12)
    # Over 12 kHz..20 MHz (the old default) the same clock shows 130 fs and passed;
    # over the converter's band it reaches 321 fs: the SNR is 73.9 dB, 1.1 dB short of 75.
    old_default = _flat_jitter(-150, 245.76e6, (12e3, 20e6))
    assert old_default == pytest.approx(129.5e-15, abs=0.5e-15) and old_default < budget
    assert -20 * math.log10(2 * math.pi * 100e6 * jitter.rms_seconds) == pytest.approx(73.9, abs=0.05)
    assert jitter.passes is False and _codes(analysis, "jitter-budget") == [("error", "adc")]
    assert any("half the sample rate" in note for note in jitter.notes)
    record = analysis_document(analysis)["consumers"][0]
    assert record["jitter"]["band_source"] == "converter" and record["jitter_band_hz"] == [100.0, 122.88e6]


def test_a_converter_band_given_by_the_board_is_kept():
    own = analyze(parse_board(_converter(band=', jitter_band = ["1 kHz", "10 MHz"]'))).consumer("adc").jitter
    assert own.band_hz == (1e3, 10e6) and own.band_source == "board" and own.passes is True
    top = analyze(parse_board(_converter(extra='jitter_band = ["10 kHz", "1 MHz"]'))).consumer("adc").jitter
    assert top.band_hz == (10e3, 1e6) and top.band_source == "board"


def test_a_standards_band_gives_way_to_the_converters():
    # PCIe's 10 kHz..50 MHz belongs to PCIe's own limit, not to the converter's SNR.
    analysis = analyze(parse_board(_converter(extra='standard = "pcie-gen3"')))
    jitter = analysis.consumer("adc").jitter
    assert jitter.band_source == "converter" and jitter.band_hz == (CONVERTER_BAND_LOW_HZ, 122.88e6)
    assert "jitter_band" not in analysis.board.part("adc").budget.overridden


@pytest.mark.parametrize(("clock_hz", "expected"), [(150, None), (200, None), (202, (100.0, 101.0))])
def test_converter_band_needs_a_clock_above_twice_its_low_edge(clock_hz, expected):
    budget = resolve_budget(None, {"converter": {"snr": "60 dB", "f_in": "10 Hz"}}, "consumer[0]")
    plan = band_plan(Consumer("c", "src", Fraction(clock_hz), budget=budget), Fraction(clock_hz))
    assert (plan.band_hz if plan is not None else None) == expected


def test_non_converter_clocks_keep_the_default_band():
    plan = band_plan(Consumer("c", "src", Fraction(245_760_000)), Fraction(245_760_000))
    assert plan.band_hz == (12e3, 20e6) and plan.source == "default"


# --------------------------------------------------------------------------- 22.3 typical figures

CHAIN = """
[board]
name = "typical figures"
temperature = ["25 C", "25 C"]
lifetime = "10 years"

[[reference]]
id = "ref"
frequency = "10 MHz"
phase_noise = [["1 Hz", -200], ["1 GHz", -200]]

[[pll]]
id = "pll_a"
input = "ref"
vco = ["500 MHz", "2 GHz"]
pfd = ["1 MHz", "20 MHz"]
n = [8, 1000]
outputs.out = {{ divider = [1, 64] }}
settings = {{ r = 1, n = 100, outputs = {{ out = 10 }} }}
loop = {{ bandwidth = "100 kHz", damping = 0.707 }}
noise = {{ {noise} }}

[[divider]]
id = "div"
input = "pll_a.out"
ratio = [1, 64]
settings = {{ ratio = 4 }}
{divider}

[[consumer]]
id = "load"
source = "div"
frequency = "25 MHz"
jitter = "{budget}"
jitter_band = ["12 kHz", "5 MHz"]

[[consumer]]
id = "free"
source = "pll_a.out"
frequency = "100 MHz"
"""

QUIET = '"-300 dBc/Hz"'


def _chain(noise: str, divider: str = f"additive_noise = {QUIET}", budget: str = "10 ps") -> str:
    return CHAIN.format(noise=noise, divider=divider, budget=budget)


def test_output_floor_left_out_is_typical_not_zero():
    analysis = analyze(parse_board(_chain(f'fom = "-300 dBc/Hz", flicker_fom = {QUIET}', budget="170 fs")))
    jitter = analysis.consumer("load").jitter
    floor = dict(jitter.contributions())["pll_a.out output floor"]
    # The flat floor at the 100 MHz output, then /4: the same time jitter at 25 MHz.
    assert floor == pytest.approx(_flat_jitter(TYPICAL_OUTPUT_FLOOR_DBC_HZ - 12.0412, 25e6, (12e3, 5e6)), rel=1e-3)
    assert floor == pytest.approx(_flat_jitter(-150, 100e6, (12e3, 5e6)), rel=1e-3)
    # 159 fs against 170 fs: it passes, and says what it assumed.
    assert jitter.passes is True
    assert _codes(analysis, "noise-assumed") == [("warning", "pll_a")]
    message = next(f.message for f in analysis.findings if f.code == "noise-assumed")
    assert "-150 dBc/Hz" in message and "common practice" in message and "load" in message
    tight = analyze(parse_board(_chain(f'fom = "-300 dBc/Hz", flicker_fom = {QUIET}', budget="150 fs")))
    assert tight.consumer("load").jitter.passes is False  # an optimistic PASS before (about 1 fs without the floor)
    given = analyze(parse_board(_chain(f'fom = "-300 dBc/Hz", flicker_fom = {QUIET}, output_floor = {QUIET}', budget="150 fs")))
    assert given.consumer("load").jitter.passes is True and _codes(given, "noise-assumed") == []


def test_flicker_figure_left_out_is_typical_when_the_fom_is_given():
    analysis = analyze(parse_board(_chain(f'fom = "-300 dBc/Hz", output_floor = {QUIET}')))
    jitter = analysis.consumer("free").jitter
    density = jitter.chain.contributor("pll_a floor")
    offsets = jitter.chain.offsets_hz
    i = int(np.argmin(np.abs(np.log(offsets / 10.0))))
    # At 10 Hz, deep in band (|H| = 1 within 1e-6 dB): flicker + 20 log10(f_VCO) - 10 log10(f), then /10.
    _, h = signal.freqs(analysis.board.part("pll_a").loop.closed_num, analysis.board.part("pll_a").loop.closed_den, worN=[2 * math.pi * offsets[i]])
    expected = TYPICAL_FLICKER_FOM_DBC_HZ + 20 * math.log10(1e9) - 10 * math.log10(offsets[i]) - 20 + 20 * math.log10(abs(h[0]))
    assert 10 * math.log10(density[i]) == pytest.approx(expected, abs=1e-6)
    assert ("warning", "pll_a") in _codes(analysis, "noise-assumed")
    # No fom, no in-band floor at all: the flicker figure alone is not assumed (the PLL's noise is "not counted").
    bare = analyze(parse_board(_chain(f"output_floor = {QUIET}")))
    assert "pll_a floor" not in bare.consumer("load").jitter.chain.names
    assert ("warning", "pll_a") in _codes(bare, "jitter-data")


def test_divider_noise_left_out_is_typical_not_zero():
    analysis = analyze(parse_board(_chain(f'fom = "-300 dBc/Hz", flicker_fom = {QUIET}, output_floor = {QUIET}', divider="")))
    jitter = analysis.consumer("load").jitter
    assert dict(jitter.contributions())["div floor"] == pytest.approx(
        _flat_jitter(TYPICAL_DIVIDER_FLOOR_DBC_HZ, 25e6, (12e3, 5e6)), rel=1e-3
    )
    assert _codes(analysis, "noise-assumed") == [("warning", "div")]


def test_assumptions_on_consumers_without_a_budget_stay_notes():
    text = _chain(f'fom = "-300 dBc/Hz", flicker_fom = {QUIET}', divider="").replace('jitter = "10 ps"\n', "")
    analysis = analyze(parse_board(text))
    assert _codes(analysis, "noise-assumed") == []
    assert any("output_floor" in note for note in analysis.consumer("free").jitter.notes)


def test_stated_figures_raise_nothing():
    text = _chain(f'fom = "-300 dBc/Hz", flicker_fom = {QUIET}, output_floor = {QUIET}, vco_phase_noise = [["1 kHz", -200]]')
    analysis = analyze(parse_board(text))
    assert not [f for f in analysis.findings if f.code in ("noise-assumed", "jitter-data", "loop-model")]


# --------------------------------------------------------------------------- 22.3 crystal stray

CRYSTAL = """
[board]
name = "crystal stray"
temperature = ["25 C", "25 C"]
lifetime = "10 years"

[[reference]]
id = "xtal"
frequency = "25 MHz"
kind = "crystal"
tolerance = "±10 ppm"
load = {{ specified = "10 pF", c1 = "5 fF", c0 = "2 pF", capacitors = ["20 pF", "20 pF"]{stray} }}

[[consumer]]
id = "phy"
source = "xtal"
frequency = "25 MHz"
ppm = "±50 ppm"
"""


def _bvd_pulling(c1, c0, specified, actual):
    # Butterworth-Van Dyke: f_L / f_s = sqrt(1 + C1 / (C0 + CL)); the pulling is the ratio of two loads minus 1.
    return math.sqrt(1 + c1 / (c0 + actual)) / math.sqrt(1 + c1 / (c0 + specified)) - 1


def test_crystal_without_stray_assumes_a_few_picofarads():
    analysis = analyze(parse_board(CRYSTAL.format(stray="")))
    accuracy = analysis.consumer("phy").accuracy
    # 20 pF in series with 20 pF is the specified 10 pF: 0 ppm at 0 pF stray (the old verdict: ±10 ppm, PASS).
    highest = 10e-12 + float(TYPICAL_STRAY_F + TYPICAL_STRAY_TOLERANCE_F)
    expected = -10e-6 + _bvd_pulling(5e-15, 2e-12, 10e-12, highest)
    assert expected * 1e6 == pytest.approx(-71.25, abs=0.01)
    assert float(accuracy.result.worst_case) == pytest.approx(expected, rel=1e-9)
    assert _codes(analysis, "ppm-budget") == [("error", "phy")]
    assert _codes(analysis, "stray-assumed") == [("warning", "xtal")]
    message = next(f.message for f in analysis.findings if f.code == "stray-assumed")
    assert "3 pF ± 2 pF" in message and "common practice" in message


def test_crystal_with_stray_given_uses_it_and_says_nothing():
    analysis = analyze(parse_board(CRYSTAL.format(stray=', stray = "0 pF"')))
    assert abs(float(analysis.consumer("phy").accuracy.result.worst_case)) == pytest.approx(10e-6, rel=1e-9)
    assert _codes(analysis, "stray-assumed") == [] and _codes(analysis, "ppm-budget") == []
    tolerance_only = parse_board(CRYSTAL.format(stray=', stray_tolerance = "0.5 pF"'))
    load = tolerance_only.part("xtal").oscillator.crystal_load
    assert (load.stray, load.stray_tolerance, load.stray_assumed) == (TYPICAL_STRAY_F, Fraction(1, 2 * 10**12), True)


# --------------------------------------------------------------------------- the docs table


def test_defaults_table_in_the_docs_matches_the_code():
    text = Path("docs/board-format.md").read_text(encoding="utf-8")
    section = text.split("## Defaults clockplan assumes", 1)[1].split("\n## ", 1)[0]
    rows = {line.split("|")[1].strip(): line for line in section.splitlines() if line.startswith("| `")}
    checks = {
        "`noise.output_floor` (PLL)": (f"{TYPICAL_OUTPUT_FLOOR_DBC_HZ:g} dBc/Hz", "noise-assumed"),
        "`noise.flicker_fom` (PLL with `fom`)": (f"{TYPICAL_FLICKER_FOM_DBC_HZ:g} dBc/Hz", "noise-assumed"),
        "`additive_noise` (divider)": (f"{TYPICAL_DIVIDER_FLOOR_DBC_HZ:g} dBc/Hz", "noise-assumed"),
        "`load.stray` (passive crystal)": (f"{float(TYPICAL_STRAY_F) * 1e12:g} pF ± {float(TYPICAL_STRAY_TOLERANCE_F) * 1e12:g} pF", "stray-assumed"),
        "`converter.jitter_band` (consumer)": (f"{CONVERTER_BAND_LOW_HZ:g} Hz", None),
        "`loop.model` (PLL `loop` with a bandwidth)": ("third-order", "loop-model"),
    }
    for key, (value, code) in checks.items():
        assert key in rows, key
        assert value in rows[key], (key, rows[key])
        if code:
            assert f"`{code}`" in rows[key], key


# --------------------------------------------------------------------------- more branches


def test_passive_loop_takes_its_pole_ratio():
    loop = passive_filter_loop(100e3, phase_margin_deg=55, bandwidth_is="crossover", pole_ratio=0.25)
    poles = np.sort(-1 / np.roots(loop.open_den[:-2]).real)
    assert poles[0] / poles[1] == pytest.approx(0.25, rel=1e-9)
    gain_db, phase_margin = _open_loop_db_and_phase(loop, 100e3)
    assert gain_db == pytest.approx(0.0, abs=1e-9) and phase_margin == pytest.approx(55.0, abs=1e-7)


def test_an_assumed_loop_without_a_modulator_is_a_note_only():
    text = _receiver_with_loop(None).replace('n = "29.4912"', "n = 30")
    jitter = analyze(parse_board(text)).consumer("adc_clk").jitter
    assert any(note.startswith("the loop of conv_synth is assumed") for note in jitter.notes)
    assert any(note.startswith("the loop of cleaner is assumed") for note in jitter.notes)


def test_loop_model_in_the_json_for_every_kind_of_loop():
    text = Path(RECEIVER).read_text()
    built = text.replace('phase_margin = 55\n', 'phase_margin = 55\nr1 = "910 Ω"\nc1 = "5.6 nF"\nc2 = "270 pF"\nr3 = "6.2 kΩ"\nc3 = "39 pF"\n', 1)
    assert built != text
    bare = text.replace('loop = { bandwidth = "20 kHz", damping = 0.707 }\n', "")
    assert bare != text
    plls = {p["id"]: p for p in analysis_document(analyze(parse_board(built)))["plls"]}
    assert plls["conv_synth"]["loop"] == "loop_filter: as built order-3 passive filter (its own transfer function)"
    plls = {p["id"]: p for p in analysis_document(analyze(parse_board(bare)))["plls"]}
    assert plls["cleaner"]["loop_model"] is None and plls["cleaner"]["loop"] is None
    polynomial = text.replace(
        'loop = { bandwidth = "20 kHz", damping = 0.707 }',
        "loop = { open_loop_numerator = [1.2e5, 2.0e10], open_loop_denominator = [1, 0, 0] }",
    )
    plls = {p["id"]: p for p in analysis_document(analyze(parse_board(polynomial)))["plls"]}
    assert plls["cleaner"]["loop_model"] == plls["cleaner"]["loop"] == "open-loop polynomials"


def test_stray_assumption_without_a_budget_stays_silent():
    analysis = analyze(parse_board(CRYSTAL.format(stray="").replace('ppm = "±50 ppm"\n', "")))
    assert _codes(analysis, "stray-assumed") == []


def test_uncounted_noise_without_a_budget_stays_a_note():
    text = _chain(f"output_floor = {QUIET}").replace('jitter = "10 ps"\n', "")
    analysis = analyze(parse_board(text))
    assert _codes(analysis, "jitter-data") == []
    assert any("is not counted" in note for note in analysis.consumer("load").jitter.notes)
    budgeted = analyze(parse_board(_chain(f"output_floor = {QUIET}")))
    assert _codes(budgeted, "jitter-data") == [("warning", "pll_a")]
