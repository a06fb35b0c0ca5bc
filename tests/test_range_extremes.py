"""Ranges at the extremes: input, PFD and VCO ranges hold over the reference's error band and spread sweeps.

The expected frequencies are computed here with Fractions from the definitions:
a locked loop passes the reference's fractional error e to its PFD and VCO
(f = f_nominal (1 + e)), and a down-spread of depth d moves the VCO down to
f (1 - d) (spread-spectrum clocking, down-spread; PCI Express allows up to
0.5 %, as ``clockplan.ppm.spread`` documents).
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import parse_board
from clockplan.extremes import compose_bands, pll_bands, vco_sweep
from clockplan.graph import build_graph
from clockplan.plan.board_planner import plan_board

# Invented: a 100 MHz reference, an integer-N PLL with R = 1, N = 30 puts the VCO at exactly 3 GHz,
# the top of its 2.4-3 GHz range; its PFD (100 MHz) sits exactly at the top of 10-100 MHz too.
BOARD = """
[board]
name = "edges"
temperature = ["25 C", "25 C"]
lifetime = "0 years"

[[reference]]
id = "ref"
frequency = "100 MHz"
kind = "xo"
tolerance = "{tolerance}"

[[pll]]
id = "p"
input = "ref"
input_range = ["{in_lo}", "{in_hi}"]
vco = ["{vco_lo}", "{vco_hi}"]
pfd = ["10 MHz", "{pfd_hi}"]
r = [1, 8]
n = [8, 64]
mode = "integer"
outputs.o = {{ divider = [1, 64] }}
{spread}
{settings}

[[consumer]]
id = "c"
source = "p.o"
frequency = "{target}"
"""


def _board(tolerance="±0 ppm", vco_lo="2.4 GHz", vco_hi="3 GHz", pfd_hi="100 MHz", in_lo="1 MHz", in_hi="1 GHz",
           spread="", settings='settings = { r = 1, n = 30, outputs = { o = 30 } }', target="100 MHz"):
    text = BOARD.format(tolerance=tolerance, vco_lo=vco_lo, vco_hi=vco_hi, pfd_hi=pfd_hi, in_lo=in_lo, in_hi=in_hi,
                        spread=spread, settings=settings, target=target)
    return parse_board(text, "edges.toml")


def _codes(board) -> dict[str, str]:
    return {f.code: f.message for f in analyze(board).findings if f.code.endswith("-extremes")}


def test_a_vco_exactly_at_its_top_with_zero_reference_error_passes():
    assert _codes(_board()) == {}


def test_one_part_per_billion_takes_it_out_and_the_finding_says_by_how_much():
    codes = _codes(_board(tolerance="±0.001 ppm"))
    assert set(codes) == {"vco-range-extremes", "pfd-range-extremes"}
    # 3 GHz x 1e-9 = 3 Hz above the top; 100 MHz x 1e-9 = 0.1 Hz.
    assert "3 Hz (0.001 ppm) above the top edge 3 GHz" in codes["vco-range-extremes"]
    assert "100 mHz (0.001 ppm) above the top edge 100 MHz" in codes["pfd-range-extremes"]
    assert "reference ref" in codes["vco-range-extremes"]


def test_the_bottom_edge_and_the_input_range():
    # VCO exactly at its 3 GHz bottom, input exactly at the top of a 100 MHz input range.
    codes = _codes(_board(tolerance="±0.001 ppm", vco_lo="3 GHz", vco_hi="3.5 GHz", pfd_hi="200 MHz", in_hi="100 MHz"))
    assert set(codes) == {"vco-range-extremes", "input-range-extremes"}
    assert "below the bottom edge 3 GHz" in codes["vco-range-extremes"]


def test_a_frequency_outside_at_nominal_keeps_its_own_finding_only():
    board = _board(tolerance="±1 ppm", settings='settings = { r = 1, n = 31, outputs = { o = 31 } }')
    findings = {f.code for f in analyze(board).findings}
    assert "vco-range" in findings and "vco-range-extremes" not in findings


def test_a_down_spread_moves_the_vco_down_only():
    spread = 'spread = { mode = "down", depth = "0.5 %", rate = "31.5 kHz" }'
    # At the top edge a down-spread cannot push it out...
    assert "vco-range-extremes" not in _codes(_board(spread=spread))
    # ...at the bottom edge it does, by 3 GHz x 0.5 % = 15 MHz.
    codes = _codes(_board(spread=spread, vco_lo="3 GHz", vco_hi="3.5 GHz", pfd_hi="200 MHz"))
    assert "15 MHz (5,000 ppm) below the bottom edge 3 GHz" in codes["vco-range-extremes"]
    assert "spread sweep" in codes["vco-range-extremes"]


def test_the_band_composes_reference_and_spread_exactly():
    spread = 'spread = { mode = "center", depth = "1 %", rate = "31.5 kHz" }'
    board = _board(tolerance="±10 ppm", spread=spread)
    band = pll_bands(board, build_graph(board))["p"]
    ref = (Fraction(-10, 10**6), Fraction(10, 10**6))
    assert band.input == ref
    assert vco_sweep(board.part("p")) == (Fraction(-1, 200), Fraction(1, 200))
    # (1 + 10e-6)(1 + 0.005) - 1, the same product at the low end.
    assert band.vco == (Fraction(-10, 10**6) - Fraction(1, 200) + Fraction(10, 10**6) * Fraction(1, 200),
                        Fraction(10, 10**6) + Fraction(1, 200) + Fraction(10, 10**6) * Fraction(1, 200))
    assert compose_bands(ref, (Fraction(0), Fraction(0))) == ref


def test_the_reference_band_is_the_accuracy_stage_worst_case():
    # The same reference figures as the accuracy stage: its worst-case carrier error is the band.
    board = _board(tolerance="±2 ppm")
    band = pll_bands(board, build_graph(board))["p"]
    accuracy = analyze(board).consumer("c").accuracy
    assert accuracy is not None
    assert (band.reference_band[0], band.reference_band[1]) == (accuracy.result.carrier_min, accuracy.result.carrier_max)


@pytest.mark.parametrize("tolerance, top_allowed", [("±0 ppm", True), ("±0.001 ppm", False)])
def test_the_planner_keeps_the_margin(tolerance, top_allowed):
    # Open settings: 100 MHz out of a 2.4-3 GHz VCO. Exact VCOs are multiples of 100 MHz; the highest PFD
    # (100 MHz, R = 1) is at its range top, so it is used only when the reference has no error band.
    board = _board(tolerance=tolerance, settings="")
    plan = plan_board(board)
    assert plan.feasible
    analysis = analyze(board, plan.settings)
    point = analysis.frequencies.plls["p"]
    assert (point.pfd_hz == 100_000_000) == top_allowed
    assert not [f for f in analysis.findings if f.code.endswith("-extremes") or f.code.endswith("-range")]
    if not top_allowed:
        assert point.pfd_hz * (1 + Fraction(1, 10**9)) <= 100_000_000
        assert point.vco_hz * (1 + Fraction(1, 10**9)) <= 3_000_000_000


def test_a_board_feasible_only_on_a_range_edge_is_explained():
    # 100 MHz from a 2.95-3 GHz VCO: the only exact VCO is 3 GHz, its very top. With a 1 ppb
    # reference band the planner's margin leaves no plan, and the explanation says why.
    from clockplan.plan.explain import explain_infeasible

    assert plan_board(_board(tolerance="±0 ppm", vco_lo="2.95 GHz", settings="")).feasible
    plan = plan_board(_board(tolerance="±0.001 ppm", vco_lo="2.95 GHz", settings=""))
    assert not plan.feasible
    conflicts = {c.constraint: c.message for c in explain_infeasible(plan).conflicts}
    assert "range-margin" in conflicts
    assert "VCO 3 GHz" in conflicts["range-margin"] and "3 Hz (0.001 ppm) above the top edge 3 GHz" in conflicts["range-margin"]


CASCADE = """
[board]
name = "alone"
temperature = ["25 C", "25 C"]
lifetime = "0 years"

[[reference]]
id = "ref"
frequency = "100 MHz"
kind = "xo"
tolerance = "±0 ppm"

[[pll]]
id = "p"
input = "ref"
vco = ["2.4 GHz", "3 GHz"]
pfd = ["10 MHz", "100 MHz"]
r = [1, 8]
n = [8, 64]
mode = "integer"
outputs.o = { divider = [1, 64], independent_spread = true, spread = { mode = "down", depth = "0.5 %", rate = "31.5 kHz" } }
outputs.x = { divider = [1, 64] }

[[pll]]
id = "q"
input = "p.o"
vco = ["2.4 GHz", "3 GHz"]
pfd = ["10 MHz", "100 MHz"]
r = [1, 8]
n = [8, 64]
mode = "integer"
outputs.y = { divider = [1, 64] }

[[consumer]]
id = "c"
source = "q.y"
frequency = "100 MHz"

[[consumer]]
id = "d"
source = "p.x"
frequency = "100 MHz"
"""


def test_a_spread_an_output_makes_alone_moves_what_it_feeds_not_its_vco():
    board = parse_board(CASCADE, "alone.toml")
    bands = pll_bands(board, build_graph(board))
    zero = (Fraction(0), Fraction(0))
    assert bands["p"].vco == zero and bands["p"].input == zero
    assert bands["q"].input == (Fraction(-1, 200), Fraction(0)) and bands["q"].vco == (Fraction(-1, 200), Fraction(0))
