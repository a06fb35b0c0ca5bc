"""Board planning: exact plans where published relations make them exist, cascades, pins, explanations."""

from __future__ import annotations

from fractions import Fraction
from pathlib import Path

import pytest
import sympy

from clockplan.analysis import analyze
from clockplan.boardfile import load_board, parse_board
from clockplan.errors import InfeasibleError
from clockplan.plan.board_planner import PlanOptions, plan_board
from clockplan.plan.explain import explain_infeasible
from clockplan.plan.objective import Score
from clockplan.plan.spurs import boundary_spur_offset, spur_in_band

# A generic synthesizer; the consumers' frequencies come from the standards' relations.
_BOARD = """
[[reference]]
id = "ref"
frequency = "{ref}"

[[pll]]
id = "synth"
input = "ref"
vco = ["{vco_lo}", "{vco_hi}"]
pfd = ["1 MHz", "100 MHz"]
r = [1, 255]
n = [8, 4095]
mode = "{mode}"
{rule}
outputs.a = {{ divider = [1, 256] }}
outputs.b = {{ divider = [1, 256] }}

[[consumer]]
id = "first"
source = "synth.a"
frequency = "{first}"

[[consumer]]
id = "second"
source = "synth.b"
frequency = "{second}"
"""


def _board(ref, first, second, mode="integer", rule="", vco=("2.4 GHz", "3.2 GHz")):
    text = _BOARD.format(ref=ref, first=first, second=second, mode=mode, rule=rule, vco_lo=vco[0], vco_hi=vco[1])
    return parse_board(text, "generated.toml")


# Each row: reference, two consumer frequencies derived from a published relation, the part's mode, and the source.
STANDARD_CASES = [
    # IEEE 802.3 clause 49: 10GBASE-R line rate 10.3125 GBd, reference = line rate / 66 = 156.25 MHz;
    # IEEE 802.3 clause 36: 1000BASE-X at 1.25 GBd with a 125 MHz reference (1.25 GBd / 10).
    ("25 MHz", Fraction(10_312_500_000, 66), Fraction(1_250_000_000, 10), "integer", ""),
    # PCI Express Base Specification: 100 MHz reference clock; with 1000BASE-X's 125 MHz on one VCO.
    ("25 MHz", Fraction(100_000_000), Fraction(125_000_000), "integer", ""),
    # Audio master clocks, common practice: 256 x 48 kHz = 12.288 MHz and 256 x 44.1 kHz = 11.2896 MHz.
    ("25 MHz", Fraction(256 * 48_000), Fraction(256 * 44_100), "fractional", "max_denominator = 4194303"),
    # Video, SMPTE practice: 148.5/1.001 MHz = 148500000 * 1000/1001 Hz exactly, beside 74.25/1.001 MHz.
    ("27 MHz", Fraction(148_500_000 * 1000, 1001), Fraction(74_250_000 * 1000, 1001), "fractional", "max_denominator = 4095"),
]


@pytest.mark.parametrize("ref, first, second, mode, rule", STANDARD_CASES)
def test_exact_plans_for_standard_frequencies(ref, first, second, mode, rule):
    board = _board(ref, f"{first.numerator}/{first.denominator}", f"{second.numerator}/{second.denominator}", mode, rule,
                   vco=("1.2 GHz", "3.2 GHz"))
    plan = plan_board(board)
    assert plan.feasible
    assert plan.best.score.worst_error == 0  # exactly 0, not a float near it
    analysis = analyze(board, plan.settings)
    assert analysis.consumer("first").actual_hz == first
    assert analysis.consumer("second").actual_hz == second
    # The shared VCO is a whole multiple of both outputs, so of their lcm (reference: sympy.ilcm on scaled integers).
    vco = analysis.frequencies.plls["synth"].vco_hz
    scale = first.denominator * second.denominator
    lcm = Fraction(sympy.ilcm(int(first * scale), int(second * scale)), scale)
    assert (vco / lcm).denominator == 1
    assert not [f for f in analysis.findings if f.severity.value == "error"]


def test_integer_n_is_preferred_when_both_are_exact():
    # 156.25 MHz and 125 MHz from 25 MHz: VCO 2.5 GHz = 25 MHz x 100, a whole N (IEEE 802.3 cl. 49 and cl. 36 references).
    board = _board("25 MHz", "156.25 MHz", "125 MHz", "fractional", 'denominator = "2^24"')
    setting = plan_board(board).settings.plls["synth"]
    assert setting.n.denominator == 1
    # Highest PFD next: the 25 MHz input undivided.
    assert setting.r == 1


def test_no_common_multiple_in_range_is_explained():
    # 100 MHz and 125 MHz need a VCO on a 500 MHz multiple; none lies in 2.6..2.9 GHz.
    board = _board("25 MHz", "100 MHz", "125 MHz", vco=("2.6 GHz", "2.9 GHz"))
    plan = plan_board(board)
    assert not plan.feasible
    explanation = explain_infeasible(plan)
    text = explanation.text()
    assert "common multiple" in text and "500 MHz" in text
    conflict = explanation.conflicts[0]
    assert set(conflict.consumers) == {"first", "second"}
    assert conflict.constraint == "vco-range"
    # The nearest plan still comes with its (nonzero) errors.
    assert plan.best.score.worst_error > 0


def test_integer_only_part_is_explained_on_the_video_board():
    board = load_board("boards/video-converter.toml")
    open_board = parse_board(
        "\n".join(line for line in Path("boards/video-converter.toml").read_text(encoding="utf-8").splitlines() if not line.startswith("settings =")),
        "open.toml",
    )
    plan = plan_board(open_board)
    assert not plan.feasible
    conflicts = explain_infeasible(plan).conflicts
    assert any(c.constraint == "integer-n" and "audio_codec" in c.consumers for c in conflicts)
    # With the file's own settings pinned, the pins are named first.
    pinned = explain_infeasible(plan_board(board)).conflicts
    assert any(c.constraint == "pinned" for c in pinned)


def test_edge_router_demo_plan():
    board = load_board("boards/edge-router.toml")
    plan = plan_board(board)
    assert plan.feasible
    errors = plan.best.errors
    assert all(errors[c] == 0 for c in errors if c != "uart_clk")
    # UART baud clock, 16 x 115200 = 1.8432 MHz (common practice), within its stated ±2 %.
    assert 0 < abs(errors["uart_clk"]) <= Fraction(2, 100)
    settings = plan.settings
    # The pinned R of the synthesizer stays.
    assert settings.plls["serdes_synth"].r == 1
    # The cascade: the cleaner feeds the synthesizer a frequency that lets it run integer-N.
    assert settings.plls["serdes_synth"].n.denominator == 1
    analysis = analyze(board, settings)
    # Not at its 100 MHz PFD top any more: the PFD must stay in range over the TCXO's worst case,
    # +7.2 ppm (its figures add linearly over 10 years: 1 + 0.5 + (1 + 0.5 x 9) + 0.1 + 0.1). The
    # best exact integer-N feed from the cleaner's 3 GHz VCO is then 3 GHz / 36 = 83.33 MHz (N = 30).
    pfd = analysis.frequencies.plls["serdes_synth"].pfd_hz
    assert pfd * (1 + Fraction(72, 10**7)) <= 100_000_000 and pfd == Fraction(250_000_000, 3)
    assert not [f for f in analysis.findings if f.severity.value == "error"]


def test_pinned_divider_stays_and_partial_pins_are_kept():
    # 125 MHz and 100 MHz from 25 MHz: VCO 2.5 GHz (dividers 20, 25) or 3 GHz (24, 30).
    free = plan_board(_board("25 MHz", "125 MHz", "100 MHz")).settings.plls["synth"]
    assert free.dividers == {"a": 20, "b": 25}  # fewer/lower dividers win among exact plans
    text = _BOARD.format(ref="25 MHz", first="125 MHz", second="100 MHz", mode="integer", rule="", vco_lo="2.4 GHz", vco_hi="3.2 GHz")
    text = text.replace('outputs.b = { divider = [1, 256] }', 'outputs.b = { divider = [1, 256] }\nsettings = { outputs = { a = 24 } }')
    pinned = plan_board(parse_board(text, "pinned.toml"))
    setting = pinned.settings.plls["synth"]
    assert setting.dividers == {"a": 24, "b": 30} and setting.n * 25_000_000 / setting.r == 3_000_000_000
    assert pinned.best.score.worst_error == 0


def test_pinned_setting_outside_its_constraint_is_refused():
    text = Path("boards/edge-router.toml").read_text(encoding="utf-8").replace("settings = { r = 1 }", "settings = { r = 99 }")
    with pytest.raises(InfeasibleError, match="pinned R = 99"):
        plan_board(parse_board(text, "bad.toml"))


def test_alternatives_are_distinct_and_ranked():
    plan = plan_board(load_board("boards/edge-router.toml"), PlanOptions(alternatives=3))
    plans = [plan.best] + plan.alternatives
    assert len(plans) == 4
    assert len({p.identity() for p in plans}) == 4
    keys = [p.score.key() for p in plans]
    assert keys == sorted(keys)


def test_open_divider_off_a_reference():
    # A divider straight off the reference: 25 MHz / 14 is the nearest to a 1.8432 MHz baud clock (16 x 115200, common practice).
    text = """
[[reference]]
id = "ref"
frequency = "25 MHz"
[[divider]]
id = "div"
input = "ref"
ratio = [1, 255]
[[consumer]]
id = "uart"
source = "div"
frequency = "1.8432 MHz"
max_synthesis_error = "±4 %"
"""
    plan = plan_board(parse_board(text, "div.toml"))
    # Brute force over every allowed ratio for the reference value.
    best = min(range(1, 256), key=lambda k: (abs(Fraction(25_000_000, k) / Fraction(1_843_200) - 1), k))
    assert plan.settings.dividers["div"] == best == 14


def test_boundary_spur_offset_and_in_band_flag():
    # Handworked: PFD 10 MHz, N = 10.0001 puts the VCO 1 kHz above 100 MHz (10 x PFD).
    offset = boundary_spur_offset(Fraction(10_000_000), Fraction(100_001, 10_000))
    assert offset == 1000
    assert spur_in_band(offset, 200_000)
    assert not spur_in_band(Fraction(5_000_000), 200_000)
    assert boundary_spur_offset(Fraction(10_000_000), Fraction(40)) is None
    # Near the upper integer: N = 39.99 -> 0.01 x PFD below 400 MHz.
    assert boundary_spur_offset(Fraction(10_000_000), Fraction(3999, 100)) == 100_000


def test_a_near_integer_fractional_plan_is_flagged():
    text = """
[[reference]]
id = "ref"
frequency = "10 MHz"
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
[[consumer]]
id = "c"
source = "p.o"
frequency = "100.001 MHz"
"""
    from clockplan.plan.output import plan_findings

    board = parse_board(text, "spur.toml")
    plan = plan_board(board)
    assert plan.best.errors["c"] == 0
    analysis = analyze(board, plan.settings)
    # The spur check is the audit's own (one function for audit and plan): it is in the analysis.
    flagged = [f for f in list(analysis.findings) + plan_findings(plan, analysis) if f.code == "spur-in-band"]
    assert len(flagged) == 1 and flagged[0].node == "p"


def test_objective_order():
    # docs/planning.md: feasible, then worst error, then integer-N, then PFD, then spurs in band, then dividers.
    feasible_bad = Score(worst_error=Fraction(1, 100))
    infeasible_good = Score(violations=1, worst_error=Fraction(1, 10**6))
    assert feasible_bad.key() < infeasible_good.key()
    integer = Score(worst_error=Fraction(0), pfd_product=Fraction(10))
    fractional = Score(worst_error=Fraction(0), fractional=1, pfd_product=Fraction(100))
    assert integer.key() < fractional.key()
    high_pfd = Score(pfd_product=Fraction(100), spurs_in_band=1)
    low_pfd = Score(pfd_product=Fraction(10))
    assert high_pfd.key() < low_pfd.key()
    assert Score(spurs_in_band=0, divider_sum=50).key() < Score(spurs_in_band=1, divider_sum=2).key()


def test_every_setting_respects_its_constraint_on_every_demo_board():
    import glob

    for path in sorted(glob.glob("boards/*.toml")):
        board = load_board(path)
        plan = plan_board(board, PlanOptions(alternatives=2))
        for candidate in [plan.best] + plan.alternatives:
            analysis = analyze(board, candidate.settings)
            ranges = [f for f in analysis.findings if f.code.endswith("-range") or f.code in ("n-fraction", "denominator", "unset")]
            assert not ranges, (path, ranges)


def test_bounds_are_reported_and_never_leave_a_part_without_settings():
    from clockplan.plan.pll_solver import SearchLimits

    board = load_board("boards/edge-router.toml")
    plan = plan_board(board, PlanOptions(time_limit_s=1e-6))
    assert any("time limit" in note for note in plan.notes)
    assert set(plan.settings.plls) == {p.id for p in board.plls}
    # A cap on the common multiples examined is reported too (the audio VCO has 1 multiple; the cleaner more).
    from clockplan.plan.pll_solver import OutputSpec, PllProblem, Target, solve_pll

    pll = board.part("cleaner")
    spec = OutputSpec("sgmii", (Target("sgmii_phy", Fraction(125_000_000)),), (pll.output("sgmii").divider,))
    search = solve_pll(PllProblem(pll, Fraction(25_000_000), (spec,)), SearchLimits(max_multiples=1))
    assert search.best.score.worst_error == 0
    assert any("only the lowest 1" in note for note in search.notes)
