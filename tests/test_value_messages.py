"""Issue 15, classes 2 and 9: bounded expression nesting, non-ASCII digits, messages
without Python internals, board text escaped, and non-finite results as findings.

References: Python's own ``fractions`` module for the exact values; the Unicode
character database (``unicodedata``) for which characters are digits.
"""

from __future__ import annotations

import dataclasses
import io
import json
import unicodedata
from contextlib import redirect_stderr, redirect_stdout
from fractions import Fraction

import pytest

from clockplan import analysis as analysis_module
from clockplan.analysis import analyze
from clockplan.boardfile import parse_board
from clockplan.cli import main
from clockplan.errors import BoardError, ClockplanError, UnitError, printable
from clockplan.report.json import dumps
from clockplan.units import MAX_EXPRESSION_DEPTH, parse_frequency, parse_number
from tests.boards import MINIMAL


def _run(args: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(args)
    return code, out.getvalue(), err.getvalue()


# --------------------------------------------------------------------------- class 2: nesting


def test_the_nesting_bound_itself_is_read_and_one_more_level_refused():
    # Each sign or parenthesis is one level; the number itself is the last one.
    inside = MAX_EXPRESSION_DEPTH - 1
    assert parse_number("-" * inside + "7") == Fraction((-1) ** inside * 7)
    assert parse_number("(" * inside + "7" + ")" * inside) == 7
    with pytest.raises(UnitError, match=f"more than {MAX_EXPRESSION_DEPTH} deep"):
        parse_number("-" * (inside + 1) + "7")
    with pytest.raises(UnitError, match=f"more than {MAX_EXPRESSION_DEPTH} deep"):
        parse_number("(" * (inside + 1) + "7" + ")" * (inside + 1))


@pytest.mark.parametrize("text", ["(" * 200 + "25" + ")" * 200 + " MHz", "-" * 990 + "25 MHz", "2^" * 300 + "1 MHz"])
def test_deep_expressions_in_a_board_value_are_located_errors(text):
    # Issue 15: 200 nested parentheses (406 characters) or ~1000 signs overflowed the stack.
    board = MINIMAL.replace('frequency = "25 MHz"', f'frequency = "{text}"', 1)
    with pytest.raises(BoardError, match="deep") as info:
        parse_board(board, "deep.toml")
    assert info.value.key == "reference[0].frequency" and info.value.line is not None


def test_a_deep_loop_bandwidth_option_is_exit_2_naming_the_option(tmp_path):
    path = tmp_path / "board.toml"
    path.write_text(MINIMAL, encoding="utf-8")
    code, _, err = _run(["audit", str(path), "--loop-bandwidth", "(" * 200 + "100" + ")" * 200 + " kHz"])
    assert code == 2 and "--loop-bandwidth" in err and "deep" in err


# --------------------------------------------------------------------------- class 9: digits


@pytest.mark.parametrize("digits", ["２５", "٢٥", "۲۵", "२५", "2５"])
def test_non_ascii_digits_are_refused_not_read_as_numbers(digits):
    # The Unicode character database says these are decimal digits worth 2 and 5; Python's
    # int() and \d would read them, a board file must not.
    assert [unicodedata.decimal(c) for c in digits] == [2, 5]
    with pytest.raises(UnitError, match="not an ASCII digit"):
        parse_frequency(f"{digits} MHz")
    board = MINIMAL.replace('frequency = "25 MHz"', f'frequency = "{digits} MHz"', 1)
    with pytest.raises(BoardError, match=r"U\+[0-9A-F]{4}") as info:
        parse_board(board, "digits.toml")
    assert info.value.key == "reference[0].frequency"


def test_ascii_digits_still_read_exactly():
    assert parse_frequency("25 MHz") == 25_000_000
    assert parse_number("148.5/1.001") == Fraction("148.5") / Fraction("1.001")


# --------------------------------------------------------------------------- class 9: messages


@pytest.mark.parametrize("value", ["1979-05-27T07:32:00", "1979-05-27", "07:32:00", "1979-05-27T07:32:00Z"])
def test_a_toml_date_is_refused_without_python_internals(value):
    board = MINIMAL.replace('frequency = "25 MHz"', f"frequency = {value}", 1)
    with pytest.raises(BoardError) as info:
        parse_board(board, "date.toml")
    text = str(info.value)
    assert "datetime" not in text and "TOML date or time" in text and info.value.key == "reference[0].frequency"


@pytest.mark.parametrize("value", ['""', '"   "'])
def test_an_empty_id_says_empty_not_got_a_string(value):
    board = MINIMAL.replace('id = "ref"', f"id = {value}", 1)
    with pytest.raises(BoardError) as info:
        parse_board(board, "empty.toml")
    assert "got a string" not in info.value.message and "empty string" in info.value.message


def test_no_fraction_repr_in_a_derived_budget_message():
    from clockplan.standards.derived import rtc_ppm_for_drift

    with pytest.raises(ClockplanError) as info:
        rtc_ppm_for_drift(Fraction(-1, 2), Fraction(86400))
    assert "Fraction(" not in str(info.value) and "-1/2 s" in str(info.value)


def test_control_characters_in_a_board_name_are_escaped_in_every_report(tmp_path):
    path = tmp_path / "board.toml"
    path.write_text(MINIMAL.replace('name = "test board"', 'name = "red\\u001b[31m\\nfake line"'), encoding="utf-8")
    for args, shows_name in ((["audit"], True), (["audit", "--format", "markdown"], True),
                             (["explain", "phy0"], True), (["audit", "--format", "csv"], False)):
        code, out, err = _run([args[0], str(path), *args[1:]])
        assert code in (0, 1), err
        assert "\x1b" not in out + err and "\nfake line" not in out, args
        assert ("\\x1b[31m\\nfake line" in out) == shows_name, args


def test_control_characters_in_an_unknown_key_are_escaped_in_the_error():
    board = MINIMAL.replace('[[reference]]\n', '[[reference]]\n"bad\\u001b[2Jkey" = 1\n', 1)
    with pytest.raises(BoardError) as info:
        parse_board(board, "keys.toml")
    assert "\x1b" not in str(info.value) and "\\x1b[2J" in str(info.value)


def test_printable_keeps_ordinary_text_and_escapes_the_rest():
    assert printable("Ω µ ü 25 MHz") == "Ω µ ü 25 MHz"
    assert printable("a\tb\x07c\u200bd") == "a\\tb\\x07c\\u200bd"
    assert printable("two\nlines", keep_newlines=True) == "two\nlines"


# --------------------------------------------------------------------------- non-finite results


def test_a_non_finite_budget_figure_is_an_error_finding_and_null_in_the_json(monkeypatch):
    # A stage whose model overflows (planted): the figure must fail the verdict by name, never
    # print as a pass, and the JSON writer must not refuse the document.
    @dataclasses.dataclass(frozen=True)
    class Overflowed:
        def json_fields(self):
            return {"jitter_rms_s": float("nan"), "band": [1.0, float("inf")]}

    def stage(analysis, options):
        first = analysis.consumers[0]
        return analysis.with_consumer(dataclasses.replace(first, jitter=Overflowed()))

    monkeypatch.setattr(analysis_module, "STAGES", [*analysis_module.STAGES, stage])
    result = analyze(parse_board(MINIMAL, "m.toml"))
    found = [f for f in result.findings if f.code == "non-finite"]
    assert [f.node for f in found] == ["phy0", "phy0"] and result.has_errors
    assert "jitter.jitter_rms_s = nan" in " ".join(f.message for f in found)
    document = json.loads(dumps({"value": float("nan"), "list": [float("-inf"), 2.5]}))
    assert document == {"value": None, "list": [None, 2.5]}


def test_a_count_option_with_non_ascii_digits_is_a_usage_error(tmp_path):
    path = tmp_path / "board.toml"
    path.write_text(MINIMAL, encoding="utf-8")
    assert int("１２") == 12  # what Python alone would read
    code, _, err = _run(["audit", str(path), "--samples", "１２"])
    assert code == 2 and "digits 0-9" in err


@pytest.mark.parametrize("budget", ['"0 ppm"', '"-0.0 ppm"', '"0..0 ppm"'])
def test_a_zero_width_ppm_budget_is_judged_not_divided_by(tmp_path, budget):
    # Found by the extreme-magnitude mutation: a ±0 ppm budget divided its margin by zero.
    from tests.boards import RANGES_BOARD

    path = tmp_path / "board.toml"
    path.write_text(RANGES_BOARD.replace('ppm = "±100 ppm"', f"ppm = {budget}", 1), encoding="utf-8")
    code, out, err = _run(["audit", str(path), "--format", "json"])
    assert code == 1, err  # a real oscillator never meets ±0 ppm
    link = {c["id"]: c for c in json.loads(out)["consumers"]}["link"]
    assert link["status"] == "fail"


def test_budget_headroom_of_a_zero_width_budget():
    from clockplan.margins import budget_headroom

    assert budget_headroom(Fraction(3), Fraction(4)) == Fraction(3, 4)
    assert budget_headroom(Fraction(0), Fraction(0)) == 0
    assert budget_headroom(Fraction(-1, 10**9), Fraction(0)) == -1


def test_budget_headroom_of_a_float_margin_over_a_width_below_the_smallest_float():
    # Found by the campaign: a budget of "5e-324 ppm" made float(width) 0.0 and a division by zero.
    from clockplan.margins import budget_headroom

    assert budget_headroom(1e-6, Fraction(1, 10**400)) == 10**9
    assert budget_headroom(-1e-6, Fraction(1, 10**400)) == -(10**9)
    assert budget_headroom(0.5, Fraction(1)) == Fraction(1, 2)


@pytest.mark.parametrize("budget, refused", [('"5e-324 ppm"', True), ('"1e-13 ppm"', True),
                                            ('"1e-12 ppm"', False), ('"0 ppm"', False)])
def test_a_ppm_figure_below_1e_12_ppm_other_than_zero_is_refused(budget, refused):
    from tests.boards import RANGES_BOARD

    text = RANGES_BOARD.replace('ppm = "±100 ppm"', f"ppm = {budget}", 1)
    if refused:
        with pytest.raises(BoardError, match="below its range 0, or 1e-12 ppm"):
            parse_board(text, "tiny.toml")
    else:
        assert parse_board(text, "tiny.toml") is not None
