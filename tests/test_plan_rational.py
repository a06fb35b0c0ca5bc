"""Number theory helpers checked against fractions, math and sympy (general-purpose reference libraries)."""

from __future__ import annotations

import math
from fractions import Fraction

import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from clockplan.plan.rational import (
    bounded_neighbors,
    ceil_fraction,
    continued_fraction,
    convergents,
    divisors,
    floor_fraction,
    gcd_fractions,
    lcm_fractions,
    multiples_in,
)

positive_fractions = st.builds(Fraction, st.integers(1, 10**6), st.integers(1, 10**4))


@given(st.lists(positive_fractions, min_size=1, max_size=4))
def test_lcm_is_the_smallest_common_multiple(values):
    # Reference: sympy.ilcm on integers after scaling by the common denominator.
    lcm = lcm_fractions(values)
    scale = math.lcm(*(v.denominator for v in values))
    expected = Fraction(sympy.ilcm(1, *(int(v * scale) for v in values)), scale)
    assert lcm == expected
    assert all((lcm / v).denominator == 1 for v in values)


@given(st.lists(positive_fractions, min_size=1, max_size=4))
def test_gcd_divides_every_value(values):
    # Reference: sympy.igcd on integers after scaling by the common denominator.
    g = gcd_fractions(values)
    scale = math.lcm(*(v.denominator for v in values))
    assert g == Fraction(sympy.igcd(0, *(int(v * scale) for v in values)), scale)


@pytest.mark.parametrize(
    "values, expected",
    [
        # Common practice: 125 MHz (1000BASE-X reference) and 100 MHz (PCIe reference) meet at 500 MHz.
        ([Fraction(125_000_000), Fraction(100_000_000)], Fraction(500_000_000)),
        # 156.25 MHz and 125 MHz: lcm 625 MHz (four 156.25 MHz periods = five 125 MHz periods).
        ([Fraction(156_250_000), Fraction(125_000_000)], Fraction(625_000_000)),
        # Audio master clocks 256 x 48 kHz and 256 x 44.1 kHz: lcm(12288000, 11289600) = 2^15 3^2 5^3 7^2 (12288000 = 2^15 3 5^3, 11289600 = 2^10 3^2 5^2 7^2).
        ([Fraction(12_288_000), Fraction(11_289_600)], Fraction(2**15 * 3**2 * 5**3 * 7**2)),
    ],
)
def test_lcm_table(values, expected):
    assert lcm_fractions(values) == expected


@given(st.integers(1, 10**7))
def test_divisors_match_sympy(n):
    # Reference: sympy.divisors.
    assert divisors(n) == sympy.divisors(n)


def test_divisors_of_a_large_number_match_sympy():
    n = 2**40 * 3**5 * 7
    assert divisors(n) == sympy.divisors(n)


@given(positive_fractions)
def test_continued_fraction_matches_sympy(x):
    # Reference: sympy.continued_fraction_periodic for a rational (no periodic part).
    assert continued_fraction(x) == list(sympy.continued_fraction_periodic(x.numerator, x.denominator))
    assert convergents(continued_fraction(x))[-1] == x


@given(positive_fractions, st.integers(1, 60))
@settings(max_examples=200)
def test_bounded_neighbors_are_the_farey_neighbours(x, limit):
    lo, hi = bounded_neighbors(x, limit)
    assert lo <= x <= hi and lo.denominator <= limit and hi.denominator <= limit
    # Brute force: every fraction with denominator <= limit lies outside (lo, hi) unless it is x.
    for q in range(1, limit + 1):
        p_lo, p_hi = floor_fraction(x * q), ceil_fraction(x * q)
        for p in (p_lo, p_hi):
            candidate = Fraction(p, q)
            assert not lo < candidate < hi or candidate == x
    # Reference: fractions.Fraction.limit_denominator returns the closer of the two.
    closest = x.limit_denominator(limit)
    assert closest in (lo, hi)
    assert abs(closest - x) == min(abs(lo - x), abs(hi - x))


def test_bounded_neighbors_for_large_limits_match_limit_denominator():
    # 148.5/1.001 MHz over 27 MHz: N = 55000/1001 reaches exactly with a denominator limit of 4095.
    x = Fraction(148_500_000_000, 1001) * 10 / 27_000_000
    assert bounded_neighbors(x, 4095) == (x, x)
    lo, hi = bounded_neighbors(x, 1000)
    assert x.limit_denominator(1000) in (lo, hi)


def test_multiples_in_the_vco_range():
    # 500 MHz multiples inside 2.4..3.2 GHz are 2.5 GHz and 3 GHz.
    assert list(multiples_in(Fraction(500), Fraction(2400), Fraction(3200))) == [5, 6]
