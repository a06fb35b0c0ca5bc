"""Oscillator grade table and advice, checked against stated facts of the trade."""

from fractions import Fraction

import pytest

from clockplan.ppm.accuracy import PLANNING_NOTE, ConsumerBudget
from clockplan.ppm.aging import SECONDS_PER_YEAR
from clockplan.ppm.grades import advise_grade, load_grades
from clockplan.ppm.montecarlo import ConsumerChain
from clockplan.ppm.oscillator import supply_power, trim_range
from clockplan.ppm.spread import SpreadAllowance, SpreadSpectrum
from clockplan.units import PPM, parse_ppm

TEN_YEARS = 10 * SECONDS_PER_YEAR
INDUSTRIAL = (-40.0, 85.0)


def _grade(name):
    return next(g for g in load_grades() if g.name == name)


def test_grades_are_ordered_least_demanding_first():
    grades = load_grades()
    assert [g.name for g in grades] == ["rc", "xo", "tcxo", "ocxo"]
    spans = [g.spec.initial[1] + g.spec.temperature.hi for g in grades]
    assert spans == sorted(spans, reverse=True)  # each step up is tighter


def test_ocxo_power_matches_the_stated_oven_figures():
    # Common practice (a rough figure, from memory): an oven draws about 8 W (12 V, 0.7 A) while warming
    # and about 2 W once at temperature.
    power = _grade("ocxo").spec.power
    assert power.warmup_w == supply_power(Fraction(12), Fraction(7, 10)) == Fraction(42, 5)
    assert power.warmup_w == pytest.approx(8, abs=0.5)
    assert power.steady_w == 2
    assert power.warmup_s >= 60  # minutes, not milliseconds


def test_ten_hz_trim_on_ten_mhz_covers_one_ppm():
    # Common practice: a 10 MHz oven reference with a ±10 Hz trim range covers ±1 ppm.
    assert trim_range(Fraction(10_000_000), (Fraction(-10), Fraction(10))) == (-PPM, PPM)
    # The typical oven grade states no trim: a trim is checked against tolerance plus aging over the
    # board's life (docs/frequency-accuracy.md), and a typical ±1 ppm cannot cover the typical oven's
    # ±0.3 ppm tolerance plus 1.2 ppm of aging over ten years; the part's own trim goes in the board.
    assert _grade("ocxo").spec.trim is None


@pytest.mark.parametrize(
    "budget, expected",
    [
        ("±2 %", "xo"),       # common practice UART: a trimmed RC's ±3.5 % worst case is too much
        ("±5 %", "rc"),       # a loose budget: the on-chip oscillator is enough
        ("±500 ppm", "xo"),   # USB 2.0 high speed (USB 2.0 spec §7.1.11)
        ("±100 ppm", "xo"),   # 1000BASE-T (IEEE 802.3 Clause 40)
        ("±10 ppm", "tcxo"),
        ("±2 ppm", "ocxo"),
    ],
)
def test_advice_picks_the_least_demanding_grade(budget, expected):
    consumer = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm(budget)))
    advice = advise_grade(0, [consumer], INDUSTRIAL, TEN_YEARS)
    assert advice.grade.name == expected
    names = [name for name, _ in advice.tried]
    assert names[-1] == expected and all(not fits for _, fits in advice.tried[:-1])
    assert all(r.margin >= r.budget.half_width / 5 for r in advice.results)


def test_advice_checks_margin_by_hand():
    # XO grade over ten years: 20 + 25 + (3 + 9 * 1) = 57 ppm worst case.
    # Budget ±70 ppm keeps 13 ppm = 18.6 % margin: not the default 20 %, so the advice steps up.
    consumer = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±70 ppm")))
    assert advise_grade(0, [consumer], INDUSTRIAL, TEN_YEARS).grade.name == "tcxo"
    assert advise_grade(0, [consumer], INDUSTRIAL, TEN_YEARS, margin=Fraction(1, 10)).grade.name == "xo"


def test_oven_advice_says_it_runs_hot_and_draws_watts():
    consumer = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±2 ppm")))
    text = advise_grade(0, [consumer], INDUSTRIAL, TEN_YEARS).text
    assert "runs hot" in text and "draws watts" in text
    assert "8.4 W warming" in text and "2 W at temperature" in text and "warm-up 5 min" in text
    assert PLANNING_NOTE in text


def test_only_downstream_consumers_count_and_impossible_budgets_get_no_grade():
    tight = ConsumerChain(1, Fraction(0), ConsumerBudget(parse_ppm("±0.01 ppm")))
    loose = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±5 %")))
    assert advise_grade(0, [loose, tight], INDUSTRIAL, TEN_YEARS).grade.name == "rc"
    none = advise_grade(1, [loose, tight], INDUSTRIAL, TEN_YEARS)
    assert none.grade is None and len(none.tried) == 4
    assert "No grade" in none.text and PLANNING_NOTE in none.text


def test_spread_consumer_advice_uses_the_allowance():
    allowance = SpreadAllowance("down", 5000 * PPM, (Fraction(30_000), Fraction(33_000)))
    pcie = ConsumerChain(
        0, Fraction(0), ConsumerBudget(parse_ppm("±300 ppm"), allowance), SpreadSpectrum("down", 5000 * PPM, Fraction(31_500))
    )
    assert advise_grade(0, [pcie], INDUSTRIAL, TEN_YEARS).grade.name == "xo"
