"""Board-file values for jitter: accepted forms and located errors."""

from __future__ import annotations

import tomllib

import numpy as np
import pytest

from clockplan.errors import BoardError
from clockplan.jitter.loop import passive_filter_loop, second_order_loop
from clockplan.jitter.parse import (
    parse_additive_noise,
    parse_additive_jitter,
    parse_band,
    parse_jitter_budget,
    parse_loop,
    parse_phase_noise,
    parse_pll_noise,
)

# An invented board fragment in the keys proposed in docs/jitter.md.
BOARD = tomllib.loads(
    """
[[reference]]
id = "ref_main"
frequency = "25 MHz"
phase_noise = [["10 Hz", -95], ["100 Hz", "-125 dBc/Hz"], ["1 kHz", -145], [10000, -155], ["1 MHz", -165]]

[[reference]]
id = "ref_spare"
frequency = "40 MHz"
phase_noise = { points = [["1 kHz", -140], ["100 kHz", -160]], floor = "-168 dBc/Hz", spurs = [["250 kHz", "-100 dBc"]] }

[[pll]]
id = "pll_a"
loop = { bandwidth = "150 kHz", phase_margin = "60 deg", bandwidth_is = "crossover" }
noise = { fom = "-226 dBc/Hz", flicker_fom = "-266 dBc/Hz", modulator_order = 3, vco_phase_noise = [["10 kHz", -85], ["1 MHz", -135], ["10 MHz", -152]] }

[[pll]]
id = "pll_b"
loop = { open_loop_numerator = [1.2e5, 2.0e10], open_loop_denominator = [1, 0, 0] }

[[divider]]
id = "div_a"
additive_noise = "-160 dBc/Hz"

[[buffer]]
id = "fan_1"
additive_jitter = "90 fs"
additive_jitter_band = ["12 kHz", "20 MHz"]

[[consumer]]
id = "phy_0"
jitter = "1 ps"
jitter_band = ["12 kHz", "20 MHz"]
"""
)


def test_board_fragment_reads_into_jitter_types():
    ref = parse_phase_noise(BOARD["reference"][0]["phase_noise"], "reference[0].phase_noise")
    assert ref.offsets_hz.tolist() == [10.0, 100.0, 1e3, 1e4, 1e6]
    assert ref.dbc_hz.tolist() == [-95.0, -125.0, -145.0, -155.0, -165.0]
    spare = parse_phase_noise(BOARD["reference"][1]["phase_noise"], "reference[1].phase_noise")
    assert spare.floor_dbc_hz == -168.0
    assert [(s.offset_hz, s.dbc) for s in spare.spurs] == [(250e3, -100.0)]
    loop = parse_loop(BOARD["pll"][0]["loop"], "pll[0].loop")
    # A bandwidth-style loop is the usual third-order passive filter by default.
    expected = passive_filter_loop(150e3, phase_margin_deg=60.0, bandwidth_is="crossover")
    np.testing.assert_allclose(loop.closed_den, expected.closed_den, rtol=1e-15)
    assert loop.model == "third-order (assumed)" and "60.0° phase margin" in loop.summary
    idealised = parse_loop({**BOARD["pll"][0]["loop"], "model": "second-order"}, "pll[0].loop")
    expected = second_order_loop(150e3, phase_margin_deg=60.0, bandwidth_is="crossover")
    np.testing.assert_allclose(idealised.closed_den, expected.closed_den, rtol=1e-15)
    assert idealised.model == "second-order"
    noise = parse_pll_noise(BOARD["pll"][0]["noise"], "pll[0].noise")
    assert (noise.fom_dbc_hz, noise.flicker_fom_dbc_hz, noise.modulator_order) == (-226.0, -266.0, 3)
    assert noise.vco is not None and noise.vco.offsets_hz.tolist() == [1e4, 1e6, 1e7]
    explicit = parse_loop(BOARD["pll"][1]["loop"], "pll[1].loop")
    assert explicit.open_num.tolist() == [1.2e5, 2.0e10]
    assert parse_additive_noise(BOARD["divider"][0]["additive_noise"], "divider[0].additive_noise") == -160.0
    buffer = BOARD["buffer"][0]
    additive = parse_additive_jitter(
        buffer["additive_jitter"], "buffer[0].additive_jitter", buffer["additive_jitter_band"]
    )
    assert additive.seconds == pytest.approx(90e-15, rel=1e-15) and additive.band_hz == (12e3, 20e6)
    consumer = BOARD["consumer"][0]
    budget = parse_jitter_budget(
        consumer["jitter"], "consumer[0].jitter", consumer["jitter_band"], "consumer[0].jitter_band"
    )
    assert budget.seconds == pytest.approx(1e-12, rel=1e-15) and budget.band_hz == (12e3, 20e6)


@pytest.mark.parametrize(
    ("value", "key"),
    [
        ([["1 kHz", -120], ["2 kHz", -125], ["3 kHz", -130], ["2.5 kHz", -131]], "pn[3]"),
        ([["1 kHz", -120], ["1 kHz", -125]], "pn[1]"),
        ([["1 kHz", -120], ["2 kHz", "-125 dBm"]], "pn[1]"),
        ([["1 kHz", -120], ["-2 kHz", -125]], "pn[1]"),
        ([["1 kHz", -120], "2 kHz"], "pn[1]"),
        ([["1 kHz", -120], ["2 kHz", -125, 3]], "pn[1]"),
        ([["1 kHz", -120], [True, -125]], "pn[1]"),
        ([], "pn"),
        ("-120 dBc/Hz", "pn"),
        ({"floor": -160}, "pn.points"),
        ({"points": [["1 kHz", -120]], "flor": -160}, "pn.flor"),
        ({"points": [["1 kHz", -120]], "spurs": [["1 MHz"]]}, "pn.spurs[0]"),
    ],
)
def test_phase_noise_errors_point_at_the_item(value, key):
    with pytest.raises(BoardError) as caught:
        parse_phase_noise(value, "pn")
    assert caught.value.key == key
    assert caught.value.hint


def test_misspelt_key_gets_a_suggestion():
    with pytest.raises(BoardError) as caught:
        parse_phase_noise({"points": [["1 kHz", -120]], "flor": -160}, "pn")
    assert "floor" in caught.value.hint


@pytest.mark.parametrize(
    ("value", "key"),
    [
        ({"damping": 0.7}, "loop.bandwidth"),
        ({"bandwidth": "100 kHz"}, "loop"),
        ({"bandwidth": "100 kHz", "damping": 0.7, "phase_margin": 60}, "loop"),
        ({"bandwidth": "100 kHz", "damping": -0.7}, "loop.damping"),
        ({"bandwidth": "100 kHz", "phase_margin": "120 deg"}, "loop.phase_margin"),
        ({"bandwidth": "100 kHz", "phase_margin": "sixty"}, "loop.phase_margin"),
        ({"bandwidth": "100 kHz", "damping": 1, "bandwidth_is": "unity"}, "loop.bandwidth_is"),
        ({"bandwidth": "100 kHz", "dampign": 1}, "loop.dampign"),
        ({"bandwidth": "100 kHz", "damping": 1, "model": "third"}, "loop.model"),
        ({"bandwidth": "100 kHz", "damping": -1, "model": "second-order"}, "loop.damping"),
        ({"bandwidth": "100 kHz", "phase_margin": 95, "model": "second-order"}, "loop.phase_margin"),
        ({"open_loop_numerator": [1e9], "open_loop_denominator": [1, 0, 0], "model": "second-order"}, "loop.model"),
        ({"open_loop_numerator": [1e9]}, "loop.open_loop_denominator"),
        ({"open_loop_numerator": [1e9], "open_loop_denominator": [1, 0, 0, 0]}, "loop"),
        ({"open_loop_numerator": [1e9, "x"], "open_loop_denominator": [1, 0, 0]}, "loop.open_loop_numerator[1]"),
        ({"open_loop_numerator": [1e9], "open_loop_denominator": [1, 0], "damping": 1}, "loop.damping"),
        ("100 kHz", "loop"),
    ],
)
def test_loop_errors(value, key):
    with pytest.raises(BoardError) as caught:
        parse_loop(value, "loop")
    assert caught.value.key == key
    assert caught.value.hint


@pytest.mark.parametrize(
    ("call", "key"),
    [
        (lambda: parse_pll_noise({"fom": "-226 dB/Hz"}, "n"), "n.fom"),
        (lambda: parse_pll_noise({"modulator_order": 2.5}, "n"), "n.modulator_order"),
        (lambda: parse_pll_noise({"modulator_order": True}, "n"), "n.modulator_order"),
        (lambda: parse_pll_noise({"vco_phase_noise": [["1 kHz", "loud"]]}, "n"), "n.vco_phase_noise[0]"),
        (lambda: parse_additive_jitter("90", "b.additive_jitter"), "b.additive_jitter"),
        (lambda: parse_additive_jitter("90 fs", "b.additive_jitter", ["20 MHz", "12 kHz"]), "b.additive_jitter_band"),
        (lambda: parse_jitter_budget("0 ps", "c.jitter", ["12 kHz", "20 MHz"], "c.jitter_band"), "c.jitter"),
        (lambda: parse_band(["12 kHz"], "c.jitter_band"), "c.jitter_band"),
        (lambda: parse_band(["12 kHz", "20 MHz/s"], "c.jitter_band"), "c.jitter_band[1]"),
        (lambda: parse_additive_noise("loud", "d.additive_noise"), "d.additive_noise"),
    ],
)
def test_other_errors_are_located(call, key):
    with pytest.raises(BoardError) as caught:
        call()
    assert caught.value.key == key
    assert caught.value.hint
