"""Board-file keys of the frequency-accuracy model: values read exactly, errors located."""

import tomllib
from fractions import Fraction

import pytest

from clockplan.errors import BoardError
from clockplan.ppm.aging import AgingLinear, AgingLog
from clockplan.ppm.parse import (
    parse_aging,
    parse_consumer_budget,
    parse_oscillator_spec,
    parse_spread,
    parse_temperature_range,
)
from clockplan.ppm.temperature import AtCutCurve, PointTable, StabilityBand, TuningForkCurve
from clockplan.units import PPM

BOARD = """
[[reference]]
name = "ref_main"
kind = "crystal"
tolerance = "±10 ppm"
temperature_curve = { model = "at-cut", angle_offset_arcmin = 4 }
aging = { first_year = "±3 ppm", per_year = "±1 ppm" }
load = { specified = "12 pF", c1 = "5 fF", c0 = "2 pF", capacitors = ["18 pF", "18 pF"], stray = "3 pF", stray_tolerance = "1 pF", capacitor_tolerance = "5 %" }
distribution = "normal"

[[reference]]
name = "ref_oven"
kind = "ocxo"
tolerance = "±0.3 ppm"
stability = "±10 ppb"
stability_range = "-40..85 °C"
aging = { first_year = "±0.3 ppm", law = "log", time_constant = "2 days" }
trim = "±10 Hz"
power = { supply = "12 V", warmup_current = "0.7 A", steady = "2 W", warmup_time = "5 min" }

[[reference]]
name = "ref_rtc"
kind = "crystal"
tolerance = "±20 ppm"
temperature_curve = { model = "points", points = [[-40, "-150 ppm"], ["25 C", "0 ppm"], [85, "-120 ppm"]] }
"""


def _board():
    return tomllib.loads(BOARD)["reference"]


def test_full_reference_tables_read_exactly():
    crystal, oven, rtc = _board()
    spec = parse_oscillator_spec(crystal, "reference[0]")
    assert spec.initial == (-10 * PPM, 10 * PPM)
    assert spec.temperature == AtCutCurve.from_angle(4.0)
    assert spec.aging == AgingLinear((-3 * PPM, 3 * PPM), (-PPM, PPM))
    assert spec.crystal_load.actual_load == Fraction(12, 10**12)
    assert spec.crystal_load.cap_tolerance == Fraction(1, 20)
    assert spec.distribution == "normal"

    oven_spec = parse_oscillator_spec(oven, "reference[1]", frequency=Fraction(10_000_000))
    assert oven_spec.trim == (-PPM, PPM)
    assert oven_spec.temperature == StabilityBand(Fraction(-1, 10**8), Fraction(1, 10**8), (-40.0, 85.0))
    assert isinstance(oven_spec.aging, AgingLog) and oven_spec.aging.time_constant_s == 2 * 86400
    assert oven_spec.power.warmup_w == Fraction(42, 5) and oven_spec.power.warmup_s == 300

    table = parse_oscillator_spec(rtc, "reference[2]").temperature
    assert isinstance(table, PointTable) and table.points == ((-40.0, -150e-6), (25.0, 0.0), (85.0, -120e-6))


def test_tuning_fork_and_explicit_at_cut_coefficients():
    fork = parse_oscillator_spec(
        {"kind": "crystal", "tolerance": "±20 ppm", "temperature_curve": {"model": "tuning-fork", "turnover": "27 C"}}, "r"
    )
    assert fork.temperature == TuningForkCurve(-0.034e-6, 27.0)
    at = parse_oscillator_spec(
        {"kind": "crystal", "tolerance": "±20 ppm",
         "temperature_curve": {"model": "at-cut", "coefficients_ppm": [-0.3, -0.00045, 0.0001095]}}, "r"
    )
    assert at.temperature.a1 == pytest.approx(-0.3e-6) and at.temperature.a3 == pytest.approx(109.5e-12)


@pytest.mark.parametrize(
    "change, key, hint_part",
    [
        ({"kind": "tcx0"}, "reference[0].kind", "tcxo"),
        ({"tolerance": "20"}, "reference[0].tolerance", "ppm"),
        ({"distribution": "gauss"}, "reference[0].distribution", "uniform"),
        ({"aging": {"first_year": "±3 ppm"}}, "reference[0].aging.per_year", "law"),
        ({"aging": {"first_year": "3"}}, "reference[0].aging.first_year", "ppm"),
        ({"aging": {"first_yr": "±3 ppm"}}, "reference[0].aging.first_yr", "first_year"),
        ({"temperature_curve": {"model": "at-cutt", "angle_offset_arcmin": 4}}, "reference[0].temperature_curve.model", "at-cut"),
        ({"temperature_curve": {"model": "points", "points": [[-40, "±5 ppm"], [85, "0 ppm"]]}},
         "reference[0].temperature_curve.points[0][1]", "+12 ppm"),
        ({"temperature_curve": {"model": "points", "points": [[85, "1 ppm"], [-40, "0 ppm"]]}},
         "reference[0].temperature_curve.points", "points"),
        ({"stability": "±1 ppm", "temperature_curve": {"model": "tuning-fork"}}, "reference[0].temperature_curve", "not both"),
        ({"load": {"specified": "12 pF", "c1": "5 fF", "c0": "2 pF", "capacitors": ["18 pF"]}}, "reference[0].load.capacitors", "18 pF"),
        ({"load": {"specified": "12 pV", "c1": "5 fF", "c0": "2 pF", "capacitors": ["18 pF", "18 pF"]}}, "reference[0].load.specified", "F"),
        ({"trim": "±10 Hz"}, "reference[0].trim", "ppm"),
        ({"power": {"steady": "2 W", "warmup_current": "0.7 A", "warmup_time": "5 min"}}, "reference[0].power.supply", "12 V"),
    ],
)
def test_bad_values_name_their_key_and_hint(change, key, hint_part):
    table = {"kind": "crystal", "tolerance": "±20 ppm"} | change
    with pytest.raises(BoardError) as info:
        parse_oscillator_spec(table, "reference[0]")
    assert info.value.key == key
    assert hint_part in (info.value.hint or "")


def test_load_on_a_packaged_oscillator_is_refused_at_its_key():
    with pytest.raises(BoardError) as info:
        parse_oscillator_spec({"kind": "xo", "tolerance": "±20 ppm", "load": {}}, "reference[4]")
    assert info.value.key == "reference[4].load"


@pytest.mark.parametrize(
    "table, mode, depth_ppm",
    [
        ({"range": "0..-5000 ppm", "rate": "31.5 kHz"}, "down", 5000),
        ({"mode": "down", "depth": "0.5 %", "rate": "31.5 kHz"}, "down", 5000),
        ({"range": "±2500 ppm"}, "center", 5000),
        ({"range": "0..+3000 ppm"}, "up", 3000),
    ],
)
def test_spread_tables(table, mode, depth_ppm):
    spread = parse_spread(table, "pll[0].outputs.out1.spread")
    assert (spread.mode, spread.depth) == (mode, depth_ppm * PPM)


def test_spread_errors_are_located():
    with pytest.raises(BoardError) as info:
        parse_spread({"range": "-100..+300 ppm"}, "pll[0].outputs.out1.spread")
    assert info.value.key == "pll[0].outputs.out1.spread.range"
    with pytest.raises(BoardError) as info:
        parse_spread({"mode": "sideways", "depth": "0.5 %"}, "pll[0].outputs.out1.spread")
    assert info.value.key == "pll[0].outputs.out1.spread"


def test_consumer_budget_with_pcie_allowance():
    # PCI Express refclk: ±300 ppm, SSC down to -0.5 % at 30-33 kHz (PCI Express Base Spec; from memory).
    budget = parse_consumer_budget(
        {"ppm": "±300 ppm", "spread_allowance": {"mode": "down", "depth": "0.5 %", "rate": ["33 kHz", "30 kHz"]}},
        "consumer[1]",
    )
    assert budget.tolerance == (-300 * PPM, 300 * PPM)
    assert budget.spread_allowance.max_depth == 5000 * PPM
    assert budget.spread_allowance.modulation_hz == (Fraction(30_000), Fraction(33_000))
    with pytest.raises(BoardError) as info:
        parse_consumer_budget({"ppm": "+10..+20 ppm"}, "consumer[1]")
    assert info.value.key == "consumer[1].ppm"


@pytest.mark.parametrize(
    "value, expected",
    [("-40..85 C", (-40.0, 85.0)), ("-40 C..85 C", (-40.0, 85.0)), (["0 C", "70 C"], (0.0, 70.0)), ("-20..+70", (-20.0, 70.0))],
)
def test_temperature_range(value, expected):
    assert parse_temperature_range(value, "board.temperature") == expected


def test_backwards_temperature_range_is_refused():
    with pytest.raises(BoardError) as info:
        parse_temperature_range("85..-40 C", "board.temperature")
    assert info.value.key == "board.temperature"


def test_aging_log_time_constant_must_be_positive():
    with pytest.raises(BoardError) as info:
        parse_aging({"first_year": "±1 ppm", "law": "log", "time_constant": "0 s"}, "reference[0].aging")
    assert info.value.key == "reference[0].aging.time_constant"
