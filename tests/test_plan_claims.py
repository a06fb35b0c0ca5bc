"""Planner claims are true: exact divisors of wide divider ranges, unused parts, checked explanations.

The reference for the divisor search is a brute force written here without the
planner: every R, every whole N, every VCO frequency they make, and the exact
output dividers listed with ``sympy.divisors`` (an output of ``f`` from a VCO
``v`` is exact when ``v / f`` is a whole divisor of ``v`` in the allowed set).
"""

from __future__ import annotations

import json
from fractions import Fraction

import pytest
import sympy

from clockplan.boardfile import parse_board
from clockplan.cli import main
from clockplan.parts import FrequencyRange, IntChoices, Pll, PllOutput
from clockplan.plan.board_planner import PlanOptions, plan_board
from clockplan.plan.explain import explain_infeasible
from clockplan.plan.pll_solver import OutputSpec, PllProblem, SearchLimits, Target, solve_pll

# An invented board: a 1 Hz tick (a pulse-per-second style clock) from a 2.4-2.6 GHz integer-N VCO
# through an output divider of up to 2^32 - 1. The VCO 2.4 GHz = 25 MHz x 96 divides exactly by
# 2,400,000,000 (and 2.5 GHz = 25 MHz x 100 by 2,500,000,000).
ONE_HZ = """
[board]
name = "one hertz"
temperature = ["25 C", "25 C"]
lifetime = "0 years"

[[reference]]
id = "ref"
frequency = "25 MHz"
kind = "xo"
tolerance = "±0 ppm"

[[pll]]
id = "synth"
input = "ref"
vco = ["{vco_lo}", "2.6 GHz"]
pfd = ["1 MHz", "50 MHz"]
r = [1, 1023]
n = [8, 4095]
mode = "integer"
outputs.pps = {{ divider = [1, 4294967295] }}

[[consumer]]
id = "pps"
source = "synth.pps"
frequency = "{target}"
"""


def _one_hz(target: str = "1 Hz", vco_lo: str = "2.4 GHz"):
    return parse_board(ONE_HZ.format(target=target, vco_lo=vco_lo), "one-hertz.toml")


def test_a_one_hertz_output_of_a_ghz_vco_finds_its_exact_divider():
    # Regression: the divider range was searched on every 4001th value only, so no exact divider was
    # found and the board was called infeasible ("an integer-N part cannot reach it").
    plan = plan_board(_one_hz(), PlanOptions(time_limit_s=20))
    assert plan.feasible and plan.best.score.worst_error == 0
    setting = plan.settings.plls["synth"]
    vco = Fraction(25_000_000) * setting.n / setting.r
    assert setting.dividers["pps"] == vco  # a 1 Hz output: the divider equals the VCO frequency in Hz
    assert setting.dividers["pps"] in sympy.divisors(int(vco))


def test_the_exact_divider_at_2_5_ghz_of_the_issue():
    # A VCO range of 2.48-2.6 GHz leaves 2.5 GHz (N = 100 at 25 MHz) as the lowest exact VCO at the
    # highest PFD; the planner prefers the smaller divider among exact plans (criterion 6).
    plan = plan_board(_one_hz(vco_lo="2.48 GHz"), PlanOptions(time_limit_s=20))
    assert plan.feasible
    setting = plan.settings.plls["synth"]
    assert (setting.r, setting.n, setting.dividers["pps"]) == (1, 100, 2_500_000_000)


def test_the_one_hertz_board_passes_through_the_cli_with_one_info_search_note(capsys, tmp_path):
    # One note per search: the bounds hit (the divider range swept on a subset, the capped common
    # multiples) are listed in one info finding, since the plan is exact, integer-N and at the
    # highest PFD its 25 MHz input allows (R = 1): nothing can beat it on criteria 1-5.
    path = tmp_path / "one-hertz.toml"
    path.write_text(ONE_HZ.format(target="1 Hz", vco_lo="2.4 GHz"), encoding="utf-8")
    status = main(["plan", str(path), "--json", "--fail-on", "warning", "--time-limit", "20"])
    doc = json.loads(capsys.readouterr().out)
    bounds = [f for f in doc["findings"] if f["code"] == "search-bound"]
    assert status == 0 and doc["verdict"] == "pass"
    assert len(bounds) == 1 and bounds[0]["severity"] == "info"
    assert "criteria 1-5" in bounds[0]["message"] and doc["plan"]["proven_criteria"] == 5


def _brute_exact(f_in: int, vco: tuple[int, int], pfd: tuple[Fraction, Fraction], r_max: int,
                 n_range: tuple[int, int], dividers: IntChoices, target: int) -> bool:
    """Whether any setting makes ``target`` exactly (sympy.divisors lists each VCO's exact dividers)."""
    for r in range(1, r_max + 1):
        p = Fraction(f_in, r)
        if not pfd[0] <= p <= pfd[1]:
            continue
        for n in range(n_range[0], n_range[1] + 1):
            v = p * n
            if not vco[0] <= v <= vco[1] or v.denominator != 1:
                continue
            v_int = int(v)
            if any(v_int // d == target and v_int % d == 0 and d in dividers for d in sympy.divisors(v_int)):
                return True
    return False


CASES = [
    # (f_in, vco, r_max, n_range, divider range, target): small invented cases.
    (1000, (20_000, 26_000), 8, (2, 60), (1, 10**6), 1),
    (1000, (20_000, 26_000), 8, (2, 60), (1, 10**6), 7),
    (1000, (20_000, 26_000), 8, (2, 60), (1, 10**6), 3),
    (1200, (30_000, 34_000), 6, (4, 200), (2, 10**5), 11),
    (1200, (30_000, 34_000), 6, (4, 200), (2, 10**5), 13),
    (990, (40_000, 44_000), 9, (4, 400), (1, 10**7), 17),
    (990, (40_000, 44_000), 9, (4, 400), (1, 10**7), 29),
    (1024, (50_000, 52_000), 4, (8, 300), (1, 10**6), 5),
    (1024, (50_000, 52_000), 4, (8, 300), (1, 10**6), 1),
    # No exact plan: the target is a prime above the N range that divides neither f_in nor R.
    (1000, (20_000, 26_000), 8, (2, 60), (1, 10**6), 61),
    (1200, (30_000, 34_000), 6, (4, 200), (2, 10**5), 211),
]


@pytest.mark.parametrize("f_in, vco, r_max, n_range, span, target", CASES)
@pytest.mark.parametrize("limits", [SearchLimits(), SearchLimits(max_ladder=4, max_multiples=3)])
def test_the_divisor_search_is_exact_against_brute_force(f_in, vco, r_max, n_range, span, target, limits):
    # With tight limits the divider range is swept on a subset and the common multiples are capped:
    # the exact divisors must still be found whenever the brute force finds one.
    pfd = (Fraction(1), Fraction(10**9))
    dividers = IntChoices(*span)
    part = Pll("loop", "osc", FrequencyRange(Fraction(vco[0]), Fraction(vco[1])), FrequencyRange(*pfd),
               IntChoices(1, r_max), Fraction(n_range[0]), Fraction(n_range[1]), "integer",
               (PllOutput("o", dividers),))
    spec = OutputSpec("o", (Target("c", Fraction(target)),), (dividers,))
    best = solve_pll(PllProblem(part, Fraction(f_in), (spec,)), limits).best
    exact = _brute_exact(f_in, vco, pfd, r_max, n_range, dividers, target)
    assert best is not None
    assert (best.score.worst_error == 0) == exact
    if exact:
        d = best.dividers["o"][0]
        assert d in dividers and best.vco_hz == d * target and d in sympy.divisors(int(best.vco_hz))


def test_the_brute_force_finds_both_answers():
    # The reference itself: at least one case above has an exact plan and one has none.
    answers = {_brute_exact(f, v, (Fraction(1), Fraction(10**9)), r, n, IntChoices(*s), t) for f, v, r, n, s, t in CASES}
    assert answers == {True, False}


def test_a_bounded_search_that_finds_nothing_names_no_blocking_constraint():
    # 1.0000001 Hz: no whole N reaches a multiple of it in range, but the search that found nothing
    # was bounded (a divider subset, capped multiples): the explanation must not claim the
    # integer-N mode (or anything else) blocks it, since that was never checked.
    plan = plan_board(_one_hz(target="1.0000001 Hz"), PlanOptions(time_limit_s=1))
    assert not plan.feasible and plan.notes
    explanation = explain_infeasible(plan, time_limit_s=1)
    codes = {c.constraint for c in explanation.conflicts}
    assert "search-bound" in codes
    assert not codes & {"integer-n", "vco-range", "output-divider", "pfd-range", "n-range", "unreachable"}
    assert "cut short" in explanation.text()


UNUSED = """
[board]
name = "unused parts"
temperature = ["25 C", "25 C"]
lifetime = "0 years"

[[reference]]
id = "ref"
frequency = "25 MHz"
kind = "xo"
tolerance = "±0 ppm"

[[pll]]
id = "synth"
input = "ref"
vco = ["2.4 GHz", "2.6 GHz"]
pfd = ["1 MHz", "50 MHz"]
r = [1, 1023]
n = [8, 4095]
mode = "integer"
outputs.a = { divider = [1, 256] }
outputs.spare = { divider = [2, 256] }
outputs.lonely = { divider = [4, 256] }

[[divider]]
id = "spare_div"
input = "synth.spare"
ratio = [3, 64]

[[divider]]
id = "ref_div"
input = "ref"
ratio = [5, 64]

[[buffer]]
id = "empty_fanout"
input = "synth.lonely"
outputs = 2

[[consumer]]
id = "eth"
source = "synth.a"
frequency = "125 MHz"
"""


def test_unused_dividers_and_outputs_never_make_a_board_infeasible(capsys):
    # Regression: a divider feeding nothing was "blocked" (1,000,000 ppm, no feasible plan).
    board = parse_board(UNUSED, "unused.toml")
    plan = plan_board(board)
    assert plan.feasible and plan.best.score.worst_error == 0
    settings = plan.settings
    # Each unused part gets its smallest allowed value.
    assert settings.dividers == {"spare_div": 3, "ref_div": 5}
    assert settings.plls["synth"].dividers["lonely"] == 4
    assert any("ref_div feeds no consumer" in note for note in plan.unused_notes)
    assert any("synth.lonely feeds no consumer" in note for note in plan.unused_notes)
    from clockplan.analysis import analyze
    from clockplan.plan.output import plan_findings

    findings = plan_findings(plan, analyze(board, settings))
    unused = [f for f in findings if f.code == "unused-part"]
    assert {f.severity.value for f in unused} == {"info"} and len(unused) == 3


def test_a_pinned_r_that_cannot_run_is_named_not_the_n_range():
    # Regression: with R pinned to 1 the PFD (25 MHz) is above its 20 MHz top, yet the reason given was
    # "no N reaches the VCO range" -- false, R = 2 with N = 192 would. Only the checked reason is stated.
    text = ONE_HZ.format(target="100 MHz", vco_lo="2.4 GHz").replace(
        'pfd = ["1 MHz", "50 MHz"]', 'pfd = ["1 MHz", "20 MHz"]').replace(
        'mode = "integer"', 'mode = "integer"\nsettings = { r = 1 }')
    plan = plan_board(parse_board(text, "pinned-r.toml"))
    assert not plan.feasible
    reasons = [c.message for c in explain_infeasible(plan).conflicts if c.constraint == "part-cannot-run"]
    assert reasons and "the pinned R = 1" in reasons[0] and "PFD of 25 MHz" in reasons[0]
    assert "no N in" not in reasons[0]
