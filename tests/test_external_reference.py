"""An external reference (a clock from another unit) is a kind the board can state (issue: ranges at the extremes).

Its figures are the sending unit's: no typical grade stands in for missing ones (its consumers are
unchecked, never PASS), and the advice proposes no local oscillator grade in its place.
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import parse_board
from clockplan.errors import BoardError
from clockplan.report.content import consumer_status

BOARD = """
[board]
name = "bench unit fed by a lab reference"
temperature = ["0 C", "50 C"]
lifetime = "10 years"

[[reference]]
id = "lab_10m"
frequency = "10 MHz"
kind = "external"
{figures}

[[consumer]]
id = "counter"
source = "lab_10m"
frequency = "10 MHz"
ppm = "±{budget} ppm"
"""


def _analysis(figures: str, budget: str = "1"):
    return analyze(parse_board(BOARD.format(figures=figures, budget=budget)))


def test_external_with_the_sending_units_figures_is_judged_on_them():
    # ±0.1 ppm + ±0.05 ppm over 0..50 °C + aging ±0.05 ppm a year for ten years (linear aging, first year
    # included): the worst case adds the ends, 0.1 + 0.05 + 0.5 = 0.65 ppm (exact arithmetic).
    figures = ('tolerance = "±0.1 ppm"\nstability = "±0.05 ppm"\nstability_range = "0..50 C"\n'
               'aging = { first_year = "±0.05 ppm", per_year = "±0.05 ppm" }')
    analysis = _analysis(figures)
    result = analysis.consumer("counter").accuracy.result
    assert abs(result.worst_case) == Fraction(65, 10**8)
    assert result.passes and consumer_status(analysis, "counter") == "PASS"


def test_external_without_figures_is_unchecked_not_pass():
    # No typical grade stands in for another unit's clock.
    analysis = _analysis("")
    assert consumer_status(analysis, "counter") == "unchecked"
    assert any(f.code == "budget-unchecked" and f.node == "counter" for f in analysis.findings)
    assert analysis.consumer("counter").accuracy is None or analysis.consumer("counter").accuracy.result is None


def test_external_gets_no_local_grade_advice():
    # ±5 ppm breaks a ±1 ppm budget; the fix is the sending unit's, not an oscillator grade.
    analysis = _analysis('tolerance = "±5 ppm"\nstability = "±0.1 ppm"\nstability_range = "0..50 C"\n'
                         'aging = { first_year = "±0.1 ppm", per_year = "±0.1 ppm" }')
    (finding,) = [f for f in analysis.findings if f.code == "ppm-budget" and f.node == "counter"]
    assert "lab_10m is an external reference" in finding.message
    assert "use " not in finding.message


def test_a_misspelt_kind_names_the_kinds():
    with pytest.raises(BoardError, match="unknown oscillator kind") as err:
        parse_board(BOARD.format(figures="", budget="1").replace('kind = "external"', 'kind = "extrnal"'))
    assert "external" in err.value.hint
