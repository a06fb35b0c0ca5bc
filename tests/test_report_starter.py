"""``clockplan new``: a starter board that loads, audits clean, and never replaces a file.

Its frequencies are checked by hand from the synthesizer definition
(f_out = f_ref / R x N / D); the UART target is 16 x 115200 baud = 1.8432 MHz
(16x oversampling, common practice).
"""

import os
import tomllib
from fractions import Fraction

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import load_board
from clockplan.cli import main
from clockplan.errors import ClockplanError
from clockplan.starter import starter_text, write_starter


def test_starter_is_valid_toml_and_audits_clean(tmp_path, capsys):
    path = tmp_path / "board.toml"
    assert main(["new", str(path)]) == 0
    assert "clockplan audit" in capsys.readouterr().out
    tomllib.loads(path.read_text(encoding="utf-8"))  # the TOML reader of the standard library
    analysis = analyze(load_board(path))
    assert not analysis.has_errors
    actual = {c.id: c.actual_hz for c in analysis.consumers}
    assert actual["eth_phy"] == Fraction(24_000_000) / 1 * 125 / 24 == 125_000_000
    assert actual["soc_core"] == Fraction(24_000_000) * 125 / 30 == 100_000_000
    assert actual["uart"] == Fraction(100_000_000, 54)
    # Within the ±2 % it allows: 100/54 MHz against 16 x 115200 Hz.
    assert abs(actual["uart"] / (16 * 115_200) - 1) <= Fraction(2, 100)
    assert main(["audit", str(path), "--json"]) == 0


def test_every_key_is_explained_by_a_comment():
    text = starter_text()
    assert text.count("#") > 25
    for section in ("[board]", "[[reference]]", "[[pll]]", "[[divider]]", "[[buffer]]", "[[consumer]]"):
        index = text.index(section)
        assert "#" in text[max(0, index - 120):index], f"{section} has a comment before it"


@pytest.mark.parametrize("name", ['Bench "unit" 2', "back\\slash", "tab\there", "Ünïcode ✓"])
def test_board_name_is_quoted_safely(name, tmp_path):
    path = write_starter(tmp_path / "b.toml", name)
    assert tomllib.loads(path.read_text(encoding="utf-8"))["board"]["name"] == name


def test_never_over_an_existing_file(tmp_path, capsys):
    path = tmp_path / "board.toml"
    path.write_text("mine")
    assert main(["new", str(path)]) == 2
    assert "already exists" in capsys.readouterr().err
    assert path.read_text() == "mine"
    assert [p.name for p in tmp_path.iterdir()] == ["board.toml"]


def test_a_file_appearing_meanwhile_is_not_replaced(tmp_path, monkeypatch):
    path = tmp_path / "board.toml"
    real_link = os.link

    def racing_link(source, target):
        path.write_text("theirs")  # another program creates the file just before ours lands
        return real_link(source, target)

    monkeypatch.setattr("clockplan.fileio.os.link", racing_link)
    with pytest.raises(ClockplanError, match="already exists"):
        write_starter(path)
    assert path.read_text() == "theirs"
    assert [p.name for p in tmp_path.iterdir()] == ["board.toml"]


def test_missing_folder_is_a_clear_error(tmp_path):
    with pytest.raises(ClockplanError, match="does not exist"):
        write_starter(tmp_path / "nowhere" / "b.toml")


def test_new_file_is_readable_by_others(tmp_path):
    old = os.umask(0o022)
    try:
        path = write_starter(tmp_path / "b.toml")
    finally:
        os.umask(old)
    assert path.stat().st_mode & 0o777 == 0o644
