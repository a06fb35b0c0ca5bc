"""Checks of clockplan.eseries against IEC 60063 and against brute force."""

from __future__ import annotations

import math
from fractions import Fraction

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clockplan.errors import ClockplanError
from clockplan.eseries import (
    SERIES_NAMES,
    eseries_values,
    exact_values,
    nearest_values,
    series_mantissas,
    series_tolerance,
    snap,
)

# IEC 60063:2015, table of the E24 series (values as printed there; from memory).
IEC_E24 = (
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
    3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
)
# IEC 60063:2015: E12, E6, E3 are every 2nd, 4th, 8th value of E24.
IEC_E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)


@pytest.mark.parametrize(
    ("series", "count"),
    [
        ("E3", 3),  # IEC 60063: n values per decade for series En
        ("E6", 6),
        ("E12", 12),
        ("E24", 24),
        ("E48", 48),
        ("E96", 96),
        ("E192", 192),
    ],
)
def test_each_series_has_n_values_per_decade(series: str, count: int) -> None:
    mantissas = series_mantissas(series)
    assert len(mantissas) == count
    assert list(mantissas) == sorted(set(mantissas))
    assert mantissas[0] == 1.0 and mantissas[-1] < 10.0


def test_e24_and_e12_tables() -> None:
    # IEC 60063:2015 tables (from memory), see IEC_E24 above.
    assert series_mantissas("E24") == IEC_E24
    assert series_mantissas("E12") == IEC_E12
    assert series_mantissas("E6") == IEC_E24[::4]
    assert series_mantissas("E3") == IEC_E24[::8]


@pytest.mark.parametrize("series", ["E48", "E96", "E192"])
def test_formula_series_follow_the_iec_rounding_rule(series: str) -> None:
    # IEC 60063: E48..E192 are 10**(i/n) rounded to three significant digits,
    # with 9.20 in place of 9.19 in E192 as the single printed exception.
    n = int(series[1:])
    expected = [round(10 ** (i / n), 2) for i in range(n)]
    if series == "E192":
        expected[expected.index(9.19)] = 9.2
    assert list(series_mantissas(series)) == expected


@pytest.mark.parametrize(
    ("coarse", "fine"),
    [("E3", "E6"), ("E6", "E12"), ("E12", "E24"), ("E48", "E96"), ("E96", "E192")],
)
def test_series_nest(coarse: str, fine: str) -> None:
    # IEC 60063: each series is every other value of the next finer one.
    assert series_mantissas(coarse) == series_mantissas(fine)[::2]


@pytest.mark.parametrize("series", SERIES_NAMES)
def test_values_lie_within_tolerance_of_the_geometric_ideal(series: str) -> None:
    # IEC 60063 design rule: the n values per decade approximate 10**(i/n),
    # each within the tolerance the series is made for.
    mantissas = series_mantissas(series)
    tolerance = series_tolerance(series)
    for i, value in enumerate(mantissas):
        ideal = 10 ** (i / len(mantissas))
        assert abs(value / ideal - 1) < tolerance


def test_values_span_decades_as_exact_decimals() -> None:
    values = eseries_values("E12", -12, -10)
    assert len(values) == 36
    assert values[0] == 1e-12 and values[-1] == 8.2e-10
    assert 4.7e-12 in values and 4.7e-11 in values  # exact decimal floats, not 4.7000000000000005e-12
    assert values == sorted(values)


@pytest.mark.parametrize("series", ["E6", "E24", "E192"])
def test_exact_values_agree_with_the_float_values(series: str) -> None:
    floats = eseries_values(series, -13, -9)
    exact = exact_values(series, Fraction(1, 10**13), Fraction(999, 10**11))
    assert [float(v) for v in exact] == floats
    # Exact decimals: 10**k times the value is an integer for some k.
    assert all((v * 10**15).denominator == 1 for v in exact)


def test_exact_values_range_is_inclusive() -> None:
    # 10 pF and 15 pF are both E12 values (IEC 60063).
    picked = exact_values("E12", Fraction(10, 10**12), Fraction(15, 10**12))
    assert picked == (Fraction(10, 10**12), Fraction(12, 10**12), Fraction(15, 10**12))
    with pytest.raises(ClockplanError):
        exact_values("E12", 2, 1)


# Brute force: the nearest-in-ratio value over a wide range of decades.
_WIDE = {name: eseries_values(name, -15, 9) for name in ("E6", "E12", "E24", "E96")}


def _brute_nearest(value: float, series: str) -> float:
    return min(_WIDE[series], key=lambda c: (abs(math.log(c / value)), c))


@settings(max_examples=300, deadline=None)
@given(
    exponent=st.floats(min_value=-13.0, max_value=7.0, allow_nan=False),
    series=st.sampled_from(sorted(_WIDE)),
)
def test_snap_matches_brute_force(exponent: float, series: str) -> None:
    value = 10.0**exponent
    assert snap(value, series) == _brute_nearest(value, series)


@pytest.mark.parametrize("series", ["E12", "E24", "E96"])
def test_snapping_a_series_value_returns_it(series: str) -> None:
    for value in eseries_values(series, -12, 3):
        assert snap(value, series) == value


@pytest.mark.parametrize(
    ("value", "series", "expected"),
    [
        (4.0e3, "E24", 3.9e3),  # ln(4000/3900)=0.025 < ln(4300/4000)=0.072
        (4.1e3, "E24", 4.3e3),  # ln(4100/3900)=0.050 > ln(4300/4100)=0.048: ratio, not difference
        (9.6, "E12", 10.0),  # crosses into the next decade
        (1.05e-9, "E12", 1.0e-9),
        (18.5e-12, "E12", 18e-12),  # a crystal load capacitance, common practice
    ],
)
def test_snap_examples(value: float, series: str, expected: float) -> None:
    # Expected values worked by hand from the IEC 60063 tables.
    assert snap(value, series) == expected


def test_nearest_values_are_ordered_by_ratio_distance() -> None:
    picks = nearest_values(2.0e-12, "E12", 4)
    assert picks[0] == snap(2.0e-12, "E12") == 2.2e-12  # ln(2.2/2)=0.095 < ln(2/1.8)=0.105
    # ln(2/1.5)=0.288 < ln(2.7/2)=0.300
    assert picks == [2.2e-12, 1.8e-12, 1.5e-12, 2.7e-12]
    distances = [abs(math.log(p / 2.0e-12)) for p in picks]
    assert distances == sorted(distances)


def test_nearest_values_many_crosses_decades() -> None:
    # 1.0 itself, then six values either side; 0.1 and 10 tie at ln(10) and both fit.
    picks = nearest_values(1.0, "E6", 13)
    assert sorted(picks) == eseries_values("E6", -1, 0) + [10.0]
    assert nearest_values(1.0, "E6", 12)[-1] == 0.1  # a tie goes to the smaller value


@pytest.mark.parametrize(
    ("call", "hint_word"),
    [
        (lambda: snap(1.0, "E7"), "IEC 60063"),
        (lambda: snap(0.0, "E12"), "greater than zero"),
        (lambda: snap(float("nan"), "E12"), "finite"),
        (lambda: snap("abc", "E12"), "finite"),  # type: ignore[arg-type]
        (lambda: nearest_values(1.0, "E12", 0), "n >= 1"),
        (lambda: eseries_values("E12", 3, 1), "decade_lo <= decade_hi"),
    ],
)
def test_bad_arguments_raise_clockplan_errors(call, hint_word: str) -> None:
    with pytest.raises(ClockplanError) as caught:
        call()
    assert hint_word in (caught.value.hint or "")


def test_series_name_is_case_insensitive() -> None:
    assert snap(5.0e3, "e24") == snap(5.0e3, "E24") == 5.1e3
