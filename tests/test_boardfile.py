"""Board files: the model they produce, and a clear error for every kind of bad input."""

import re
from fractions import Fraction
from pathlib import Path

import pytest

from clockplan.boardfile import load_board, parse_board
from clockplan.cli import main
from clockplan.errors import BoardError
from clockplan.parts import IntChoices

from .boards import MINIMAL


def test_minimal_board_model():
    board = parse_board(MINIMAL, "mem.toml")
    pll = board.part("pll_a")
    assert pll.vco.lo == 2_400_000_000 and pll.vco.hi == 3_200_000_000
    assert pll.denominator.fixed == 2**24
    assert pll.output("out1").divider == IntChoices(2, 256, 2)
    assert board.pins["pll_a"] == {"r": 1, "n": Fraction(100), "dividers": {"out0": 20, "out1": 16}}
    assert board.given_settings().plls["pll_a"].n == 100


def _replace(old: str, new: str) -> str:
    assert old in MINIMAL, old
    return MINIMAL.replace(old, new)


# Each row: a broken board, and words the message must contain (the problem and where it is).
BAD_BOARDS = [
    pytest.param("this is [not toml", r"not valid TOML", id="not-toml"),
    pytest.param(_replace('frequency = "25 MHz"', 'frequency = "25 MHzz"'), r"reference\[0\]\.frequency.*unknown unit", id="bad-unit"),
    pytest.param(_replace('frequency = "25 MHz"', "frequency = true"), r"reference\[0\]\.frequency", id="wrong-type"),
    pytest.param(_replace('id = "phy0"', 'id = "phy0"\nfrequncy = "1 MHz"'), r"unknown key 'frequncy'.*did you mean 'frequency'", id="unknown-key"),
    pytest.param(_replace('source = "pll_a.out0"', 'source = "pll_a.out9"'), r"consumer\[0\]\.source.*unknown source 'pll_a.out9'.*did you mean", id="unknown-source"),
    pytest.param(_replace('source = "pll_a.out0"', 'source = "pll_a"'), r"used through one of its outputs", id="pll-without-output"),
    pytest.param(_replace('id = "link"', 'id = "phy0"'), r"duplicate id 'phy0'", id="duplicate-id"),
    pytest.param(_replace('vco = ["2.4 GHz", "3.2 GHz"]', 'vco = ["3.2 GHz", "2.4 GHz"]'), r"pll\[0\]\.vco.*backwards", id="backwards-range"),
    pytest.param(_replace('input = "ref"', 'input = "pll_a.out0"'), r"loop", id="loop"),
    pytest.param(_replace('denominator = "2^24"\n', ""), r"fractional PLL needs its denominator", id="missing-denominator"),
    pytest.param(_replace('[[reference]]', '[[refrence]]'), r"unknown section 'refrence'.*did you mean 'reference'", id="unknown-section"),
    pytest.param(MINIMAL + '\n[synthesis]\nalternatives = 2\n', r"unknown section 'synthesis'.*clockplan synthesize", id="consumer-list-section"),
    pytest.param(_replace('id = "phy0"\n', ""), r"consumer\[0\].*missing key 'id'", id="missing-key"),
    pytest.param(_replace('outputs = { out0 = 20, out1 = 16 }', 'outputs = { out0 = 20, out7 = 16 }'), r"no output 'out7'", id="settings-unknown-output"),
    pytest.param(_replace('out0 = 20,', 'out0 = 20.5,'), r"not a whole number", id="fractional-divider"),
    pytest.param(_replace('mode = "fractional"', 'mode = "fractionl"'), r"unknown PLL mode", id="bad-mode"),
    pytest.param(_replace('id = "pll_a"', 'id = "pll a"'), r"invalid id 'pll a'", id="bad-id"),
    pytest.param(_replace('r = [1, 255]', 'r = [1, 1e30]'), r"not a whole number|implausibly wide|above its range 1 \.\. 1e12", id="absurd-range"),
    pytest.param(MINIMAL.replace('[board]\nname = "test board"', '[board]\nname = "x"\ntemperature = ["85 C", "-40 C"]'), r"board\.temperature.*backwards", id="temperature-backwards"),
]


@pytest.mark.parametrize(("text", "match"), BAD_BOARDS)
def test_bad_board_is_a_clear_error(tmp_path: Path, capsys, text, match):
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    status = main(["audit", str(path)])
    err = capsys.readouterr().err
    assert status == 2
    assert "Traceback" not in err
    assert str(path) in err
    assert re.search(match, err, flags=re.IGNORECASE | re.DOTALL), err


def test_error_carries_the_line_number(tmp_path: Path):
    text = _replace('source = "pll_a.out1"', 'source = "pll_a.out2"')
    with pytest.raises(BoardError) as caught:
        parse_board(text, "x.toml")
    line = text.splitlines().index('source = "pll_a.out2"') + 1
    assert caught.value.line == line
    assert caught.value.key == "consumer[1].source"


def test_toml_syntax_error_carries_the_line_number():
    # tomllib reports the line of a syntax error; the board reader passes it on.
    text = MINIMAL + "\n[[consumer]]\nid = \"broken\n"
    with pytest.raises(BoardError, match="not valid TOML") as caught:
        parse_board(text, "x.toml")
    assert caught.value.line == len(text.splitlines())


@pytest.mark.parametrize(
    ("args", "match"),
    [
        (["audit", "/nonexistent/board.toml"], "file not found"),
        (["audit"], "the following arguments are required"),
        (["frobnicate"], "invalid choice"),
    ],
)
def test_bad_usage_exit_2(capsys, args, match):
    assert main(args) == 2
    err = capsys.readouterr().err
    assert match in err and "Traceback" not in err


def test_folder_and_binary_file(tmp_path: Path, capsys):
    assert main(["audit", str(tmp_path)]) == 2
    binary = tmp_path / "b.toml"
    binary.write_bytes(b"\xff\xfe\x00\x01")
    assert main(["audit", str(binary)]) == 2
    err = capsys.readouterr().err
    assert "folder" in err and "UTF-8" in err


def test_demo_boards_load():
    for path in sorted(Path("boards").glob("*.toml")):
        board = load_board(path)
        assert board.consumers, path
