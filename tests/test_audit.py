"""Exact audit: frequencies from given settings, constraint findings, the JSON contract.

Expected frequencies are derived by hand as f_out = f_ref / R * N / D (the
definition of an R/N/D synthesizer) and written as Fractions.
"""

import json
from fractions import Fraction
from pathlib import Path

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import load_board, parse_board
from clockplan.cli import main

from .boards import MINIMAL


def _actual(path: str) -> dict[str, Fraction]:
    result = analyze(load_board(path))
    return {c.id: c.actual_hz for c in result.consumers}


def test_gateway_frequencies_are_exact():
    actual = _actual("boards/industrial-gateway.toml")
    assert actual["phy0"] == Fraction(25_000_000) / 1 * 100 / 20 == 125_000_000
    assert actual["pcie_slot"] == 100_000_000
    assert actual["usb_phy"] == 20_000_000
    # 25 MHz x 19.6608 / 40 = 12.288 MHz = 256 x 48 kHz (audio master clock, common practice).
    assert actual["codec_mclk"] == Fraction(25_000_000) * Fraction("19.6608") / 40 == 256 * 48_000
    assert actual["uart_clk"] == Fraction(20_000_000, 11)


def test_video_frequencies_are_exact():
    actual = _actual("boards/video-converter.toml")
    assert actual["hdmi_tx"] == 148_500_000
    assert actual["pix_720p"] == 74_250_000
    # The 1/1.001 family: 148.5/1.001 MHz = 148500000*1000/1001 Hz exactly (SMPTE practice).
    assert actual["hdmi_tx_1001"] == Fraction(148_500_000 * 1000, 1001)
    assert actual["audio_codec"] == Fraction(27_000_000, 25) * 455 / 40


def test_receiver_cascade_is_exact():
    actual = _actual("boards/sampling-receiver.toml")
    # 10 MHz x 250 / 16 = 156.25 MHz, the 10GBASE-R reference (IEEE 802.3 clause 49: 10.3125 GBd / 66).
    assert actual["link_ref"] == Fraction(10_312_500_000, 66)
    # Cascade: 10 MHz x 250 / 25 = 100 MHz into the synthesizer, x 29.4912 / 12.
    assert actual["adc_clk"] == Fraction(100_000_000) * Fraction("29.4912") / 12 == 245_760_000
    assert actual["sysref"] == Fraction(122_880_000, 32)


def test_zero_error_is_exactly_zero():
    result = analyze(load_board("boards/industrial-gateway.toml"))
    error = result.consumer("phy0").synthesis_error
    assert error == 0 and isinstance(error, Fraction)


def test_synthesis_error_is_exact():
    result = analyze(load_board("boards/video-converter.toml"))
    # 27 MHz / 25 x 455 / 40 = 12.285 MHz against 12.288 MHz: exactly -3/12288 = -244.140625 ppm.
    assert result.consumer("audio_codec").synthesis_error == Fraction(12_285_000, 12_288_000) - 1
    codes = {(f.code, f.node) for f in result.findings}
    assert ("frequency", "audio_codec") in codes


@pytest.mark.parametrize(
    ("old", "new", "code"),
    [
        ('n = "100"', 'n = "140"', "vco-range"),  # 25 MHz x 140 = 3.5 GHz > 3.2 GHz
        ("r = 1, n", "r = 50, n", "pfd-range"),  # 25 MHz / 50 = 0.5 MHz < 1 MHz
        ('r = [1, 255]', 'r = [2, 255]', "r-range"),
        ('n = "100"', 'n = "100.3"', "denominator"),  # 0.3 is not k/2^24
        ('mode = "fractional"\ndenominator = "2^24"', 'mode = "integer"', "n-fraction"),
        ("out1 = 16", "out1 = 15", "divider-range"),  # odd divider on an even-only output
        ('n = "100"', 'n = "5000"', "n-range"),
    ],
)
def test_constraint_violations_are_found(old, new, code):
    text = MINIMAL.replace(old, new)
    if code == "n-fraction":
        text = text.replace('n = "100"', 'n = "100.5"')
    assert text != MINIMAL
    result = analyze(parse_board(text))
    assert code in {f.code for f in result.findings}
    assert result.has_errors


def test_unset_settings_are_findings_not_crashes():
    text = MINIMAL.replace('settings = { r = 1, n = "100", outputs = { out0 = 20, out1 = 16 } }', "")
    result = analyze(parse_board(text))
    assert {f.code for f in result.findings} == {"unset"}
    assert result.consumer("phy0").actual_hz is None


def test_json_contract(capsys):
    status = main(["audit", "boards/sampling-receiver.toml", "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert status == 1  # the demo's deliberate problem: adc_clk misses its jitter budget
    assert doc["board"]["name"] == "Sampling receiver"
    consumer = doc["consumers"][0]
    for key in ("id", "source_chain", "target_hz", "actual_hz", "actual_hz_exact", "synthesis_error_ppm"):
        assert key in consumer
    assert consumer["source_chain"] == ["ocxo_10m", "cleaner", "cleaner.ref", "conv_synth", "conv_synth.adc"]
    assert consumer["synthesis_error_ppm"] == 0
    synth = doc["plls"][1]
    assert (synth["id"], synth["r"], synth["n"]) == ("conv_synth", 1, "18432/625")
    assert synth["outputs"] == {"adc": 12, "dac": 6, "fpga": 24}
    assert Fraction(synth["vco_hz_exact"]) == Fraction(2_949_120_000)
    for finding in doc["findings"]:
        assert set(finding) >= {"severity", "code", "node", "message"}


def test_json_is_deterministic(capsys):
    main(["audit", "boards/video-converter.toml", "--json"])
    first = capsys.readouterr().out
    main(["audit", "boards/video-converter.toml", "--json"])
    assert capsys.readouterr().out == first
    assert Fraction(json.loads(first)["consumers"][4]["actual_hz_exact"]) == Fraction(148_500_000_000, 1001)


def test_exit_status_1_on_error_findings(capsys):
    assert main(["audit", "boards/video-converter.toml", "--no-color", "--width", "120"]) == 1
    out = capsys.readouterr().out
    assert "FAIL" in out and "audio_codec" in out and "-244.1 ppm" in out


@pytest.mark.parametrize("path", sorted(str(p) for p in Path("boards").glob("*.toml")))
def test_every_demo_board_audits(path, capsys):
    assert main(["audit", path, "--no-color", "--width", "160"]) in (0, 1)
    assert "Consumers" in capsys.readouterr().out
