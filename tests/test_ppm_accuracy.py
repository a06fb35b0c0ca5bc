"""Worst-case and statistical frequency error at a consumer, against standards and trade facts."""

import math
from fractions import Fraction

import pytest

from clockplan.errors import BoardError
from clockplan.ppm.accuracy import PLANNING_NOTE, ConsumerBudget, compose, consumer_accuracy
from clockplan.ppm.aging import SECONDS_PER_YEAR, AgingLinear, AgingLog
from clockplan.ppm.oscillator import OscillatorSpec
from clockplan.ppm.spread import SpreadAllowance, SpreadSpectrum
from clockplan.ppm.temperature import AtCutCurve, PointTable, StabilityBand
from clockplan.units import PPM, parse_ppm

TEN_YEARS = 10 * SECONDS_PER_YEAR
INDUSTRIAL = (-40.0, 85.0)

# Budgets from published standards (figures from memory, sources named):
USB_FULL_SPEED = ConsumerBudget(parse_ppm("±0.25 %"))   # USB 2.0 spec §7.1.11: 12 Mb/s ±0.25 %
USB_HIGH_SPEED = ConsumerBudget(parse_ppm("±500 ppm"))  # USB 2.0 spec §7.1.11: 480 Mb/s ±500 ppm
GIGABIT_BASE_T = ConsumerBudget(parse_ppm("±100 ppm"))  # IEEE 802.3 Clause 40: 125 MHz ±0.01 %
PCIE_REFCLK = ConsumerBudget(                           # PCI Express Base Spec: refclk ±300 ppm,
    parse_ppm("±300 ppm"),                              # SSC down-spread to -0.5 % at 30-33 kHz
    SpreadAllowance("down", 5000 * PPM, (Fraction(30_000), Fraction(33_000))),
)
UART = ConsumerBudget(parse_ppm("±2 %"))                # common practice: an 8N1 UART end tolerates about ±2 %


def _xo(**changes):
    base = dict(kind="xo", initial=parse_ppm("±20 ppm"), temperature=StabilityBand(*parse_ppm("±25 ppm")))
    return OscillatorSpec(**(base | changes))


def test_zero_synthesis_error_adds_exactly_nothing():
    result = consumer_accuracy(_xo(), Fraction(0), None, INDUSTRIAL, 0.0, GIGABIT_BASE_T)
    assert result.carrier_max == 45 * PPM and result.carrier_min == -45 * PPM  # exact Fractions
    assert result.synthesis_error == 0 and isinstance(result.synthesis_error, Fraction)
    assert result.margin == 55 * PPM


def test_ideal_reference_and_exact_plan_report_exactly_zero():
    ideal = OscillatorSpec("xo", (Fraction(0), Fraction(0)))
    result = consumer_accuracy(ideal, Fraction(0), None, INDUSTRIAL, TEN_YEARS, GIGABIT_BASE_T)
    assert (result.error_min, result.error_max, result.rss, result.mean_error) == (0, 0, 0, 0)
    assert isinstance(result.rss, Fraction)


def test_synthesis_error_composes_multiplicatively_and_exactly():
    # A PLL that lands 1/3 ppm high on a reference 20 ppm high: (1 + 20e-6)(1 + 1/3e-6) - 1, exact.
    ref = OscillatorSpec("xo", (20 * PPM, 20 * PPM))
    synth = PPM / 3
    result = consumer_accuracy(ref, synth, None, INDUSTRIAL, 0.0, GIGABIT_BASE_T)
    assert result.carrier_max == (1 + 20 * PPM) * (1 + synth) - 1
    assert compose(20 * PPM, synth) == result.carrier_max


def test_worst_case_is_linear_sum_and_rss_root_sum_square():
    spec = _xo(
        aging=AgingLinear(parse_ppm("±3 ppm"), parse_ppm("±1 ppm")),
        supply_sensitivity=parse_ppm("±2 ppm"),
        load_sensitivity=parse_ppm("-1..+3 ppm"),
    )
    result = consumer_accuracy(spec, Fraction(0), None, INDUSTRIAL, TEN_YEARS, GIGABIT_BASE_T)
    # Linear sum: 20 + 25 + (3 + 9*1) + 2 + 3 = 62 high; -20 - 25 - 12 - 2 - 1 = -60 low.
    assert result.carrier_max == 62 * PPM and result.carrier_min == -60 * PPM
    # RSS: centre +1 ppm, half-widths 20, 25, 12, 2, 2 -> sqrt(400 + 625 + 144 + 4 + 4).
    half = math.sqrt(1177) * 1e-6
    assert result.rss_max == pytest.approx(1e-6 + half, rel=1e-12)
    assert result.rss_min == pytest.approx(1e-6 - half, rel=1e-12)
    assert result.rss_margin == pytest.approx(100e-6 - (1e-6 + half), rel=1e-12)


def test_worst_temperature_is_where_the_curve_peaks():
    curve = AtCutCurve.from_angle(4.0)
    spec = OscillatorSpec("crystal", parse_ppm("±10 ppm"), curve)
    result = consumer_accuracy(spec, Fraction(0), None, INDUSTRIAL, 0.0, ConsumerBudget(parse_ppm("±30 ppm")))
    extremes = curve.extremes(*INDUSTRIAL)
    # The cold end (-9.7 ppm) is farther out than the upper turning point (+6.9 ppm).
    assert result.worst_case == pytest.approx(-10e-6 + extremes.low)
    assert result.worst_temperature_c == extremes.low_at_c == -40.0
    band = consumer_accuracy(_xo(), Fraction(0), None, INDUSTRIAL, 0.0, GIGABIT_BASE_T)
    assert band.worst_temperature_c is None  # a band names no temperature


# Fact of the trade (common practice): cooled by about 35 °C, a 4 MHz crystal oscillator moved by
# roughly 40 Hz (about 10 ppm), while an on-chip ring oscillator near 4 MHz moved by more than
# 0.5 MHz (over 10 %). Encoded as measured point tables from 25 °C down to -10 °C.
NOMINAL = Fraction(4_000_000)
CRYSTAL_SHIFT = Fraction(40) / NOMINAL
RING_SHIFT = Fraction(500_000) / NOMINAL


def test_cooling_fact_converts_to_ppm():
    assert CRYSTAL_SHIFT == 10 * PPM
    assert RING_SHIFT == Fraction(1, 8)  # 12.5 %


@pytest.mark.parametrize("budget", [UART, USB_FULL_SPEED, USB_HIGH_SPEED], ids=["uart", "usb-fs", "usb-hs"])
def test_ring_oscillator_unfit_and_crystal_fit_after_cooling(budget):
    cooled = (-10.0, 25.0)
    crystal = OscillatorSpec("crystal", (Fraction(0), Fraction(0)), PointTable(((-10.0, float(CRYSTAL_SHIFT)), (25.0, 0.0))))
    ring = OscillatorSpec("rc", (Fraction(0), Fraction(0)), PointTable(((-10.0, float(RING_SHIFT)), (25.0, 0.0))))
    crystal_result = consumer_accuracy(crystal, Fraction(0), None, cooled, 0.0, budget)
    ring_result = consumer_accuracy(ring, Fraction(0), None, cooled, 0.0, budget)
    assert crystal_result.passes and crystal_result.worst_temperature_c == -10.0
    assert not ring_result.passes and ring_result.margin < 0
    assert ring_result.worst_case == pytest.approx(0.125)


def test_aging_linear_and_log_laws():
    linear = AgingLinear(parse_ppm("±3 ppm"), parse_ppm("±1 ppm"))
    assert linear.drift(SECONDS_PER_YEAR / 2) == (Fraction(-3, 2) * PPM, Fraction(3, 2) * PPM)
    assert linear.drift(10 * SECONDS_PER_YEAR) == (-12 * PPM, 12 * PPM)
    # Log law A ln(1 + t/tau): ten years give ln(1 + 10 y/tau) / ln(1 + 1 y/tau) times the first year.
    log = AgingLog(parse_ppm("±1 ppm"), time_constant_s=86400)
    ratio = math.log1p(10 * SECONDS_PER_YEAR / 86400) / math.log1p(SECONDS_PER_YEAR / 86400)
    assert log.drift(10 * SECONDS_PER_YEAR)[1] == pytest.approx(1e-6 * ratio, rel=1e-12)
    assert 1.3 < ratio < 1.5  # log aging slows: ten years cost well under ten first years
    with pytest.raises(BoardError):
        AgingLog(parse_ppm("±1 ppm"), time_constant_s=0)
    with pytest.raises(BoardError):
        linear.drift(-1.0)


def test_pcie_down_spread_within_allowance_checks_carrier_and_shows_extremes():
    ssc = SpreadSpectrum("down", 5000 * PPM, Fraction(31_500))
    result = consumer_accuracy(_xo(), Fraction(0), ssc, INDUSTRIAL, 0.0, PCIE_REFCLK)
    assert result.spread_ok is True and result.checked == "carrier"
    assert result.passes and result.margin == 255 * PPM
    # The sweep moves the extremes and the mean: -45 ppm carrier low composed with -5000 ppm.
    assert result.error_min == compose(-45 * PPM, -5000 * PPM)
    assert result.error_max == 45 * PPM
    assert result.mean_error == -2500 * PPM


@pytest.mark.parametrize(
    "spread, reason",
    [
        (SpreadSpectrum("center", 5000 * PPM, Fraction(31_500)), "center-spread"),
        (SpreadSpectrum("down", 6000 * PPM, Fraction(31_500)), "exceeds"),
        (SpreadSpectrum("down", 5000 * PPM, Fraction(40_000)), "outside the allowed"),
        (SpreadSpectrum("down", 5000 * PPM), "not given"),
    ],
)
def test_spread_outside_allowance_counts_as_error(spread, reason):
    result = consumer_accuracy(_xo(), Fraction(0), spread, INDUSTRIAL, 0.0, PCIE_REFCLK)
    assert result.spread_ok is False and reason in result.spread_note
    assert not result.passes and result.checked == "with spread"


def test_spread_on_a_consumer_without_allowance_fails_a_tight_budget():
    ssc = SpreadSpectrum("down", 5000 * PPM, Fraction(31_500))
    result = consumer_accuracy(_xo(), Fraction(0), ssc, INDUSTRIAL, 0.0, GIGABIT_BASE_T)
    assert not result.passes and "allows no spread" in result.spread_note
    assert result.worst_case == result.error_min


def test_every_result_carries_the_planning_note_and_ovens_their_warning():
    result = consumer_accuracy(_xo(), Fraction(0), None, INDUSTRIAL, 0.0, GIGABIT_BASE_T)
    assert PLANNING_NOTE in result.notes
    oven = OscillatorSpec("ocxo", parse_ppm("±0.3 ppm"))
    text = " ".join(consumer_accuracy(oven, Fraction(0), None, INDUSTRIAL, 0.0, GIGABIT_BASE_T).notes)
    assert "runs hot" in text and "draws watts" in text
    from clockplan.ppm.grades import load_grades
    ocxo = next(g for g in load_grades() if g.name == "ocxo").spec
    text = " ".join(consumer_accuracy(ocxo, Fraction(0), None, INDUSTRIAL, 0.0, GIGABIT_BASE_T).notes)
    assert "8.4 W warming, 2 W at temperature, 5 min warm-up" in text


def test_budget_must_contain_zero():
    with pytest.raises(BoardError, match="does not contain 0"):
        ConsumerBudget((10 * PPM, 20 * PPM))
