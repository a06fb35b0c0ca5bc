"""Time limits: every long-running command takes --time-limit, honours it, and labels what it did.

The limits here are tiny (a microsecond), so each stage is sure to be past its
deadline at its first check; nothing is asserted about how fast anything runs.
"""

from __future__ import annotations

import json
import time
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from clockplan.analysis import AnalysisOptions, analyze
from clockplan.boardfile import load_board
from clockplan.cli import main
from clockplan.ppm.accuracy import ConsumerBudget
from clockplan.ppm.montecarlo import ConsumerChain, monte_carlo_yield
from clockplan.ppm.oscillator import OscillatorSpec
from clockplan.units import parse_ppm

TINY = "0.000001"
GATEWAY = "boards/industrial-gateway.toml"  # a board whose references have accuracy data (Monte Carlo runs)
CHUNK = 1 << 17  # the Monte Carlo's default chunk: a run cut short has done whole chunks


def test_monte_carlo_past_its_deadline_runs_one_chunk_and_says_so():
    xo = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    consumer = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±10 ppm")))
    past = time.monotonic() - 1.0
    cut = monte_carlo_yield([xo], [consumer], (25, 25), 0.0, samples=50_000, seed=3, chunk=10_000, deadline=past)
    assert (cut.samples, cut.requested, cut.complete) == (10_000, 50_000, False)
    # The yield is over the boards simulated: a uniform ±20 ppm error lands inside ±10 ppm with
    # probability 0.5 (scipy.stats.uniform), within five binomial standard errors of 10,000 boards.
    expected = stats.uniform(loc=-20e-6, scale=40e-6).cdf(10e-6) - stats.uniform(loc=-20e-6, scale=40e-6).cdf(-10e-6)
    assert abs(cut.yields[0] - expected) <= 5 * np.sqrt(expected * (1 - expected) / cut.samples)
    assert cut.standard_error(0) == pytest.approx(np.sqrt(cut.yields[0] * (1 - cut.yields[0]) / 10_000))
    # The same seed and chunk give the same first chunk: the cut run equals a full run of 10,000 boards.
    alone = monte_carlo_yield([xo], [consumer], (25, 25), 0.0, samples=10_000, seed=3, chunk=10_000)
    assert cut.yields == alone.yields and alone.complete
    unlimited = monte_carlo_yield([xo], [consumer], (25, 25), 0.0, samples=50_000, seed=3, chunk=10_000)
    assert (unlimited.samples, unlimited.complete) == (50_000, True)


def test_a_cut_run_keeps_only_the_errors_it_sampled():
    # Kept errors (for the histogram) must be the boards simulated, never uninitialised memory:
    # asked to keep 30,000 but cut after one chunk of 10,000, it keeps 10,000, all inside the
    # part's ±20 ppm tolerance (a uniform draw cannot leave its bounds).
    xo = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    consumer = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±10 ppm")))
    past = time.monotonic() - 1.0
    cut = monte_carlo_yield(
        [xo], [consumer], (25, 25), 0.0, samples=50_000, seed=3, chunk=10_000, deadline=past, keep_errors=30_000
    )
    (kept,) = cut.reference_errors
    assert kept.shape == (10_000, 2)  # each board's lowest and highest error
    assert np.all(np.abs(kept) <= 20e-6)


def _audit_json(capsys, *extra: str) -> dict:
    status = main(["audit", GATEWAY, "--json", "--samples", "300000", *extra])
    assert status in (0, 1)
    return json.loads(capsys.readouterr().out)


def test_audit_reports_k_of_n_boards_when_the_monte_carlo_is_cut(capsys):
    doc = _audit_json(capsys, "--time-limit", TINY)
    carlo = doc["monte_carlo"]
    assert (carlo["samples"], carlo["requested_samples"], carlo["complete"]) == (CHUNK, 300_000, False)
    [warning] = [f for f in doc["findings"] if f["code"] == "monte-carlo-time-limit"]
    assert warning["severity"] == "warning" and "131,072 of 300,000 boards" in warning["message"]
    # The figures are those of the boards simulated: a full run of one chunk with the same seed.
    board = load_board(GATEWAY)
    alone = analyze(board, options=AnalysisOptions(samples=CHUNK, seed=0)).extras["monte_carlo"]
    assert carlo["board_yield"] == alone.board_yield


def test_audit_within_its_default_limit_is_complete_and_says_nothing(capsys):
    doc = _audit_json(capsys)
    assert (doc["monte_carlo"]["samples"], doc["monte_carlo"]["complete"]) == (300_000, True)
    assert not [f for f in doc["findings"] if f["code"] == "monte-carlo-time-limit"]


def test_the_terminal_table_says_k_of_n(capsys):
    main(["audit", GATEWAY, "--samples", "300000", "--time-limit", TINY, "--no-color", "--width", "200"])
    out = capsys.readouterr().out
    assert "Monte Carlo: 131,072 of 300,000 boards (stopped at the time limit)" in out


def test_explain_shows_the_cut_monte_carlo_beside_the_chain(capsys):
    main(["explain", GATEWAY, "mcu", "--samples", "300000", "--time-limit", TINY, "--format", "json"])
    doc = json.loads(capsys.readouterr().out)
    assert "monte-carlo-time-limit" in [f["code"] for f in doc["findings"]]


def test_plots_warn_on_stderr_when_the_monte_carlo_is_cut(tmp_path, capsys):
    main(["plots", GATEWAY, "--samples", "300000", "--time-limit", TINY, "--output-dir", str(tmp_path)])
    assert "warning: the Monte Carlo stopped at its time limit after 131,072 of 300,000 boards" in capsys.readouterr().err


def test_plan_search_past_its_limit_is_labelled(capsys):
    # edge-router is feasible; past its limit the planner keeps what it found and says it is not proven best.
    status = main(["plan", "boards/edge-router.toml", "--time-limit", TINY, "--json"])
    doc = json.loads(capsys.readouterr().out)
    bounds = [f for f in doc["findings"] if f["code"] == "search-bound"]
    assert bounds and any("time limit" in f["message"] for f in bounds)
    assert status in (0, 1, 3)


def test_plan_time_limit_covers_its_monte_carlo(capsys):
    main(["plan", GATEWAY, "--samples", "300000", "--time-limit", TINY, "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert doc["monte_carlo"]["complete"] is False and doc["monte_carlo"]["samples"] == CHUNK


def test_synthesize_past_its_limit_says_which_stage_stopped(tmp_path, capsys):
    status = main(["synthesize", "boards/synthesis/consumer-list.toml", "--time-limit", TINY, "--json"])
    captured = capsys.readouterr()
    doc = json.loads(captured.out)
    assert doc["search"]["complete"] is False
    assert any("stopped at its time limit" in note for note in doc["notes"])
    if status == 3:  # no tree found in time: the explanation names the time limit too
        assert "stopped at its time limit" in captured.err


@pytest.mark.parametrize("command", ["audit", "plan", "explain", "plots", "synthesize"])
def test_every_long_command_documents_its_time_limit(command, capsys):
    assert main([command, "--help"]) == 0
    text = " ".join(capsys.readouterr().out.split())
    assert "--time-limit S" in text and "default" in text[text.index("--time-limit S"):]


@pytest.mark.parametrize("bad", ["0", "-1", "soon", "4000"])
def test_a_bad_time_limit_is_a_usage_error(bad, capsys):
    assert main(["audit", GATEWAY, "--time-limit", bad]) == 2
    assert "--time-limit" in capsys.readouterr().err
