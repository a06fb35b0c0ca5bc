"""The ``plan`` command: exit status, JSON contract, lazy imports."""

from __future__ import annotations

import json
import subprocess
import sys
from fractions import Fraction

from clockplan.cli import main


def test_plan_demo_exits_0_and_prints_the_tables(capsys):
    assert main(["plan", "boards/edge-router.toml", "--no-color", "--width", "160"]) == 0
    out = capsys.readouterr().out
    assert "clockplan plan" in out and "Consumers" in out and "Settings" in out and "spur offset" in out


def test_infeasible_board_exits_3_with_an_explanation(capsys):
    assert main(["plan", "boards/video-converter.toml", "--no-color", "--width", "160"]) == 3
    captured = capsys.readouterr()
    assert "NO FEASIBLE PLAN" in captured.out
    assert "no feasible plan" in captured.err and "audio_codec" in captured.err and "integer-N" in captured.err


def test_json_contract(capsys):
    assert main(["plan", "boards/edge-router.toml", "--json", "--alternatives", "2"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["command"] == "plan" and doc["verdict"] == "pass"
    plls = {p["id"]: p for p in doc["plls"]}
    audio = plls["audio_pll"]
    # Settings travel exactly; the spur offset is PFD x distance of N to the nearest whole number.
    n = Fraction(audio["n"])
    fraction = n - (n.numerator // n.denominator)
    assert audio["spur_offset_hz"] == float(Fraction(audio["pfd_hz"]) * min(fraction, 1 - fraction))
    assert plls["cleaner"]["spur_offset_hz"] is None
    assert len(doc["alternatives"]) == 2 and doc["alternatives"][0]["rank"] == 2
    assert doc["plan"]["objective"]["feasible"] is True
    assert doc["plan"]["loop_bandwidth_hz"]["audio_pll"] == 200000


def test_json_infeasible(capsys):
    assert main(["plan", "boards/video-converter.toml", "--json"]) == 3
    doc = json.loads(capsys.readouterr().out)
    assert doc["verdict"] == "infeasible"
    assert doc["infeasible"]["conflicts"][0]["consumers"] == ["audio_codec"]


def test_usage_errors_exit_2(capsys):
    assert main(["plan", "boards/edge-router.toml", "--alternatives", "-1"]) == 2
    assert main(["plan", "boards/edge-router.toml", "--write", "x.toml", "--in-place"]) == 2
    assert main(["plan", "boards/edge-router.toml", "--loop-bandwidth", "fast"]) == 2


def test_loop_bandwidth_option_feeds_the_spur_flag(capsys):
    # audio_pll's integer-boundary spur sits 6.336 MHz out; a 10 MHz loop would pass it.
    assert main(["plan", "boards/edge-router.toml", "--json", "--loop-bandwidth", "10 MHz"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert any(f["code"] == "spur-in-band" and f["node"] == "audio_pll" for f in doc["findings"])


def test_help_does_not_import_the_planner():
    code = "import sys, clockplan.cli as c; c.main(['--help']); print('clockplan.plan.board_planner' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip().endswith("False")
