"""Units: exact parsing and honest formatting.

Prefix values are the SI prefixes (BIPM, The International System of Units, 9th ed., table 7).
"""

from fractions import Fraction

import pytest
from hypothesis import given
from hypothesis import strategies as st

from clockplan.errors import UnitError
from clockplan.units import (
    format_exact,
    format_frequency,
    format_ppm,
    format_time,
    parse_dbc,
    parse_duration,
    parse_frequency,
    parse_number,
    parse_ppm,
    parse_quantity,
    parse_temperature,
    parse_time,
)


@pytest.mark.parametrize(
    ("text", "hz"),
    [
        ("25 MHz", Fraction(25_000_000)),
        ("156.25MHz", Fraction(156_250_000)),  # exact: 156.25 x 10^6
        ("32.768 kHz", Fraction(32_768)),
        ("2.5 GHz", Fraction(2_500_000_000)),
        # 148.5/1.001 MHz is exactly 148500000*1000/1001 Hz (SMPTE 1/1.001 practice).
        ("148.5/1.001 MHz", Fraction(148_500_000 * 1000, 1001)),
        ("10.3125 GHz", Fraction(10_312_500_000)),
        ("1e6 Hz", Fraction(10**6)),
        ("500 mHz", Fraction(1, 2)),  # SI milli, case-sensitive
        (25_000_000, Fraction(25_000_000)),
        (0.1, Fraction(1, 10)),  # a TOML float is read by its shortest decimal form
    ],
)
def test_parse_frequency_is_exact(text, hz):
    assert parse_frequency(text) == hz


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("±20 ppm", (Fraction(-20, 10**6), Fraction(20, 10**6))),
        ("+-20 ppm", (Fraction(-20, 10**6), Fraction(20, 10**6))),
        ("+/-20ppm", (Fraction(-20, 10**6), Fraction(20, 10**6))),
        ("20 ppm", (Fraction(-20, 10**6), Fraction(20, 10**6))),
        ("-50..+30 ppm", (Fraction(-50, 10**6), Fraction(30, 10**6))),
        # PCIe spread spectrum: 0 to -5000 ppm down-spread (PCI Express Base Spec, Refclk SSC).
        ("0..-5000 ppm", (Fraction(-5000, 10**6), Fraction(0))),
        ("1 %", (Fraction(-1, 100), Fraction(1, 100))),
        ("500 ppb", (Fraction(-500, 10**9), Fraction(500, 10**9))),
    ],
)
def test_parse_ppm(text, expected):
    assert parse_ppm(text) == expected


@pytest.mark.parametrize(
    ("text", "seconds"),
    [("0.3 ps", 0.3e-12), ("150 fs", 150e-15), ("1 ns", 1e-9), ("2.5 us", 2.5e-6), ("1 µs", 1e-6)],
)
def test_parse_time(text, seconds):
    assert parse_time(text) == pytest.approx(seconds, rel=1e-15)


def test_other_quantities():
    assert parse_dbc("-150 dBc/Hz") == -150.0
    assert parse_temperature("-40 C") == -40.0
    assert parse_temperature("85 °C") == 85.0
    assert parse_duration("1 day") == 86400.0
    assert parse_duration("10 years") == 10 * 365.25 * 86400  # Julian year (IAU)
    assert parse_quantity("8 pF", "F") == Fraction(8, 10**12)
    assert parse_quantity("30 MHz/V", "Hz/V") == 30_000_000
    assert parse_number("2^24") == 16_777_216
    assert parse_number("100 + 1/3") == Fraction(301, 3)


@pytest.mark.parametrize(
    ("call", "text", "match"),
    [
        (parse_frequency, "25 mhz", "ambiguous"),
        (parse_frequency, "25 MHzz", "unknown unit"),
        (parse_frequency, "-5 MHz", "not positive"),
        (parse_frequency, "0 Hz", "not positive"),
        (parse_frequency, "abc", "unknown unit|cannot read"),
        (parse_frequency, "1/0 MHz", "division by zero"),
        (parse_number, "2^99999999", "exponent"),
        (parse_number, "(1+2", "parenthes|ends too early"),
        (parse_ppm, "20", "needs a unit"),
        (parse_time, "5", "no unit"),
        (parse_temperature, "300 K", "Celsius"),
        (parse_temperature, "-300 C", "absolute zero"),
        (parse_duration, "10 eons", "unknown unit"),
    ],
)
def test_bad_text_is_a_clear_error(call, text, match):
    with pytest.raises(UnitError, match=match):
        call(text)


def test_parse_ppm_refuses_a_bare_number():
    with pytest.raises(UnitError, match="no unit"):
        parse_ppm(20)


@pytest.mark.parametrize(
    ("hz", "text"),
    [
        (Fraction(156_250_000), "156.25 MHz"),
        (Fraction(32_768), "32.768 kHz"),
        (Fraction(10_312_500_000), "10.3125 GHz"),
        (Fraction(1), "1 Hz"),
        (Fraction(100 * 10**9), "100 GHz"),
    ],
)
def test_format_frequency_exact(hz, text):
    assert format_frequency(hz) == text


def test_format_never_hides_a_one_ppb_error():
    target = Fraction(125_000_000)
    off = target * (1 + Fraction(1, 10**9))
    assert format_frequency(off) != format_frequency(target)
    assert format_frequency(off) == "125.000000125 MHz"


def test_inexact_values_are_marked():
    assert format_frequency(Fraction(148_500_000_000, 1001)).startswith("≈148.351648")
    assert format_frequency(Fraction(1, 3)).startswith("≈")


def test_format_ppm_zero_is_exactly_zero():
    assert format_ppm(Fraction(0)) == "0 ppm"
    assert format_ppm(Fraction(1, 10**15)) != "0 ppm"  # never rounds a real error to zero
    assert format_ppm(Fraction(-13568, 10**6)) == "-13,568 ppm"


def test_format_time():
    assert format_time(3.12e-13) == "312 fs"
    assert format_time(1.5e-12) == "1.5 ps"


# Round trip: any frequency that is a short decimal in Hz survives format -> parse exactly.
@given(
    st.integers(min_value=1, max_value=10**11),
    st.integers(min_value=0, max_value=3),
)
def test_frequency_round_trip(units, decimals):
    hz = Fraction(units, 10**decimals)
    text = format_frequency(hz)
    if text.startswith("≈"):
        # Only values with more than 12 significant digits may be rounded, and then they say so.
        assert len(str(units).rstrip("0")) > 12
    else:
        assert parse_frequency(text) == hz


@given(st.fractions(min_value=Fraction(1, 10**6), max_value=10**12))
def test_exact_text_round_trip(value):
    assert parse_number(format_exact(value)) == value


@given(st.integers(min_value=-10**6, max_value=10**6), st.integers(min_value=1, max_value=10**6))
def test_ppm_round_trip_symmetric(numerator, denominator):
    ppm = abs(Fraction(numerator, denominator))
    text = f"±{format_exact(ppm)} ppm"
    assert parse_ppm(text) == (-ppm * Fraction(1, 10**6), ppm * Fraction(1, 10**6))
