"""One search note per search, audit and plan agree on spurs, and consumers far from their standard's frequency."""

from __future__ import annotations

import json
from dataclasses import replace
from fractions import Fraction

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import parse_board
from clockplan.cli import main
from clockplan.findings import Finding, Severity
from clockplan.plan.board_planner import plan_board
from clockplan.plan.output import VERDICT_CRITERIA, plan_findings, search_finding, verdict_criteria

# Invented: N = 10.0001 at a 10 MHz PFD puts the integer-boundary spur 0.0001 x 10 MHz = 1 kHz from the
# carrier (offset = f_PFD x min(frac N, 1 - frac N), docs/planning.md).
SPUR = """
[board]
name = "spur"
temperature = ["25 C", "25 C"]
lifetime = "0 years"

[[reference]]
id = "ref"
frequency = "10 MHz"
kind = "xo"
tolerance = "±0 ppm"

[[pll]]
id = "p"
input = "ref"
vco = ["90 MHz", "110 MHz"]
pfd = ["5 MHz", "20 MHz"]
r = [1, 1]
n = [8, 20]
mode = "fractional"
max_denominator = 100000
outputs.o = { divider = [1, 1] }
settings = { r = 1, n = "10.0001", outputs = { o = 1 } }

[[consumer]]
id = "c"
source = "p.o"
frequency = "100.001 MHz"
"""


@pytest.fixture
def spur_board(tmp_path):
    path = tmp_path / "spur.toml"
    path.write_text(SPUR, encoding="utf-8")
    return str(path)


def _spurs(doc) -> list[dict]:
    return [f for f in doc["findings"] if f["code"] == "spur-in-band"]


def test_audit_raises_the_spur_warning_plan_raises(spur_board, capsys):
    # Regression: audit raised no spur-in-band for settings plan flagged.
    main(["audit", spur_board, "--json"])
    audit = json.loads(capsys.readouterr().out)
    main(["plan", spur_board, "--json"])
    plan = json.loads(capsys.readouterr().out)
    assert [(f["node"], f["message"]) for f in _spurs(audit)] == [(f["node"], f["message"]) for f in _spurs(plan)]
    assert len(_spurs(audit)) == 1 and "1 kHz from the carrier" in _spurs(audit)[0]["message"]


@pytest.mark.parametrize("bandwidth, flagged", [("1.001 kHz", True), ("1 kHz", False), ("999 Hz", False)])
def test_both_commands_take_the_same_loop_bandwidth(spur_board, capsys, bandwidth, flagged):
    # In band means strictly closer than the bandwidth: a spur at exactly the bandwidth is not flagged.
    for command in ("audit", "plan"):
        main([command, spur_board, "--json", "--loop-bandwidth", bandwidth])
        doc = json.loads(capsys.readouterr().out)
        assert bool(_spurs(doc)) == flagged, command


def _plan_with(notes, proven_notes, proven):
    plan = plan_board(parse_board(SPUR, "spur.toml"))
    return replace(plan, notes=list(notes), proven_notes=list(proven_notes), proven_criteria=proven)


def _analysis(plan, findings=()):
    analysis = analyze(plan.board, plan.settings)
    return analysis.with_findings(list(findings)) if findings else analysis


def test_a_complete_search_has_no_note():
    plan = _plan_with([], [], None)
    assert search_finding(plan, _analysis(plan)) is None


@pytest.mark.parametrize("proven, severity", [(0, "warning"), (2, "warning"), (3, "info"), (5, "info")])
def test_one_note_whose_severity_follows_the_proof(proven, severity):
    # A time limit hit next to a cut cascade trial proven best: before, a warning (time limit) stood
    # next to an info (proven best) for the same plan; now one note, and a warning only when the plan
    # is not proven best on criteria 1-3 (feasibility, synthesis error, integer-N).
    plan = _plan_with(["the search stopped at its time limit"], ["x.o: 1 of 9 output dividers were tried"], proven)
    findings = [f for f in plan_findings(plan, _analysis(plan)) if f.code == "search-bound"]
    assert len(findings) == 1
    assert findings[0].severity.value == severity
    assert "time limit" in findings[0].message and "1 of 9" in findings[0].message
    if severity == "info":
        assert f"proven best on criteria 1-{proven}" in findings[0].message and "not proven" not in findings[0].message
    else:
        assert "not proven best on criteria 1-3" in findings[0].message


def test_a_jitter_budget_at_stake_makes_the_pfd_decide():
    # Criterion 4 (the PFD frequency) sets in-band noise: with a failing jitter budget, a plan proven
    # on criteria 1-3 only may hide a plan that passes, so the note is a warning.
    plan = _plan_with(["the search stopped at its time limit"], [], 3)
    failing = Finding(Severity.ERROR, "jitter-budget", "c", "RMS jitter exceeds its budget")
    assert verdict_criteria(_analysis(plan)) == VERDICT_CRITERIA == 3
    assert verdict_criteria(_analysis(plan, [failing])) == 4
    assert search_finding(plan, _analysis(plan, [failing])).severity is Severity.WARNING
    assert search_finding(replace(plan, proven_criteria=5), _analysis(plan, [failing])).severity is Severity.INFO


RTC = """
[board]
name = "rtc"
temperature = ["25 C", "25 C"]
lifetime = "0 years"

[[reference]]
id = "xtal"
frequency = "{frequency}"
kind = "tcxo"

[[consumer]]
id = "rtc"
source = "xtal"
frequency = "{frequency}"
standard = "rtc-32k"
"""


def _far(frequency: str) -> list[Finding]:
    board = parse_board(RTC.format(frequency=frequency), "rtc.toml")
    return [f for f in analyze(board).findings if f.code == "standard-frequency"]


def test_a_real_time_clock_at_32_768_mhz_is_warned():
    # The rtc-32k standard lists 32.768 kHz (2^15 Hz, the watch-crystal frequency): 32.768 MHz is 1000x.
    found = _far("32.768 MHz")
    assert len(found) == 1 and found[0].severity is Severity.WARNING and found[0].node == "rtc"
    assert "exactly 1000 times" in found[0].message and "32.768 kHz" in found[0].message


@pytest.mark.parametrize("frequency, warned", [
    ("32.768 kHz", False),
    ("65.536 kHz", False),   # exactly twice the nominal: the edge, not far
    ("65537 Hz", True),      # just beyond twice
    ("16.384 kHz", False),   # exactly half
    ("16383 Hz", True),      # just below half
])
def test_far_means_beyond_a_factor_of_two(frequency, warned):
    assert bool(_far(frequency)) == warned


def test_a_standard_without_nominal_frequencies_is_not_checked():
    from clockplan.audit import check_consumer_standard
    from clockplan.parts import Consumer

    assert check_consumer_standard(Consumer("c", "ref", Fraction(1), budget=None)) == []
