"""Regression tests for the crashes the fuzz campaign found (bench/fuzz.py, docs/robustness.md).

Each test names the input class that crashed and what crashed; each now ends in
a located ClockplanError (or a result) instead. The inputs are the minimal
reproducers the campaign saved, cut down by hand where that made them clearer.
"""

from __future__ import annotations

import io
from contextlib import redirect_stderr, redirect_stdout
from fractions import Fraction

import pytest

from clockplan.boardfile import load_board, parse_board
from clockplan.errors import BoardError, UnitError
from clockplan.units import parse_frequency, parse_number, parse_ppm
from tests.boards import MINIMAL

_HEAD = '[[reference]]\nid = "ref"\nfrequency = "25 MHz"\n\n[[consumer]]\nid = "c"\nsource = "ref"\n'


def _board(path, text: str | bytes):
    path.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    return load_board(path)


def test_deeply_nested_array_is_a_located_error_not_recursion_error(tmp_path):
    # Crashed: RecursionError inside tomllib on 5000 nested '[' (input class "deep-toml").
    text = _HEAD + 'frequency = "25 MHz"\nextra = ' + "[" * 5000 + "]" * 5000 + "\n"
    with pytest.raises(BoardError, match="nest too deeply") as info:
        _board(tmp_path / "deep.toml", text)
    assert info.value.file == str(tmp_path / "deep.toml")


def test_nesting_deeper_than_the_limit_is_refused_with_its_key(tmp_path):
    # Crashed on depth 300 in later stages' repr/recursion (input class "deep-nesting");
    # now refused at load with the key path (tomlread.MAX_NESTING).
    text = _HEAD + "frequency = " + "[" * 100 + '"25 MHz"' + "]" * 100 + "\n"
    with pytest.raises(BoardError, match="more than 32 levels") as info:
        _board(tmp_path / "nest.toml", text)
    assert info.value.key.startswith("consumer[0].frequency")


def test_integer_literal_of_thousands_of_digits_is_a_board_error(tmp_path):
    # Crashed: tomllib raises a plain ValueError (int string conversion limit of 4300 digits).
    with pytest.raises(BoardError, match="not valid TOML"):
        _board(tmp_path / "big.toml", _HEAD + "frequency = " + "9" * 5000 + "\n")


def test_number_text_of_thousands_of_digits_is_a_unit_error():
    # Crashed: ValueError "Exceeds the limit (4300 digits)" from Fraction("999...") (input class "absurd-value").
    with pytest.raises(UnitError, match="too long to be a number"):
        parse_number("9" * 5000)


def test_power_tower_is_refused_before_it_eats_the_memory():
    # "(2^4096)^4096" would be a 5-million-digit integer; "((2^4096)^4096)^4096" never finishes.
    with pytest.raises(UnitError, match="too large"):
        parse_number("((2^4096)^4096)^4096")
    # 2^48, the largest fractional-N modulus of common practice, still reads exactly (fractions as reference).
    assert parse_number("2^48") == Fraction(2**48)


@pytest.mark.parametrize(
    "text",
    ["0.5 mHz", "2 THz", "1e30 Hz", "1e400 Hz"],
)
def test_frequencies_outside_one_millihertz_to_one_terahertz_are_refused(text):
    # 1e30 Hz and 1e400 Hz reached the planner and the float conversions of the reports.
    with pytest.raises(UnitError, match="outside 1 mHz .. 1 THz"):
        parse_frequency(text)


def test_the_frequency_bounds_themselves_are_accepted():
    # Bounds chosen for clockplan (docs/robustness.md): 1 mHz and 1 THz, exactly.
    assert parse_frequency("1 mHz") == Fraction(1, 1000)
    assert parse_frequency("1 THz") == Fraction(10**12)


@pytest.mark.parametrize("text", ["200 %", "-150..0 %", "1e9 ppm", "±1000001 ppm"])
def test_frequency_errors_beyond_one_hundred_percent_are_refused(text):
    # An error of -100 % is 0 Hz; beyond it the ppm stage produced negative frequencies.
    with pytest.raises(UnitError, match="beyond ±100 %"):
        parse_ppm(text)


def test_byte_order_mark_is_accepted(tmp_path):
    # Input class "bom": a UTF-8 BOM from a Windows editor failed as "invalid statement at line 1".
    board = _board(tmp_path / "bom.toml", b"\xef\xbb\xbf" + MINIMAL.encode())
    assert board.name == "test board"


def test_file_larger_than_the_cap_is_refused_without_reading_it_all(tmp_path):
    from clockplan.tomlread import MAX_FILE_BYTES

    path = tmp_path / "huge.toml"
    with path.open("wb") as stream:
        stream.write(MINIMAL.encode())
        stream.seek(MAX_FILE_BYTES + 10)
        stream.write(b"\n")
    with pytest.raises(BoardError, match="larger than 16 MB") as info:
        load_board(path)
    assert info.value.file == str(path)


def test_denominator_above_two_to_the_sixty_fourth_is_refused():
    text = MINIMAL.replace('denominator = "2^24"', 'denominator = "2^400"')
    with pytest.raises(BoardError, match="above (its range 1 \\.\\. )?2\\^64") as info:
        parse_board(text, "b.toml")
    assert info.value.key == "pll[0].denominator"


def test_many_consumers_with_plots_stay_bounded():
    # Input class "many-parts": 300 consumers with phase noise made the HTML report lay out
    # 300 matplotlib panels (minutes). The figures now draw at most MAX_PANELS.
    pytest.importorskip("matplotlib")
    from clockplan.report.plots import MAX_PANELS, PhaseNoiseTrace, phase_noise_figure

    traces = [PhaseNoiseTrace(f"c{k}", [1e3, 1e6], [-100.0, -150.0], (1.2e4, 2e7)) for k in range(MAX_PANELS + 50)]
    figure = phase_noise_figure(traces)
    assert len([ax for ax in figure.axes if ax.get_visible()]) == MAX_PANELS
    assert f"the first {MAX_PANELS} of {MAX_PANELS + 50}" in figure.get_suptitle()


def test_internal_error_in_the_cli_is_one_line_with_status_four(monkeypatch, tmp_path):
    from clockplan import cli

    def broken(args):
        raise ZeroDivisionError("boom")

    monkeypatch.setattr(cli, "_run_audit", broken)
    monkeypatch.delenv(cli.DEBUG_ENV, raising=False)
    path = tmp_path / "b.toml"
    path.write_text(MINIMAL)
    err = io.StringIO()
    with redirect_stderr(err), redirect_stdout(io.StringIO()):
        status = cli.main(["audit", str(path)])
    assert status == cli.EXIT_BUG == 4
    text = err.getvalue()
    assert text.count("\n") == 1 and "Traceback" not in text
    assert "internal error" in text and "ZeroDivisionError: boom" in text and "CLOCKPLAN_DEBUG=1" in text


def test_debug_variable_re_raises_the_internal_error(monkeypatch, tmp_path):
    from clockplan import cli

    def broken(args):
        raise ZeroDivisionError("boom")

    monkeypatch.setattr(cli, "_run_audit", broken)
    monkeypatch.setenv(cli.DEBUG_ENV, "1")
    path = tmp_path / "b.toml"
    path.write_text(MINIMAL)
    with pytest.raises(ZeroDivisionError):
        cli.main(["audit", str(path)])


# --------------------------------------------------------------------------- safety: a board file is data


_CONSUMER_LIST = '''
[board]
name = "paths"

[synthesis]
library = "{library}"

[[consumer]]
id = "phy"
frequency = "125 MHz"
standard = "1000BASE-T"
'''


@pytest.mark.parametrize("library", ["../outside.toml", "/etc/passwd", "sub/../../outside.toml"])
def test_board_named_library_outside_the_board_folder_is_refused(tmp_path, library):
    from clockplan.synth.input import load_consumer_list
    from clockplan.synth.synthesize import library_for

    folder = tmp_path / "board"
    folder.mkdir()
    (tmp_path / "outside.toml").write_text("")
    path = folder / "list.toml"
    path.write_text(_CONSUMER_LIST.format(library=library))
    with pytest.raises(BoardError, match="outside the board file's folder") as info:
        library_for(load_consumer_list(path))
    assert info.value.key == "synthesis.library" and info.value.file == str(path)


def test_a_link_inside_the_folder_that_leads_outside_is_refused(tmp_path):
    from clockplan.synth.input import load_consumer_list
    from clockplan.synth.synthesize import library_for

    folder = tmp_path / "board"
    folder.mkdir()
    (tmp_path / "outside.toml").write_text("")
    (folder / "parts.toml").symlink_to(tmp_path / "outside.toml")
    path = folder / "list.toml"
    path.write_text(_CONSUMER_LIST.format(library="parts.toml"))
    with pytest.raises(BoardError, match="outside"):
        library_for(load_consumer_list(path))


def test_outside_library_is_read_when_the_command_line_allows_it(tmp_path, capsys):
    from clockplan.cli import main

    folder = tmp_path / "board"
    folder.mkdir()
    path = folder / "list.toml"
    path.write_text(_CONSUMER_LIST.format(library="../missing.toml"))
    assert main(["synthesize", str(path), "--time-limit", "1"]) == 2
    assert "outside the board file's folder" in capsys.readouterr().err
    # Allowed: the path is followed, and the missing file is the error now.
    assert main(["synthesize", str(path), "--time-limit", "1", "--allow-outside-paths"]) == 2
    assert "file not found" in capsys.readouterr().err


def test_board_file_has_no_include_and_runs_no_code(tmp_path):
    # A board file is TOML data: an include section is an unknown section, and text that
    # looks like code is read as a number or refused (units.py parses, never evaluates).
    with pytest.raises(BoardError, match="unknown section 'include'"):
        parse_board(MINIMAL + '\n[include]\nfile = "/etc/passwd"\n', "b.toml")
    text = MINIMAL.replace('frequency = "125 MHz"', 'frequency = "__import__(\'os\').system(\'true\') MHz"')
    with pytest.raises(BoardError, match="consumer\\[0\\].frequency|cannot read"):
        parse_board(text, "b.toml")


# --------------------------------------------------------------------------- crashes of the campaign (seed 11)


def test_pll_without_outputs_is_a_located_missing_key():
    # Crashed: KeyError 'outputs' from TableReader.sub (input class "line-shuffle", case #660).
    text = MINIMAL.replace("outputs.out0 = { divider = [1, 256] }\n", "").replace(
        "outputs.out1 = { divider = { min = 2, max = 256, step = 2 } }\n", "").replace(
        ", outputs = { out0 = 20, out1 = 16 }", "")
    with pytest.raises(BoardError, match="missing key 'outputs'") as info:
        parse_board(text, "b.toml")
    assert info.value.key == "pll[0]" and info.value.line is not None


_CASCADE_WITH_HUGE_VCO_MULTIPLES = '''
[[reference]]
id = "ref0"
frequency = "156.25 MHz"

[[pll]]
id = "pll0"
input = "ref0"
vco = ["1000 MHz", "3000 MHz"]
pfd = ["5 MHz", "100 MHz"]
n = [8, 1023]
r = { min = 14, max = 39, step = 4 }
outputs = { out1 = { divider = { min = 253, max = 305, step = 2 } } }

[[pll]]
id = "pll2"
input = "pll0.out1"
vco = ["300 MHz", "900 MHz"]
pfd = ["1 MHz", "200 MHz"]
n = [8, 65535]
r = [54, 54]
mode = "fractional"
denominator = "2^24"
outputs = { out0 = { divider = [42, 346] } }

[[consumer]]
id = "load0"
source = "pll2.out0"
frequency = "1 Hz"
'''


def test_cascade_wishing_for_a_one_hertz_output_does_not_list_every_vco_multiple():
    # Crashed: MemoryError (input class "bom", a valid board; case #618): the planner listed
    # every multiple of 1 Hz in a 300-900 MHz VCO range to keep the first 16.
    from clockplan.plan.board_planner import PlanOptions, plan_board

    board = parse_board(_CASCADE_WITH_HUGE_VCO_MULTIPLES, "b.toml")
    plan = plan_board(board, PlanOptions(time_limit_s=0.5))
    assert plan.best is not None


_EXPLAIN_WITH_WIDE_RELAXATIONS = '''
[[reference]]
id = "ref1"
frequency = "48 MHz"

[[pll]]
id = "pll1"
input = "ref1"
vco = ["4000 MHz", "12000 MHz"]
pfd = ["5 MHz", "200 MHz"]
n = [4, 65535]
outputs = { out1 = { divider = [107, 107] } }

[[consumer]]
id = "load0"
source = "pll1.out1"
frequency = "50 MHz"

[[consumer]]
id = "load3"
source = "pll1.out1"
frequency = "1.8432 MHz"
'''


def test_explaining_an_infeasible_plan_honours_its_time_limit():
    # Hung (> 60 s, a valid board, case #181): the explanation's relaxed searches (R up to 65536)
    # ran without a deadline. They now share the plan command's --time-limit and say when it ran out.
    from clockplan.plan.board_planner import PlanOptions, plan_board
    from clockplan.plan.explain import explain_infeasible

    plan = plan_board(parse_board(_EXPLAIN_WITH_WIDE_RELAXATIONS, "b.toml"), PlanOptions(time_limit_s=0.5))
    assert not plan.feasible  # one fixed divider of 107 cannot give 50 MHz and 1.8432 MHz at once
    explanation = explain_infeasible(plan, time_limit_s=0.05)
    codes = [c.constraint for c in explanation.conflicts]
    assert codes  # an explanation, complete or saying where it stopped
    if "time-limit" in codes:
        assert "unreachable" not in codes  # unexamined is never called unreachable


def test_rich_markup_in_a_board_name_prints_as_text_in_the_loop_command(tmp_path, capsys):
    # Found while checking the escaping of user text: 'clockplan loop' printed the board name
    # as rich markup, so a name holding "[/]" raised a MarkupError (now exit 4 would say "bug").
    from pathlib import Path

    from clockplan.cli import main

    text = Path("boards/sampling-receiver.toml").read_text(encoding="utf-8")
    path = tmp_path / "receiver.toml"
    path.write_text(text.replace('name = "Sampling receiver"', 'name = "[/] [bold]receiver[/bold]"', 1), encoding="utf-8")
    status = main(["loop", str(path), "conv_synth", "--no-color", "--width", "140"])
    out = capsys.readouterr().out
    assert status == 1  # the demo fails on purpose; loop exits by audit's rules (issue 15)
    assert "[/] [bold]receiver[/bold]" in out


def test_an_r_range_of_a_million_million_values_is_searched_on_its_smallest_values():
    # Hung (> 60 s, input class "huge-ranges", case #613 of the second campaign): the solver built
    # one grid per allowed R, and the explanation's relaxed R set (up to 65536) was searched whole
    # at every visited point. At most SearchLimits.max_r_values R values are searched now, with a note.
    from clockplan.plan.board_planner import PlanOptions, plan_board

    text = MINIMAL.replace("r = [1, 255]", "r = [1, 1000000000000]").replace('pfd = ["1 MHz", "100 MHz"]', 'pfd = ["1 Hz", "100 MHz"]')
    text = text.replace("settings = { r = 1, n = \"100\", outputs = { out0 = 20, out1 = 16 } }", "")
    plan = plan_board(parse_board(text, "b.toml"), PlanOptions(time_limit_s=0.5))
    assert plan.best is not None
    assert plan.feasible  # 2.5 GHz / 20 and / 16: R = 1 stays among the smallest values searched
