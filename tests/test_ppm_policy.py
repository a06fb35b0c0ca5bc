"""The board's accuracy policy: worst case by default, the statistical total on request (issue 14, item 4).

The regression board: an XO with a ±20 ppm initial tolerance and a ±25 ppm
stability band, on an exact chain, against a ±40 ppm budget. The worst case
adds the limits, 20 + 25 = 45 ppm, outside; the statistical total (the
root-sum-square of independent half-widths, the tolerance-stack convention)
is sqrt(20² + 25²) = 32.0 ppm, inside. Before, that was only a warning and CI
passed a board that breaks its budget at a corner; under the default policy
it is now an error.
"""

import json
import math
from fractions import Fraction

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import parse_board
from clockplan.cli import main
from clockplan.errors import BoardError
from clockplan.findings import Severity
from clockplan.report.content import summarize
from clockplan.synth.input import parse_consumer_list

from .boards import MINIMAL

PPM = Fraction(1, 10**6)


def _board(budget: str = "±40 ppm", policy: str | None = None) -> str:
    board = 'name = "test board"\ntemperature = ["-40 C", "85 C"]'
    if policy is not None:
        board += f'\naccuracy_policy = "{policy}"'
    text = MINIMAL.replace('name = "test board"', board).replace(
        'frequency = "25 MHz"\n', 'frequency = "25 MHz"\nkind = "xo"\ntolerance = "±20 ppm"\nstability = "±25 ppm"\nstability_range = "-40..85 C"\n', 1)
    return text.replace('id = "phy0"\nsource = "pll_a.out0"\nfrequency = "125 MHz"',
                        f'id = "phy0"\nsource = "pll_a.out0"\nfrequency = "125 MHz"\nppm = "{budget}"')


def _ppm_findings(analysis, node="phy0"):
    return [(f.severity, f.code) for f in analysis.findings if f.node == node and f.code.startswith("ppm-")]


def test_the_figures_of_the_regression_board():
    phy = analyze(parse_board(_board())).consumer("phy0").accuracy
    assert phy.result.worst_case in (45 * PPM, -45 * PPM)  # 20 + 25 ppm, exact
    assert float(abs(phy.result.rss)) == pytest.approx(math.hypot(20, 25) * 1e-6, rel=1e-12)  # 32.0 ppm
    assert phy.passes is False and phy.rss_passes is True


@pytest.mark.parametrize("policy", [None, "worst-case", " Worst-Case "])
def test_worst_case_is_the_default_and_a_corner_breach_is_an_error(policy):
    analysis = analyze(parse_board(_board(policy=policy)))
    assert analysis.board.accuracy_policy == "worst-case"
    assert _ppm_findings(analysis) == [(Severity.ERROR, "ppm-budget")]
    message = next(f.message for f in analysis.findings if f.code == "ppm-budget")
    assert "worst-case policy" in message and "+32.02 ppm" in message and 'accuracy_policy = "statistical"' in message
    phy = analysis.consumer("phy0").accuracy
    assert (phy.policy, phy.verdict_passes) == ("worst-case", False)
    assert analysis.has_errors


def test_statistical_on_request_keeps_the_corner_a_warning_and_says_so():
    analysis = analyze(parse_board(_board(policy="statistical")))
    assert analysis.board.accuracy_policy == "statistical"
    assert _ppm_findings(analysis) == [(Severity.WARNING, "ppm-worst-case")]
    message = next(f.message for f in analysis.findings if f.code == "ppm-worst-case")
    assert 'accuracy_policy = "statistical"' in message and "45 ppm" in message
    phy = analysis.consumer("phy0").accuracy
    assert (phy.passes, phy.verdict_passes) == (False, True)
    assert not analysis.has_errors


@pytest.mark.parametrize("policy", ["worst-case", "statistical"])
def test_a_statistical_breach_is_an_error_under_either_policy(policy):
    # ±30 ppm: the RSS total 32.0 ppm breaks it too.
    analysis = analyze(parse_board(_board("±30 ppm", policy)))
    assert _ppm_findings(analysis) == [(Severity.ERROR, "ppm-budget")]
    assert analysis.consumer("phy0").accuracy.verdict_passes is False


@pytest.mark.parametrize("budget, rss_inside", [("±33 ppm", True), ("±32 ppm", False)])
def test_the_statistical_verdict_turns_at_the_rss_total(budget, rss_inside):
    # sqrt(20² + 25²) = 32.02 ppm: inside ±33 ppm, outside ±32 ppm.
    analysis = analyze(parse_board(_board(budget, "statistical")))
    assert analysis.consumer("phy0").accuracy.verdict_passes is rss_inside
    expected = (Severity.WARNING, "ppm-worst-case") if rss_inside else (Severity.ERROR, "ppm-budget")
    assert _ppm_findings(analysis) == [expected]


def test_a_worst_case_exactly_at_the_limit_passes_under_the_worst_case_policy():
    # 45 ppm against ±45 ppm: margin exactly 0 (exact Fractions), inside, but thin (below 20 % of the budget).
    analysis = analyze(parse_board(_board("±45 ppm")))
    phy = analysis.consumer("phy0").accuracy
    assert phy.result.margin == 0 and phy.verdict_passes is True
    assert _ppm_findings(analysis) == [(Severity.WARNING, "ppm-margin")]
    # One part per billion less and the corner breaks it: an error.
    tight = analyze(parse_board(_board("±44.999 ppm")))
    assert _ppm_findings(tight) == [(Severity.ERROR, "ppm-budget")]


@pytest.mark.parametrize("value, hint", [("statistic", "statistical"), ("rss", "worst-case, statistical"), ("", None)])
def test_an_unknown_policy_is_a_located_error(value, hint):
    with pytest.raises(BoardError) as caught:
        parse_board(_board(policy=value), "test.toml")
    error = caught.value
    assert error.key == "board.accuracy_policy" and error.file == "test.toml" and error.line == 5
    if hint:
        assert hint in (error.hint or "")


def test_a_policy_that_is_not_a_string_is_a_located_error():
    text = _board().replace('temperature = ["-40 C", "85 C"]', 'temperature = ["-40 C", "85 C"]\naccuracy_policy = 1')
    with pytest.raises(BoardError) as caught:
        parse_board(text, "test.toml")
    assert caught.value.key == "board.accuracy_policy"


# --------------------------------------------------------------------------- reports and JSON


def _audit(tmp_path, capsys, text: str, *args: str) -> tuple[int, str]:
    path = tmp_path / "board.toml"
    path.write_text(text, encoding="utf-8")
    status = main(["audit", str(path), "--no-color", "--width", "200", *args])
    return status, capsys.readouterr().out


@pytest.mark.parametrize("policy, status", [(None, 1), ("statistical", 0)])
def test_json_says_which_policy_was_applied(tmp_path, capsys, policy, status):
    got, out = _audit(tmp_path, capsys, _board(policy=policy), "--json")
    doc = json.loads(out)
    applied = policy or "worst-case"
    assert got == status and doc["verdict"] == ("fail" if status else "pass")
    assert doc["board"]["accuracy_policy"] == applied
    phy = next(c for c in doc["consumers"] if c["id"] == "phy0")
    assert phy["ppm_policy"] == applied and phy["ppm_pass"] is False and phy["ppm_rss_pass"] is True
    assert phy["ppm_policy_pass"] is (policy == "statistical")


@pytest.mark.parametrize("fmt, marker", [("table", "ppm policy: "), ("markdown", "**Ppm policy:**"), ("html", "<dt>ppm policy</dt>")])
@pytest.mark.parametrize("policy, words", [(None, "worst case"), ("statistical", "statistical total (RSS)")])
def test_every_summary_names_the_policy(tmp_path, capsys, fmt, marker, policy, words):
    _, out = _audit(tmp_path, capsys, _board(policy=policy), "--format", fmt)
    line = out[out.index(marker):].splitlines()[0]
    assert words in line


def test_the_summary_leaves_the_policy_out_when_no_budget_was_judged():
    analysis = analyze(parse_board(MINIMAL))
    assert summarize(analysis).accuracy_policy is None
    assert "ppm policy" not in [label for label, _ in summarize(analysis).facts]
    assert summarize(analyze(parse_board(_board()))).accuracy_policy == "worst-case"


# --------------------------------------------------------------------------- synthesis input


def test_a_consumer_list_carries_its_policy():
    text = '[board]\naccuracy_policy = "statistical"\n[[consumer]]\nid = "phy"\nfrequency = "125 MHz"\nstandard = "1000BASE-X"\n'
    assert parse_consumer_list(text).accuracy_policy == "statistical"
    assert parse_consumer_list(text.replace('accuracy_policy = "statistical"\n', "")).accuracy_policy == "worst-case"
    with pytest.raises(BoardError) as caught:
        parse_consumer_list(text.replace('"statistical"', '"typical"'), "list.toml")
    assert caught.value.key == "board.accuracy_policy" and caught.value.line == 2
