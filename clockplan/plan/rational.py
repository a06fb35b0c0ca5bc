"""Number theory on exact rationals for the planner.

The planner never scans frequencies blindly: a VCO frequency that divides
exactly into several outputs is a multiple of their least common multiple,
an R that puts a VCO frequency on the feedback grid is a multiple of a
denominator, and the feedback ratio nearest a wanted value under a
denominator limit is a neighbour in the Farey sequence of that order,
found from the continued fraction.

All functions take and return :class:`~fractions.Fraction` or ``int``.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from fractions import Fraction

__all__ = [
    "lcm_fractions",
    "gcd_fractions",
    "divisors",
    "continued_fraction",
    "convergents",
    "bounded_neighbors",
    "floor_fraction",
    "ceil_fraction",
    "multiples_in",
]

_TRIAL_DIVISION_LIMIT = 10**12


def _fold(values: Iterable[Fraction | int], numerators, denominators, what: str) -> Fraction:
    """Combine reduced fractions: ``numerators`` over the numerators, ``denominators`` over the denominators."""
    fractions = [Fraction(v) for v in values]
    if not fractions:
        raise ValueError(f"{what} of no values")
    if any(v <= 0 for v in fractions):
        raise ValueError(f"{what} of rationals needs positive values, got {fractions}")
    return Fraction(numerators(*(v.numerator for v in fractions)), denominators(*(v.denominator for v in fractions)))


def lcm_fractions(values: Iterable[Fraction | int]) -> Fraction:
    """Least common multiple of positive rationals.

    The smallest positive rational that is a whole multiple of every value:
    ``lcm(a/b, c/d) = lcm(a, c) / gcd(b, d)`` for reduced fractions.

    Examples
    --------
    >>> lcm_fractions([Fraction(125), Fraction(100)])
    Fraction(500, 1)
    >>> lcm_fractions([Fraction(1, 2), Fraction(1, 3)])
    Fraction(1, 1)
    """
    return _fold(values, math.lcm, math.gcd, "lcm")


def gcd_fractions(values: Iterable[Fraction | int]) -> Fraction:
    """Greatest common divisor of positive rationals: the largest ``g`` with every value a whole multiple of ``g``.

    ``gcd(a/b, c/d) = gcd(a, c) / lcm(b, d)`` for reduced fractions.

    Examples
    --------
    >>> gcd_fractions([Fraction(3, 4), Fraction(1, 2)])
    Fraction(1, 4)
    """
    return _fold(values, math.gcd, math.lcm, "gcd")


def divisors(n: int) -> list[int]:
    """All positive divisors of ``n``, ascending.

    Trial division up to ``sqrt(n)`` for moderate ``n``; sympy's factoring
    for larger values (imported only then).

    Examples
    --------
    >>> divisors(12)
    [1, 2, 3, 4, 6, 12]
    """
    if n < 1:
        raise ValueError(f"divisors of {n}: need a positive whole number")
    if n > _TRIAL_DIVISION_LIMIT:
        import sympy

        return [int(d) for d in sympy.divisors(n)]
    small, large = [], []
    d = 1
    while d * d <= n:
        if n % d == 0:
            small.append(d)
            if d * d != n:
                large.append(n // d)
        d += 1
    return small + large[::-1]


def continued_fraction(x: Fraction) -> list[int]:
    """The regular continued fraction ``[a0; a1, a2, ...]`` of a rational.

    Examples
    --------
    >>> continued_fraction(Fraction(415, 93))
    [4, 2, 6, 7]
    """
    x = Fraction(x)
    terms = []
    p, q = x.numerator, x.denominator
    while q:
        a, r = divmod(p, q)
        terms.append(a)
        p, q = q, r
    return terms


def convergents(terms: list[int]) -> list[Fraction]:
    """The convergents ``p_k/q_k`` of a continued fraction.

    Examples
    --------
    >>> convergents([4, 2, 6, 7])
    [Fraction(4, 1), Fraction(9, 2), Fraction(58, 13), Fraction(415, 93)]
    """
    result = []
    p_prev, q_prev, p, q = 1, 0, terms[0], 1
    result.append(Fraction(p, q))
    for a in terms[1:]:
        p_prev, q_prev, p, q = p, q, a * p + p_prev, a * q + q_prev
        result.append(Fraction(p, q))
    return result


def bounded_neighbors(x: Fraction, limit: int) -> tuple[Fraction, Fraction]:
    """The nearest fractions at or below and at or above ``x`` with denominator at most ``limit``.

    These are ``x`` itself (twice) when its denominator is small enough,
    otherwise its two neighbours in the Farey sequence of order ``limit``.
    Found by walking the continued fraction of ``x`` (the Stern-Brocot
    descent, one whole run of equal turns per step), so the cost grows with
    the number of continued-fraction terms, not with ``limit``.

    Examples
    --------
    >>> bounded_neighbors(Fraction(314159, 100000), 10)
    (Fraction(25, 8), Fraction(22, 7))
    >>> bounded_neighbors(Fraction(3, 7), 10)
    (Fraction(3, 7), Fraction(3, 7))
    """
    x = Fraction(x)
    if limit < 1:
        raise ValueError(f"denominator limit {limit} must be at least 1")
    if x.denominator <= limit:
        return x, x
    # Invariant: lo = a/b < x < hi = c/d are Farey neighbours (bc - ad = 1).
    floor = x.numerator // x.denominator
    a, b, c, d = floor, 1, floor + 1, 1
    while True:
        # Mediants (a + k c)/(b + k d) approach x from below as k grows while
        # they stay below x: take the whole run at once.
        num, den = x.numerator, x.denominator
        # Largest k with (a + k c)/(b + k d) <= x  <=>  k (c den - d num) <= b num - a den
        # (c/d > x makes the factor positive).
        k_below = (b * num - a * den) // (c * den - d * num)
        # Largest k with (c + k a)/(d + k b) >= x  <=>  k (num b - den a) <= c den - d num
        k_above = (c * den - d * num) // (num * b - den * a)
        if k_below > 0:
            k = min(k_below, (limit - b) // d)
            if k <= 0:
                return Fraction(a, b), Fraction(c, d)
            a, b = a + k * c, b + k * d
            if Fraction(a, b) == x:
                return x, x
            if k < k_below:
                return Fraction(a, b), Fraction(c, d)
        elif k_above > 0:
            k = min(k_above, (limit - d) // b)
            if k <= 0:
                return Fraction(a, b), Fraction(c, d)
            c, d = c + k * a, d + k * b
            if Fraction(c, d) == x:
                return x, x
            if k < k_above:
                return Fraction(a, b), Fraction(c, d)
        else:  # pragma: no cover - the mediant equals x, caught above
            return x, x


def floor_fraction(x: Fraction) -> int:
    """``floor(x)`` for a rational, exactly."""
    return x.numerator // x.denominator


def ceil_fraction(x: Fraction) -> int:
    """``ceil(x)`` for a rational, exactly."""
    return -((-x.numerator) // x.denominator)


def multiples_in(step: Fraction, lo: Fraction, hi: Fraction) -> range:
    """The whole ``m`` with ``lo <= m * step <= hi`` (``step > 0``), as a range.

    Examples
    --------
    >>> list(multiples_in(Fraction(500), Fraction(2400), Fraction(3200)))
    [5, 6]
    """
    first = ceil_fraction(Fraction(lo) / step)
    last = floor_fraction(Fraction(hi) / step)
    return range(max(first, 1), last + 1)
