"""``clockplan loop BOARD PLL``: the filter, its margins and response, and its errors.

The JSON document's open-loop polynomials are checked with scipy.signal.freqs
against the crossover and phase margin the command reports (definitions:
|G| = 1 at the crossover, phase margin = 180° + arg G there). N and the PFD
frequency must be the plan's exact values (f_PFD = f_in / R, N from the settings).
"""

from __future__ import annotations

import json
import math
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from clockplan.cli import main

RECEIVER = "boards/sampling-receiver.toml"


def _run(capsys, *argv: str) -> tuple[int, str, str]:
    status = main(list(argv))
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def test_loop_prints_the_filter_margins_response_and_jitter(capsys):
    status, out, _ = _run(capsys, "loop", RECEIVER, "conv_synth", "--no-color", "--width", "140")
    # The demo fails on purpose (adc_clk over its jitter budget): loop exits as audit does (issue 15).
    assert status == 1
    for text in ("Loop filter parts (order 3)", "phase margin", "Closed-loop response", "adc_clk", "N = 18432/625"):
        assert text in out
    assert "planning estimate" in out.lower()


def test_loop_json_is_the_filter_at_the_plan_operating_point(capsys):
    signal = pytest.importorskip("scipy.signal")
    status, out, _ = _run(capsys, "loop", RECEIVER, "conv_synth", "--json")
    assert status == 1  # adc_clk over its jitter budget, as audit says
    document = json.loads(out)
    assert document["pll"] == "conv_synth"
    # The board's settings: 100 MHz in, R = 1, N = 29.4912 exactly.
    assert Fraction(document["loop"]["n"]) == Fraction("29.4912")
    assert Fraction(document["loop"]["pfd_hz"]) == 100_000_000
    assert sorted(document["fitted"]) == ["c1", "c2", "c3", "r1", "r3"]
    performance = document["performance"]
    crossover = performance["crossover_hz"]
    _, g = signal.freqs(document["open_loop"]["num"], document["open_loop"]["den"], worN=[2 * math.pi * crossover])
    assert abs(g[0]) == pytest.approx(1.0, rel=1e-6)
    assert 180 + math.degrees(np.angle(g[0])) == pytest.approx(performance["phase_margin_deg"], abs=1e-6)
    adc = {c["id"]: c for c in document["consumers"]}["adc_clk"]
    assert adc["loop_filter_jitter_s"] > 0 and adc["jitter_rms_s"] > adc["loop_filter_jitter_s"]


@pytest.mark.parametrize(
    ("pll", "words"),
    [
        ("conv_synt", "did you mean 'conv_synth'"),
        ("adc_clk", "is not a PLL"),
        ("cleaner", "has no loop_filter table"),
    ],
)
def test_loop_refuses_with_a_clear_message(capsys, pll, words):
    status, out, err = _run(capsys, "loop", RECEIVER, pll)
    assert status == 2 and out == ""
    assert words in err and err.startswith("clockplan: error:") and "Traceback" not in err


def _variant(tmp_path: Path, old: str, new: str) -> str:
    """A copy of the receiver board with ``old`` replaced by ``new`` (once); its path."""
    text = Path(RECEIVER).read_text()
    assert old in text
    board = tmp_path / "variant.toml"
    board.write_text(text.replace(old, new, 1))
    return str(board)


def test_loop_needs_settings_first(capsys, tmp_path):
    settings = 'settings = { r = 1, n = "29.4912", outputs = { adc = 12, dac = 6, fpga = 24 } }\n'
    status, _, err = _run(capsys, "loop", _variant(tmp_path, settings, ""), "conv_synth")
    assert status == 2 and "has no settings yet" in err and "clockplan plan" in err


def test_loop_analyses_an_existing_filter(capsys, tmp_path):
    parts = 'r1 = "100 ohm"\nc1 = "100 nF"\nc2 = "5.6 nF"\nr3 = "750 ohm"\nc3 = "680 pF"\n'
    board = _variant(tmp_path, 'bandwidth = "50 kHz"\nphase_margin = 55\n', parts)
    status, out, _ = _run(capsys, "loop", board, "conv_synth", "--no-color", "--width", "140")
    assert status in (0, 1) and "given parts" in out
    audit_status, _, _ = _run(capsys, "audit", board)
    assert status == audit_status  # the exit rules of audit


def test_loop_exits_as_audit_does_when_its_table_shows_a_consumer_over_budget(capsys):
    # Issue 15: loop printed adc_clk at 331 fs against a 280 fs budget and exited 0.
    status, out, _ = _run(capsys, "loop", RECEIVER, "conv_synth", "--no-color", "--width", "140")
    document = json.loads(_run(capsys, "loop", RECEIVER, "conv_synth", "--json")[1])
    adc = {c["id"]: c for c in document["consumers"]}["adc_clk"]
    assert adc["jitter_rms_s"] > adc["jitter_budget_s"]
    audit_status, _, _ = _run(capsys, "audit", RECEIVER)
    assert status == audit_status == 1
    # --fail-on is the audit's option, with its meaning.
    assert _run(capsys, "loop", RECEIVER, "conv_synth", "--fail-on", "warning")[0] == 1


def test_loop_refuses_loop_and_filter_together(capsys, tmp_path):
    loop = 'loop = { bandwidth = "50 kHz", damping = 0.7 }\n'
    board = _variant(tmp_path, 'noise = { fom = "-227', loop + 'noise = { fom = "-227')
    status, _, err = _run(capsys, "loop", board, "conv_synth")
    assert status == 2 and "loop_filter" in err and "not both" in err
