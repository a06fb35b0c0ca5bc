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
    # The board states the audio PLL's loop (100 kHz, natural-frequency model): that is the one the flag uses.
    assert abs(doc["plan"]["loop_bandwidth_hz"]["audio_pll"] - 100_000) < 1e-6


def test_json_infeasible(capsys):
    assert main(["plan", "boards/video-converter.toml", "--json"]) == 3
    doc = json.loads(capsys.readouterr().out)
    assert doc["verdict"] == "infeasible"
    assert doc["infeasible"]["conflicts"][0]["consumers"] == ["audio_codec"]


def test_usage_errors_exit_2(capsys):
    assert main(["plan", "boards/edge-router.toml", "--alternatives", "-1"]) == 2
    assert main(["plan", "boards/edge-router.toml", "--write", "x.toml", "--in-place"]) == 2
    assert main(["plan", "boards/edge-router.toml", "--loop-bandwidth", "fast"]) == 2


def test_loop_bandwidth_option_feeds_the_spur_flag(capsys, tmp_path):
    # The option is for PLLs that state no loop of their own: take the audio PLL's loop out of the demo.
    from pathlib import Path

    text = Path("boards/edge-router.toml").read_text(encoding="utf-8")
    loop = 'loop = { bandwidth = "100 kHz", damping = 0.707, model = "third-order" }\n'
    assert loop in text
    board = tmp_path / "no-audio-loop.toml"
    board.write_text(text.replace(loop, ""), encoding="utf-8")
    # audio_pll's integer-boundary spur sits 6.336 MHz out; a 10 MHz loop would pass it.
    assert main(["plan", str(board), "--json", "--loop-bandwidth", "10 MHz"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert any(f["code"] == "spur-in-band" and f["node"] == "audio_pll" for f in doc["findings"])
    assert doc["plan"]["loop_bandwidth_hz"]["audio_pll"] == 10_000_000


def test_help_does_not_import_the_planner():
    code = "import sys, clockplan.cli as c; c.main(['--help']); print('clockplan.plan.board_planner' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip().endswith("False")


def test_the_readme_demo_is_a_showcase(capsys):
    # README's main command: every budget kind is checked on real (invented, datasheet-style) figures.
    assert main(["plan", "boards/edge-router.toml", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    codes = {(f["severity"], f["code"]) for f in doc["findings"]}
    assert not {c for s, c in codes if s == "warning"}, codes
    assert ("info", "ppm-assumed") not in codes and not {c for _, c in codes if c == "jitter-data"}
    consumers = {c["id"]: c for c in doc["consumers"]}
    # The TCXO's figures add linearly over 10 years (datasheet convention, common practice):
    # ±1 tolerance, ±0.5 band, aging ±1 the first year then ±0.5 for 9 more, ±0.1 supply, ±0.1 load = 7.2 ppm.
    tcxo = 1 + 0.5 + (1 + 0.5 * 9) + 0.1 + 0.1
    assert abs(consumers["pcie_root"]["ppm_worst_case"] - tcxo) < 1e-9
    for name in ("pcie_root", "pcie_nvme", "sfp_a", "sfp_b", "sgmii_phy", "codec_48k", "codec_44k1"):
        consumer = consumers[name]
        assert consumer["jitter_budget_s"] is not None and consumer["jitter"]["passes"] is True, name
        assert consumer["ppm_pass"] is True, name
    # PCI Express Gen3 refclk: 1.0 ps RMS over the 10 kHz-50 MHz approximation (standards table).
    assert consumers["pcie_root"]["jitter_budget_s"] == 1e-12
    assert consumers["pcie_root"]["jitter_band_hz"] == [1e4, 5e7]
    # Converter clock: SNR = -20 log10(2 pi f_in sigma), 110 dB at 20 kHz allows about 25.2 ps (Shinagawa et al., IEEE JSSC 1990).
    import math

    assert abs(consumers["codec_48k"]["jitter_budget_s"] - 10 ** (-110 / 20) / (2 * math.pi * 20e3)) < 1e-18
    assert [f for f in doc["findings"] if f["code"] == "search-bound"][0]["severity"] == "info"


def test_the_demo_summary_shows_every_kind_of_margin(capsys):
    assert main(["plan", "boards/edge-router.toml", "--no-color", "--width", "160"]) == 0
    out = capsys.readouterr().out
    after = out[out.index("worst margins:"):].splitlines()[1:]
    lines = after[:next(i for i, line in enumerate(after) if not line.startswith("  "))]
    assert [line.split(":")[0].strip() for line in lines] == ["synthesis", "ppm", "jitter"]
    # The tightest ppm budget is ±50 ppm (the PTP clock and the audio clocks): (50 - 7.2) / 50 = 85.6 % left.
    assert "85.6 % left (+7.2 ppm of ±50 ppm)" in lines[1]
