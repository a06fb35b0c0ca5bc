"""Numbers that parse but are no physical quantity (issue 15, class 1): refused at load, located.

Each row plants one value of the issue's list (or a key of the same family) in a
board that otherwise audits cleanly and checks that every command that reads the
board ends in exit 2 with a message naming the key path, its line and the range,
never an internal error (exit 4). The ranges are ours (``clockplan/limits.py``,
``docs/board-format.md`` "Ranges of numeric keys"); the bounds themselves are
checked on both sides, so a planted off-by-one fails.
"""

from __future__ import annotations

import io
import json
import math
from contextlib import redirect_stderr, redirect_stdout
from fractions import Fraction

import pytest

from clockplan.boardfile import parse_board
from clockplan.cli import main
from clockplan.errors import BoardError
from clockplan.limits import LIMITS, check_limits, limit_for
from tests.boards import RANGES_BOARD

RICH = RANGES_BOARD

# (id, text replaced, its replacement, key path of the error); the first eleven are issue 15's own list.
CASES = [
    ("jitter-budget-1e400-ps", 'jitter = "1 ps"', 'jitter = "1e400 ps"', "consumer[1].jitter"),
    ("lifetime-1e300-years", 'lifetime = "10 years"', 'lifetime = "1e300 years"', "board.lifetime"),
    ("feedback-ratio-1e400", 'n = "100"', 'n = "1e400"', "pll[0].settings.n"),
    ("feedback-ratio-5e-324", 'n = "100"', "n = 5e-324", "pll[0].settings.n"),
    ("feedback-range-1e400", "n = [16, 4095]", 'n = [16, "1e400"]', "pll[0].n"),
    ("converter-snr-1e400", 'snr = "66 dB"', 'snr = "1e400 dB"', "consumer[0].converter.snr"),
    ("motional-c1-1e400-F", 'c1 = "5 fF"', 'c1 = "1e400 F"', "reference[0].load.c1"),
    ("warmup-1e400-s", 'warmup_time = "5 min"', 'warmup_time = "1e400 s"', "reference[1].power.warmup_time"),
    ("curve-point-1e400-C", '[85, "-10 ppm"]', '["1e400 C", "-10 ppm"]', "reference[2].temperature_curve.points"),
    ("vco-gain-1e308", 'kvco = "30 MHz/V"', 'kvco = "1e308 Hz/V"', "pll[0].loop_filter.kvco"),
    ("zero-factor-1e200", "gamma = 1.0", "gamma = 1e200", "pll[0].loop_filter.gamma"),
    ("fom-2^63", 'fom = "-226 dBc/Hz"', "fom = 9223372036854775808", "pll[0].noise.fom"),
    ("at-cut-angle-1e308", "angle_offset_arcmin = 6", "angle_offset_arcmin = 1e308", "reference[0].temperature_curve.angle_offset_arcmin"),
    # The same families at the other end and their neighbours.
    ("jitter-budget-5e-324-s", 'jitter = "1 ps"', 'jitter = "5e-324 s"', "consumer[1].jitter"),
    ("motional-c1-tiny", 'c1 = "5 fF"', 'c1 = "1e-300 F"', "reference[0].load.c1"),
    ("load-1e300-F", 'specified = "10 pF"', 'specified = "1e300 F"', "reference[0].load.specified"),
    ("board-temperature-1e400", 'temperature = ["-40 C", "85 C"]', 'temperature = ["-40 C", "1e400 C"]', "board.temperature"),
    ("flicker-fom-positive", 'flicker_fom = "-265 dBc/Hz"', 'flicker_fom = "1e300 dBc/Hz"', "pll[0].noise.flicker_fom"),
    ("charge-pump-1e300-A", 'charge_pump = "2.5 mA"', 'charge_pump = "1e300 A"', "pll[0].loop_filter.charge_pump"),
    ("additive-jitter-1e400", 'additive_jitter = "60 fs"', 'additive_jitter = "1e400 s"', "buffer[0].additive_jitter"),
    ("supply-1e300-V", 'supply = "12 V"', 'supply = "1e300 V"', "reference[1].power.supply"),
    ("modulator-order-2^63", "modulator_order = 3", "modulator_order = 9223372036854775807", "pll[0].noise.modulator_order"),
    ("divider-1e300", "divider = [1, 256]", 'divider = [1, "1e300"]', "pll[0].outputs.out0.divider"),
]


def _run(args: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(args)
    return code, out.getvalue(), err.getvalue()


def test_the_base_board_reads_and_audits():
    # The rows below change one value each: the board itself must be good.
    board = parse_board(RICH, "rich.toml")
    assert len(board.references) == 6 and len(board.plls) == 4


@pytest.mark.parametrize("old, new, key", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_an_unphysical_value_is_refused_at_load_with_its_key_and_range(old, new, key):
    assert old in RICH
    with pytest.raises(BoardError) as info:
        parse_board(RICH.replace(old, new, 1), "rich.toml")
    err = info.value
    assert err.key == key and err.file == "rich.toml" and err.line is not None
    assert "its range" in err.message and "docs/board-format.md" in (err.hint or "")


@pytest.mark.parametrize("command", [["audit"], ["audit", "--format", "json"], ["plan"], ["explain", "link"], ["loop", "pll_a"]])
@pytest.mark.parametrize("old, new, key", [c[1:] for c in CASES[:13]], ids=[c[0] for c in CASES[:13]])
def test_every_command_ends_in_exit_2_never_an_internal_error(tmp_path, command, old, new, key):
    path = tmp_path / "board.toml"
    path.write_text(RICH.replace(old, new, 1), encoding="utf-8")
    code, out, err = _run([command[0], str(path), *command[1:]])
    assert code == 2, (code, err[-500:])
    assert f"{path}:" in err and key in err and "its range" in err


@pytest.mark.parametrize("limit", LIMITS, ids=[limit.path for limit in LIMITS])
def test_every_range_end_is_accepted_and_just_outside_refused(limit):
    # The ends of each row are inside (closed ranges); a value a hair beyond either end is
    # outside. Exact Fractions where the row is exact, else the neighbouring float (math.nextafter).
    def beyond(bound, direction):
        if isinstance(bound, Fraction) or isinstance(bound, int):
            return Fraction(bound) + direction * Fraction(1, 10**30)
        return math.nextafter(bound, direction * math.inf)

    assert limit.inside(limit.low) and limit.inside(limit.high)
    assert not limit.inside(beyond(limit.high, +1))
    below = beyond(limit.low, -1)
    assert limit.inside(below) == (limit.allow_zero and below == 0)


def test_zero_is_admitted_only_where_the_row_says_so():
    additive = limit_for(("buffer", "additive_jitter"))
    budget = limit_for(("consumer", "jitter"))
    assert additive is not None and additive.inside(0)
    assert budget is not None and not budget.inside(0)


def test_the_most_specific_row_wins():
    # c1 is a crystal's motional capacitance under load, a loop-filter capacitor under loop_filter.
    assert limit_for(("reference", "load", "c1")).shown == "1 aF .. 1 nF"
    assert limit_for(("pll", "loop_filter", "c1")).shown == "1 aF .. 1 F"
    assert limit_for(("reference", "name")) is None


def test_a_value_that_does_not_parse_is_left_to_its_reader():
    # The range check skips text it cannot read; the reader's own error explains the syntax.
    seen = []
    check_limits({"board": {"lifetime": "ten years"}}, lambda *args: seen.append(args) or BoardError("x"))
    assert seen == []


def test_the_json_of_the_base_board_is_finite(tmp_path):
    path = tmp_path / "board.toml"
    path.write_text(RICH, encoding="utf-8")
    code, out, err = _run(["audit", str(path), "--format", "json"])
    assert code in (0, 1), err
    json.loads(out, parse_constant=lambda name: pytest.fail(f"{name} in the JSON"))


#: Rows of the range table the fuzz base board leaves out: alternatives to a key it has (a
#: crystal's stray tolerance, an oven's power as currents, a loop as polynomials, a spread as a
#: range, a uart's own divider) and the parts library's own keys (cost, output_divider).
_NOT_IN_THE_FUZZ_BOARD = {
    "*.load.stray_tolerance", "*.load.capacitor_tolerance", "*.power.steady_current", "*.power.warmup",
    "*.spread.range", "*.vco_phase_noise.floor", "pll[].output_divider", "pll[].max_denominator",
    "*.loop.open_loop_numerator", "*.loop.open_loop_denominator", "consumer[].spread", "consumer[].uart.divider",
    "consumer[].uart.frame_bits", "consumer[].uart.sample_ticks", "*.cost",
}


def test_the_fuzz_base_board_has_a_value_for_every_other_row_of_the_range_table():
    # tests/strategies.py plants extreme magnitudes in the numeric leaves of RANGES_BOARD: the
    # campaign reaches a key of the table only if the board has it.
    import tomllib

    paths, stack = set(), [(tomllib.loads(RANGES_BOARD), ())]
    while stack:
        item, path = stack.pop()
        if isinstance(item, dict):
            for key, value in item.items():
                paths.add(path + (key,))
                stack.append((value, path + (key,)))
        elif isinstance(item, list):
            stack += [(value, path) for value in item]
    missing = {limit.path for limit in LIMITS if not any(limit.matches(path) for path in paths)}
    assert missing == _NOT_IN_THE_FUZZ_BOARD


def test_board_format_lists_the_range_table_as_the_code_has_it():
    from pathlib import Path

    from clockplan.limits import limits_markdown

    text = (Path(__file__).resolve().parents[1] / "docs" / "board-format.md").read_text(encoding="utf-8")
    assert limits_markdown() in text
