"""The campaign's command lines (tests/fuzz_commands.py): every command is drawn, and each one runs clean.

A bounded slice of what bench/fuzz.py runs at scale: one valid generated board
through each command with small time limits, ending in a status of 0-3 with
its inputs unchanged and within its time limit plus the campaign's slack.
"""

from __future__ import annotations

import random

import pytest

from tests.fuzz_commands import COMMANDS, CommandCase, command_case, consumer_list, mutate_library
from tests.fuzz_harness import FuzzCrash, run_command_case
from tests.strategies import RandomPicker, valid_board, to_toml


def _board(seed: int = 5) -> bytes:
    return to_toml(valid_board(RandomPicker(random.Random(seed)))).encode("utf-8")


def test_the_drawn_command_lines_cover_every_command():
    board = _board()
    drawn = {command_case(RandomPicker(random.Random(seed)), board).command for seed in range(300)}
    assert drawn == set(COMMANDS)


_CASES = [
    CommandCase("audit", ("audit", "{board}", "--json", "--time-limit", "0.2")),
    CommandCase("plan", ("plan", "{board}", "--time-limit", "0.2", "--write", "{out}/planned.toml")),
    CommandCase("explain", ("explain", "{board}", "nobody", "--time-limit", "0.2")),
    CommandCase("diagram", ("diagram", "{board}", "--output", "{out}/tree.dot")),
    CommandCase("plots", ("plots", "{board}", "--output-dir", "{out}/plots", "--time-limit", "0.2")),
    CommandCase("loop", ("loop", "{board}", "nopll")),
    CommandCase("standards", ("standards", "pcie")),
    CommandCase("new", ("new", "{out}/starter.toml", "--name", "a\x1b[31mb")),
]


@pytest.mark.parametrize("case", _CASES, ids=[c.command for c in _CASES])
def test_each_command_ends_in_a_status_with_its_inputs_unchanged(case):
    files = {"board": _board()} if "{board}" in case.args else {}
    status, _, stderr = run_command_case(CommandCase(case.command, case.args, files), hang_s=120)
    assert status in (0, 1, 2, 3)
    if status == 2:
        assert stderr.count("clockplan: error:") == 1


def test_synthesize_reads_the_boards_consumers_and_a_mutated_library():
    board = _board()
    listed = consumer_list(board)
    assert b"[[consumer]]" in listed and b"source" not in listed  # a consumer list: no sources
    library = mutate_library(RandomPicker(random.Random(3)))
    case = CommandCase("synthesize", ("synthesize", "{board}", "--library", "{library}", "--time-limit", "0.3", "--json"),
                       {"board": listed, "library": library})
    status, _, _ = run_command_case(case, hang_s=120)
    assert status in (0, 1, 2, 3)


def test_a_run_past_its_time_limit_is_an_overrun():
    # With no slack at all even a quick run is late: the check fires, naming the command line.
    case = CommandCase("audit", ("audit", "{board}", "--time-limit", "0.05"), {"board": _board()})
    with pytest.raises(FuzzCrash, match="overrun"):
        run_command_case(case, hang_s=120, slack_s=-1.0)
