"""A bounded, reproducible slice of the fuzz campaign (the full one is bench/fuzz.py).

Property (the contract of DEVELOPERS.md, "anything the user can cause raises a
ClockplanError subclass with a location"): every generated board file, valid
or mutated, ends in results or in a located ClockplanError, through load,
audit (ppm and jitter stages), every report, plan and the plan reports; and
through the CLI in an exit status of 0-3 with a one-message error, never a
traceback. ``derandomize=True`` makes CI draw the same cases every run.
"""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings

from tests.fuzz_harness import run_case, run_cli_case
from tests.strategies import board_cases, valid_boards

_SETTINGS = dict(deadline=None, derandomize=True, database=None,
                 suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


@settings(max_examples=12, **_SETTINGS)
@given(valid_boards())
def test_valid_boards_load_and_run_through_every_stage(text):
    outcome = run_case(text.encode("utf-8"), time_limit_s=0.2, hang_s=120, full_html=False)
    # A valid board loads and audits; planning may find no plan (InfeasibleError at "plan").
    assert outcome.stage in ("done", "plan"), outcome


@settings(max_examples=30, **_SETTINGS)
@given(board_cases())
def test_mutated_boards_end_in_results_or_a_located_error(case):
    outcome = run_case(case.data, time_limit_s=0.2, hang_s=120, full_html=False)
    assert outcome.label == "ok" or outcome.label.endswith("Error")


@settings(max_examples=6, **_SETTINGS)
@given(board_cases())
def test_the_cli_answers_with_a_status_and_one_message(case):
    status, _, stderr = run_cli_case(case.data, ["audit", "--json"], hang_s=120)
    assert status in (0, 1, 2, 3)
    if status == 2:
        assert stderr.startswith("clockplan: error: ")


@settings(max_examples=4, **_SETTINGS)
@given(board_cases(mutation="deep-toml"))
def test_deep_nesting_through_the_plan_command(case):
    status, _, stderr = run_cli_case(case.data, ["plan", "--time-limit", "0.2"], hang_s=120)
    assert status == 2 and "nest" in stderr


@settings(max_examples=4, **_SETTINGS)
@given(board_cases(mutation="binary-junk"))
def test_binary_junk_is_refused_or_read(case):
    outcome = run_case(case.data, time_limit_s=0.2, hang_s=120, full_html=False)
    assert outcome.label in ("ok", "BoardError", "UnitError", "InfeasibleError")


@settings(max_examples=5, **_SETTINGS)
@given(board_cases(mutation="extreme-magnitude"))
def test_extreme_magnitudes_in_any_numeric_key_end_in_results_or_a_located_error(case):
    # Issue 15: 1e400, 5e-324, 2^63 ... planted in one numeric leaf of a board that has most keys.
    outcome = run_case(case.data, time_limit_s=0.2, hang_s=120, full_html=False)
    assert outcome.label == "ok" or outcome.label.endswith("Error")


@settings(max_examples=4, **_SETTINGS)
@given(board_cases(mutation="deep-expression"))
def test_deep_expressions_end_in_results_or_a_located_error(case):
    outcome = run_case(case.data, time_limit_s=0.2, hang_s=120, full_html=False)
    assert outcome.label in ("ok", "BoardError", "UnitError", "InfeasibleError")


@settings(max_examples=4, **_SETTINGS)
@given(board_cases(mutation="non-ascii-digits"))
def test_non_ascii_digits_are_never_read_as_numbers(case):
    status, _, stderr = run_cli_case(case.data, ["audit", "--json"], hang_s=120)
    text = case.data.decode("utf-8", errors="replace")
    if any(char.isdigit() and not char.isascii() for char in text):  # a second mutation may drop the key
        assert status == 2 and stderr.startswith("clockplan: error: "), stderr


@settings(max_examples=3, **_SETTINGS)
@given(board_cases(mutation="control-text"))
def test_control_characters_in_board_text_never_reach_the_terminal(case):
    status, stdout, stderr = run_cli_case(case.data, ["audit"], hang_s=120)
    assert status in (0, 1, 2, 3)
    assert "\x1b" not in stdout + stderr and "\x07" not in stdout + stderr
