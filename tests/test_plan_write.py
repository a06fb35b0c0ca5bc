"""Writing planned settings back into a board file: text kept, audit agrees, atomic and safe."""

from __future__ import annotations

import tomllib
from fractions import Fraction
from pathlib import Path

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import load_board, parse_board
from clockplan.cli import main
from clockplan.errors import ClockplanError
from clockplan.parts import PllSetting, Settings
from clockplan.plan.board_planner import plan_board
from clockplan.plan.boardwrite import settings_line, write_board_file, write_settings

DEMO = Path("boards/edge-router.toml")


def test_written_board_audits_to_the_planned_frequencies(tmp_path):
    board = load_board(DEMO)
    plan = plan_board(board)
    out = tmp_path / "planned.toml"
    write_board_file(DEMO, out, board, plan.settings)
    written = load_board(out)
    planned = analyze(board, plan.settings)
    audited = analyze(written)  # the written file's own settings
    for consumer in board.consumers:
        assert audited.consumer(consumer.id).actual_hz == planned.consumer(consumer.id).actual_hz
    assert not [f for f in audited.findings if f.severity.value == "error"]


def test_user_text_and_comments_are_kept(tmp_path):
    board = load_board(DEMO)
    out = tmp_path / "planned.toml"
    write_board_file(DEMO, out, board, plan_board(board).settings)
    before = DEMO.read_text(encoding="utf-8").splitlines()
    after = out.read_text(encoding="utf-8").splitlines()
    # Every original line except the replaced settings line is still there, in order.
    kept = [line for line in before if not line.startswith("settings =")]
    iterator = iter(after)
    assert all(any(line == other for other in iterator) for line in kept)
    # Only settings lines were added.
    added = [line for line in after if line not in before]
    assert added and all(line.startswith("settings = {") for line in added)


@pytest.mark.parametrize(
    "layout",
    [
        # dotted keys
        'settings.r = 2\nsettings.n = 50\nsettings.outputs.o = 5',
        # a sub-table after the main keys
        None,
    ],
)
def test_other_settings_layouts_are_replaced(layout):
    base = """# header comment
[[reference]]
id = "ref"
frequency = "10 MHz"

[[pll]]
id = "p"   # the PLL
input = "ref"
vco = ["400 MHz", "600 MHz"]
pfd = ["1 MHz", "10 MHz"]
r = [1, 10]
n = [8, 100]
outputs.o = { divider = [1, 20] }
"""
    tail = """
# consumers follow
[[consumer]]
id = "c"
source = "p.o"
frequency = "100 MHz"
"""
    if layout is None:
        text = base + "\n[pll.settings]\nr = 2\nn = 50\noutputs = { o = 5 }\n" + tail
    else:
        text = base + layout + "\n" + tail
    board = parse_board(text, "layout.toml")
    settings = Settings({"p": PllSetting(1, Fraction(50), {"o": 5})}, {})
    new = write_settings(text, board, settings)
    assert "# header comment" in new and "# the PLL" in new and "# consumers follow" in new
    assert new.count("settings") == 1
    parsed = tomllib.loads(new)
    assert parsed["pll"][0]["settings"] == {"r": 1, "n": 50, "outputs": {"o": 5}}


def test_settings_line_writes_exact_ratios():
    line = settings_line(PllSetting(1, Fraction(55000, 1001), {"pix": 10}))
    assert line == 'settings = { r = 1, n = "5000/91", outputs = { pix = 10 } }'
    # A terminating decimal is written as exact decimal text and reads back exactly.
    line = settings_line(PllSetting(1, Fraction(294912, 10000), {"adc": 12}))
    assert '"29.4912"' in line


def test_refuses_to_overwrite_the_input_without_in_place(tmp_path):
    copy = tmp_path / "board.toml"
    copy.write_text(DEMO.read_text(encoding="utf-8"), encoding="utf-8")
    board = load_board(copy)
    settings = plan_board(board).settings
    with pytest.raises(ClockplanError, match="refusing"):
        write_board_file(copy, copy, board, settings)
    assert "settings = { r = 1 }" in copy.read_text(encoding="utf-8")  # untouched
    write_board_file(copy, copy, board, settings, in_place=True)
    assert load_board(copy).given_settings().plls.keys() == {"cleaner", "serdes_synth", "audio_pll"}
    assert [p.name for p in tmp_path.iterdir()] == ["board.toml"]  # no temporary file left behind


def test_cli_write_and_in_place(tmp_path, capsys):
    copy = tmp_path / "board.toml"
    copy.write_text(DEMO.read_text(encoding="utf-8"), encoding="utf-8")
    out = tmp_path / "out.toml"
    assert main(["plan", str(copy), "--write", str(out), "--no-color", "--width", "160"]) == 0
    assert main(["audit", str(out), "--no-color", "--width", "160"]) == 0
    assert main(["plan", str(copy), "--write", str(copy), "--no-color"]) == 2
    assert "refusing" in capsys.readouterr().err
    assert main(["plan", str(copy), "--in-place", "--no-color", "--width", "160"]) == 0
    assert main(["audit", str(copy), "--no-color", "--width", "160"]) == 0
