"""The jitter stage on whole boards: chains, cascades, budgets, findings, the JSON keys.

Reference values are derived by hand from closed forms outside the code under test:

- an ideal divider by D lowers L(f) by 20 log10 D and keeps the time jitter; an
  ideal multiplication by N raises it by 20 log10 N (the 20 log N rule, common practice);
- flat noise L over a band integrates to sigma_phi**2 = 2 * 10**(L/10) * (f2 - f1)
  (definition of L(f), IEEE Std 1139), sigma_t = sigma_phi / (2 pi f0);
- independent noises add in power, so independent RMS jitters add in
  root-sum-square (common practice);
- a PLL's in-band floor from its normalised figure of merit is
  FOM + 10 log10 f_PFD + 20 log10 N (as synthesizer datasheets define it; common practice);
- the closed-loop 3 dB bandwidth is where |H|**2 = 1/2 (definition);
- a converter's jitter-limited SNR is -20 log10(2 pi f_in sigma_t) (Shinagawa et al.,
  tutorial on converter clock jitter);
- scipy.integrate.quad and scipy.stats as reference integrator and quantiles.

The boards below are invented test data.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import numpy as np
import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import load_board, parse_board
from clockplan.errors import BoardError
from clockplan.jitter.consumer import ConsumerJitter
from clockplan.jitter.stage import DEFAULT_BAND_HZ, band_plan
from clockplan.report.json import analysis_document

RECEIVER = "boards/sampling-receiver.toml"

# A reference, one PLL, one output, a plain divider, a buffer, two consumers.
CHAIN_BOARD = """
[board]
name = "jitter test board"
temperature = ["25 C", "25 C"]

[[reference]]
id = "ref"
frequency = "10 MHz"
phase_noise = [["1 Hz", {ref_level}]]

[[pll]]
id = "pll_a"
input = "ref"
vco = ["500 MHz", "2 GHz"]
pfd = ["1 MHz", "20 MHz"]
n = [8, 1000]
outputs.out = {{ divider = [1, 64] }}
settings = {{ r = 1, n = 100, outputs = {{ out = 10 }} }}
loop = {{ bandwidth = "100 kHz", damping = 0.707 }}
{pll_noise}

[[divider]]
id = "div"
input = "pll_a.out"
ratio = [1, 64]
settings = {{ ratio = {ratio} }}
{divider_noise}

[[buffer]]
id = "fan"
input = "div"
outputs = 2
{buffer_noise}

[[consumer]]
id = "load"
source = "fan"
frequency = "{load_frequency}"
jitter = "{budget}"
jitter_band = ["12 kHz", "20 MHz"]

[[consumer]]
id = "direct"
source = "pll_a.out"
frequency = "100 MHz"
"""


def _chain_text(**changes) -> str:
    fields = {
        "ref_level": -150,
        "pll_noise": "",
        "ratio": 4,
        "divider_noise": "",
        "buffer_noise": "",
        "budget": "10 ps",
    }
    fields.update(changes)
    fields["load_frequency"] = f"{100 / fields['ratio']} MHz"
    return CHAIN_BOARD.format(**fields)


def _board(**changes):
    return parse_board(_chain_text(**changes), "test.toml")


def _curve_at(jitter: ConsumerJitter, offset_hz: float) -> float:
    offsets, levels, _ = jitter.phase_noise_curve()
    index = int(np.argmin(np.abs(np.log(offsets / offset_hz))))
    assert offsets[index] == pytest.approx(offset_hz, rel=1e-9)  # a grid point
    return float(levels[index])


def _flat_jitter(level_dbc_hz: float, carrier_hz: float, band: tuple[float, float]) -> float:
    # IEEE Std 1139: sigma_phi**2 = 2 * integral of L(f); flat L integrates to L * (f2 - f1).
    return math.sqrt(2 * 10 ** (level_dbc_hz / 10) * (band[1] - band[0])) / (2 * math.pi * carrier_hz)


# --------------------------------------------------------------------------- chain operations


@pytest.mark.parametrize("ratio", [1, 2, 4, 10, 32])
def test_ideal_divider_lowers_the_profile_by_20_log_d(ratio):
    # 20 log N rule: in band (|H| = 1) the PLL lifts -150 dBc/Hz by 20 log10(100), its
    # output divider /10 lowers it by 20, the plain divider by 20 log10(D).
    analysis = analyze(_board(ratio=ratio))
    expected = -150 + 20 * math.log10(100) - 20 - 20 * math.log10(ratio)
    jitter = analysis.consumer("load").jitter
    assert _curve_at(jitter, 10.0) == pytest.approx(expected, abs=1e-6)
    assert jitter.result.carrier_hz == pytest.approx(100e6 / ratio)
    # The time jitter does not depend on D (an ideal divider keeps the edges' timing).
    assert jitter.rms_seconds == pytest.approx(analysis.consumer("direct").jitter.rms_seconds, rel=1e-9)


def test_loop_bandwidth_is_the_3db_point_of_the_reference_path():
    # Definition: |H|**2 = 1/2 at the closed-loop 3 dB bandwidth (here 100 kHz).
    jitter = analyze(_board()).consumer("direct").jitter
    assert _curve_at(jitter, 100e3) - _curve_at(jitter, 10.0) == pytest.approx(10 * math.log10(0.5), abs=1e-6)


def test_divider_floor_adds_in_power_and_is_named():
    # Independent noises add in power: 10 log10(10**(a/10) + 10**(b/10)).
    analysis = analyze(_board(divider_noise='additive_noise = "-150 dBc/Hz"'))
    jitter = analysis.consumer("load").jitter
    carried = -150 + 40 - 20 - 20 * math.log10(4)
    expected = 10 * math.log10(10 ** (carried / 10) + 10 ** (-150 / 10))
    assert _curve_at(jitter, 10.0) == pytest.approx(expected, abs=1e-6)
    # Far outside the loop the carried noise is gone and the flat floor dominates the band.
    assert jitter.dominant == "div floor" and jitter.dominant_kind == "divider floor"


@pytest.mark.parametrize("buffer_fs", [50, 100, 300])
def test_buffer_adds_its_additive_jitter_in_root_sum_square(buffer_fs):
    board = _board(buffer_noise=f'additive_jitter = "{buffer_fs} fs"')
    with_buffer = analyze(board).consumer("load").jitter
    without = analyze(_board()).consumer("load").jitter
    # Common practice: independent RMS jitters add in root-sum-square.
    expected = math.sqrt(without.rms_seconds**2 + (buffer_fs * 1e-15) ** 2)
    assert with_buffer.rms_seconds == pytest.approx(expected, rel=1e-9)
    assert dict(with_buffer.contributions())["fan buffer"] == pytest.approx(buffer_fs * 1e-15, rel=1e-9)


def test_flat_reference_without_a_pll_matches_the_closed_form():
    text = """
[[reference]]
id = "ref"
frequency = "100 MHz"
phase_noise = [["1 kHz", "-155 dBc/Hz"]]

[[divider]]
id = "div"
input = "ref"
ratio = [1, 8]
settings = { ratio = 5 }

[[consumer]]
id = "clk"
source = "div"
frequency = "20 MHz"
jitter = "1 ps"
jitter_band = ["10 kHz", "5 MHz"]
"""
    jitter = analyze(parse_board(text)).consumer("clk").jitter
    expected = _flat_jitter(-155 - 20 * math.log10(5), 20e6, (10e3, 5e6))
    assert jitter.rms_seconds == pytest.approx(expected, rel=1e-9)
    assert jitter.dominant == "ref reference" and jitter.dominant_kind == "reference"


def test_fom_floor_follows_the_normalised_figure():
    # Floor at the VCO: FOM + 10 log10(10 MHz) + 20 log10(100) = -226 + 70 + 40 = -116 dBc/Hz;
    # at the /10 output -136 dBc/Hz; it adds in power to the carried reference (-130 dBc/Hz).
    jitter = analyze(_board(pll_noise='noise = { fom = "-226 dBc/Hz" }')).consumer("direct").jitter
    floor_density = jitter.chain.contributor("pll_a floor")
    assert 10 * math.log10(floor_density[0]) == pytest.approx(-136.0, abs=1e-6)
    assert _curve_at(jitter, 10.0) == pytest.approx(10 * math.log10(10**-13 + 10**-13.6), abs=1e-6)


@pytest.mark.parametrize(
    ("pll_noise", "dominant", "kind"),
    [
        ('noise = { fom = "-240 dBc/Hz" }', "ref reference", "reference"),  # floor 14 dB below the reference
        ('noise = { fom = "-216 dBc/Hz" }', "pll_a floor", "pll floor"),  # floor 4 dB above it
        ('noise = { fom = "-240 dBc/Hz", vco_phase_noise = [["1 kHz", -50], ["1 MHz", -110], ["10 MHz", -130]] }',
         "pll_a VCO", "vco"),
    ],
)
def test_dominant_contributor_is_named(pll_noise, dominant, kind):
    jitter = analyze(_board(pll_noise=pll_noise)).consumer("direct").jitter
    assert (jitter.dominant, jitter.dominant_kind) == (dominant, kind)
    rows = jitter.contributions()
    assert rows[0][0] == dominant and [s for _, s in rows] == sorted((s for _, s in rows), reverse=True)
    assert math.sqrt(sum(s * s for _, s in rows)) == pytest.approx(jitter.rms_seconds, rel=1e-12)


def test_broken_budget_is_an_error_naming_the_dominant_contributor():
    vco = 'noise = { fom = "-240 dBc/Hz", vco_phase_noise = [["1 kHz", -50], ["1 MHz", -110], ["10 MHz", -130]] }'
    analysis = analyze(_board(pll_noise=vco, budget="100 fs"))
    jitter = analysis.consumer("load").jitter
    assert jitter.passes is False and jitter.margin_seconds == pytest.approx(100e-15 - jitter.rms_seconds)
    errors = [f for f in analysis.findings if f.code == "jitter-budget"]
    assert [(f.severity.value, f.node) for f in errors] == [("error", "load")]
    assert "pll_a VCO" in errors[0].message and "wider loop bandwidth" in errors[0].message
    assert analysis.has_errors
    relaxed = analyze(_board(pll_noise=vco, budget="100 ps"))
    assert relaxed.consumer("load").jitter.passes is True
    assert not [f for f in relaxed.findings if f.code == "jitter-budget"]


def test_cascade_multiplies_through_both_plls():
    text = _chain_text(pll_noise='noise = { fom = "-230 dBc/Hz" }') + """
[[pll]]
id = "pll_b"
input = "pll_a.out"
vco = ["1 GHz", "3 GHz"]
pfd = ["10 MHz", "200 MHz"]
n = [8, 100]
outputs.hi = { divider = [1, 16] }
settings = { r = 1, n = 20, outputs = { hi = 4 } }
loop = { bandwidth = "1 MHz", damping = 1.0 }
noise = { fom = "-226 dBc/Hz" }

[[consumer]]
id = "fast"
source = "pll_b.hi"
frequency = "500 MHz"
"""
    jitter = analyze(parse_board(text)).consumer("fast").jitter
    # 20 log N rule through the cascade: x100 /10 x20 /4 = x50 on the reference.
    assert 10 * math.log10(jitter.chain.contributor("ref reference")[0]) == pytest.approx(
        -150 + 20 * math.log10(50), abs=1e-6
    )
    # pll_a's floor (-230 + 70 + 40 = -120 dBc/Hz at 1 GHz) rides through /10, x20, /4.
    assert 10 * math.log10(jitter.chain.contributor("pll_a floor")[0]) == pytest.approx(
        -120 - 20 + 20 * math.log10(20) - 20 * math.log10(4), abs=1e-6
    )
    # pll_b's own floor: -226 + 10 log10(100 MHz) + 20 log10(20) - 20 log10(4).
    assert 10 * math.log10(jitter.chain.contributor("pll_b floor")[0]) == pytest.approx(
        -226 + 80 + 20 * math.log10(20) - 20 * math.log10(4), abs=1e-6
    )
    assert {kind for kind, _ in jitter.kinds.values()} >= {"reference", "pll floor"}
    assert jitter.kinds["pll_a floor"] == ("pll floor", "pll_a")


# --------------------------------------------------------------------------- bands and budgets


def test_default_band_is_stated_and_capped_at_half_the_clock():
    analysis = analyze(load_board(RECEIVER))
    sysref = analysis.consumer("sysref").jitter
    assert sysref.band_hz == (DEFAULT_BAND_HZ[0], 3.84e6 / 2) and sysref.band_source == "default"
    assert sysref.budget_seconds is None and sysref.passes is None and sysref.budget_margin() is None
    assert any("No jitter band given" in note for note in sysref.notes)
    assert analysis.consumer("fpga_core").jitter.band_hz == DEFAULT_BAND_HZ


def test_peak_to_peak_limit_is_read_as_gaussian_rms():
    stats = pytest.importorskip("scipy.stats")
    board = parse_board(
        """
[[reference]]
id = "ref"
frequency = "148.5 MHz"

[[consumer]]
id = "sdi"
source = "ref"
frequency = "148.5 MHz"
standard = "sdi-hd"
"""
    )
    consumer = board.consumers[0]
    plan = band_plan(consumer, consumer.frequency)
    # scipy as reference: the span of Gaussian jitter at BER 1e-12 is 2 * Q(1e-12) sigma.
    assert plan.budget_s == pytest.approx(consumer.budget.jitter_pp_s / (2 * stats.norm.isf(1e-12)), rel=1e-6)
    assert plan.source == "standard" and "peak-to-peak" in plan.notes[0]


def test_converter_budget_and_band_reach_the_result():
    jitter = analyze(load_board(RECEIVER)).consumer("adc_clk").jitter
    # Shinagawa et al. (1990): SNR = -20 log10(2 pi f_in sigma_t); 70 dB at 180 MHz gives sigma_t = 10**-3.5 / (2 pi 180 MHz).
    assert jitter.budget_seconds == pytest.approx(10**-3.5 / (2 * math.pi * 180e6), rel=1e-12)
    assert jitter.band_hz == (1e3, 122.88e6) and jitter.band_source == "board"


# --------------------------------------------------------------------------- the demo board and JSON


def test_receiver_shows_jitter_per_consumer_with_one_broken_budget():
    analysis = analyze(load_board(RECEIVER))
    assert all(c.jitter is not None for c in analysis.consumers)
    broken = [f for f in analysis.findings if f.code == "jitter-budget"]
    assert [f.node for f in broken] == ["adc_clk"]
    adc = analysis.consumer("adc_clk").jitter
    assert adc.passes is False and adc.dominant in broken[0].message
    assert all(analysis.consumer(c).jitter.passes for c in ("dac_clk", "link_ref", "link_ref1"))
    # The fanout buffer's 60 fs is one of the link reference's contributors.
    assert dict(analysis.consumer("link_ref").jitter.contributions())["link_fanout buffer"] == pytest.approx(60e-15)


def test_json_contract_keys():
    document = json.loads(json.dumps(analysis_document(analyze(load_board(RECEIVER))), allow_nan=False))
    consumers = {c["id"]: c for c in document["consumers"]}
    for record in consumers.values():
        for key in ("jitter_rms_s", "jitter_band_hz", "jitter_budget_s", "jitter_margin_s", "jitter_dominant"):
            assert key in record
        assert len(record["jitter_band_hz"]) == 2 and record["jitter_rms_s"] > 0
    adc = consumers["adc_clk"]
    assert adc["jitter_margin_s"] == pytest.approx(adc["jitter_budget_s"] - adc["jitter_rms_s"])
    assert adc["jitter_margin_s"] < 0 and adc["status"] == "fail"
    assert adc["jitter"]["dominant"] == adc["jitter_dominant"] and adc["jitter"]["band_source"] == "board"
    assert consumers["sysref"]["jitter_budget_s"] is None and consumers["sysref"]["jitter_margin_s"] is None
    assert {"error"} == {f["severity"] for f in document["findings"] if f["code"] == "jitter-budget"}


def test_hooks_for_the_reports():
    jitter = analyze(load_board(RECEIVER)).consumer("link_ref").jitter
    offsets, levels, band = jitter.phase_noise_curve()
    assert offsets.shape == levels.shape and band == (12e3, 20e6)
    assert np.all(np.diff(offsets) > 0) and np.all(np.isfinite(levels))
    headroom, text = jitter.budget_margin()
    assert headroom == pytest.approx(1 - jitter.rms_seconds / 0.5e-12) and "500 fs" in text
    assert set(jitter.table_cells()) == {"jitter", "jitter budget", "jitter margin", "jitter dominant"}
    assert "planning estimate" in jitter.note


# --------------------------------------------------------------------------- missing data


def test_missing_reference_noise_is_an_info_finding_for_budgeted_consumers():
    analysis = analyze(load_board("boards/industrial-gateway.toml"))
    assert all(c.jitter is None for c in analysis.consumers)
    notes = [f for f in analysis.findings if f.code == "jitter-data"]
    assert [(f.severity.value, f.node) for f in notes] == [("info", "ref_main")]
    assert "no phase-noise data for reference ref_main" in notes[0].message
    assert "pcie_slot" in notes[0].message and "pcie_switch" in notes[0].message


def test_pll_without_a_loop_stops_the_chain():
    text = _chain_text(budget="1 ps").replace('loop = { bandwidth = "100 kHz", damping = 0.707 }\n', "")
    analysis = analyze(parse_board(text))
    assert analysis.consumer("load").jitter is None
    notes = [f for f in analysis.findings if f.code == "jitter-data"]
    assert [f.node for f in notes] == ["pll_a"] and "no loop response" in notes[0].message


def test_parts_without_their_own_noise_make_the_figure_optimistic():
    analysis = analyze(_board())  # pll_a has no noise table, fan no additive jitter
    notes = {f.node: f.message for f in analysis.findings if f.code == "jitter-data"}
    assert set(notes) == {"pll_a", "fan"} and "optimistic" in notes["pll_a"]
    assert any("pll_a has no noise table" in n for n in analysis.consumer("load").jitter.notes)


# --------------------------------------------------------------------------- loop filter


def _receiver_without_filter() -> str:
    # The same loop as a second-order approximation with the same crossover and margin.
    text = Path(RECEIVER).read_text()
    block = re.search(r"\[pll\.loop_filter\].*?\n\n", text, re.S).group(0)
    bandwidth = re.search(r'bandwidth = "([^"]+)"', block).group(1)
    margin = re.search(r"phase_margin = (\S+)", block).group(1)
    loop = f'loop = {{ bandwidth = "{bandwidth}", phase_margin = {margin}, bandwidth_is = "crossover" }}\n'
    return text.replace(block, "\n").replace('noise = { fom = "-227', loop + 'noise = { fom = "-227')


def test_designed_filter_replaces_the_approximation_and_lowers_modulator_noise():
    with_filter = analyze(load_board(RECEIVER))
    approximated = analyze(parse_board(_receiver_without_filter()))
    designed, plain = with_filter.consumer("adc_clk").jitter, approximated.consumer("adc_clk").jitter
    # Hand-derived asymptotes: the type-II second-order loop's |H|**2 falls 20 dB/decade far
    # outside its bandwidth, the third-order filter's (G ~ 1/s**3) 60 dB/decade, while a
    # third-order MASH modulator's noise rises 40 dB/decade: only the filter stops it.
    def slope(result, name):
        density = result.chain.contributor(name)
        offsets = result.chain.offsets_hz
        i, j = np.searchsorted(offsets, [2e6, 20e6])
        return 10 * math.log10(density[j] / density[i]) / math.log10(offsets[j] / offsets[i])

    assert slope(plain, "conv_synth modulator") == pytest.approx(40 - 20, abs=2)
    assert slope(designed, "conv_synth modulator") == pytest.approx(40 - 60, abs=2)
    assert dict(designed.contributions())["conv_synth modulator"] < dict(plain.contributions())["conv_synth modulator"] / 100
    assert designed.rms_seconds < plain.rms_seconds
    assert "conv_synth loop filter" in dict(designed.contributions())
    assert "conv_synth loop filter" not in dict(plain.contributions())


def test_loop_filter_noise_matches_an_independent_integration():
    integrate = pytest.importorskip("scipy.integrate")
    from clockplan.loopfilter.evaluate import evaluate_loop_filter
    from clockplan.loopfilter.noise import loop_filter_phase_noise

    board = load_board(RECEIVER)
    analysis = analyze(board)
    point = analysis.frequencies.plls["conv_synth"]
    config = board.part("conv_synth").loop_filter
    result = evaluate_loop_filter(config, config.spec(point.setting.n, point.pfd_hz))
    hottest = board.temperature_c[1]

    def s_phi(log_f: float) -> float:  # integrate over ln f: dF = f dln f
        f = math.exp(log_f)
        return float(loop_filter_phase_noise(result.chosen, result.spec, [f], temperature_c=hottest)[0]) * f

    jitter = analysis.consumer("adc_clk").jitter
    low, high = jitter.band_hz
    variance, _ = integrate.quad(s_phi, math.log(low), math.log(high), limit=200, epsabs=0)
    # S_phi is the one-sided phase density: sigma_phi**2 = its integral; the output divider
    # keeps the time jitter (20 log N rule), so compare at the VCO frequency.
    expected = math.sqrt(variance) / (2 * math.pi * float(point.vco_hz))
    assert dict(jitter.contributions())["conv_synth loop filter"] == pytest.approx(expected, rel=5e-3)


# --------------------------------------------------------------------------- board keys


@pytest.mark.parametrize(
    ("change", "key", "words"),
    [
        (('phase_noise = [["1 Hz", -150]]', 'phase_noise = [["1 Hz", -150], ["1 Hz", -160]]'),
         "reference[0].phase_noise[1]", "does not rise"),
        (('loop = { bandwidth = "100 kHz", damping = 0.707 }',
          'loop = { bandwidth = "100 kHz", damping = 0.707 }\nloop_filter = { charge_pump = "1 mA", kvco = "10 MHz/V", bandwidth = "10 kHz", phase_margin = 50 }'),
         "pll[0].loop_filter", "not both"),
        (('outputs = 2\n', 'outputs = 2\nadditive_jitter_band = ["12 kHz", "20 MHz"]\n'),
         "buffer[0].additive_jitter_band", "without additive_jitter"),
        (('outputs = 2\n', 'outputs = 2\nadditive_jitter = "fast"\n'), "buffer[0].additive_jitter", "unit"),
        (('ratio = [1, 64]\n', 'ratio = [1, 64]\nadditive_noise = "-150 dBm"\n'), "divider[0].additive_noise", "unit"),
        (('loop = { bandwidth = "100 kHz", damping = 0.707 }', 'loop = { bandwidth = "100 kHz", dampin = 0.7 }'),
         "pll[0].loop.dampin", "unknown key"),
    ],
)
def test_bad_noise_keys_are_located(change, key, words):
    text = _chain_text()
    assert change[0] in text
    with pytest.raises(BoardError) as caught:
        parse_board(text.replace(change[0], change[1], 1), "bad.toml")
    error = caught.value
    assert error.key == key and words in error.message and error.hint
    assert error.file == "bad.toml" and error.line is not None
