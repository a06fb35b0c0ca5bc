"""Fractional frequency errors as people read them: ppm for small ones, % from 0.1 % up.

Display only: the numbers stay fractional (1 ppm = 1e-6) everywhere else.
"""

from __future__ import annotations

from fractions import Fraction

from clockplan.units import format_ppm

__all__ = ["format_error", "format_limits"]

Number = Fraction | float


def format_error(value: Number) -> str:
    """A signed fractional error in ppm, or in % from 0.1 % up, the way datasheets write them.

    Examples
    --------
    >>> format_error(Fraction(-1, 50000)), format_error(Fraction(-21, 1000)), format_error(Fraction(0))
    ('-20 ppm', '-2.1 %', '0 ppm')
    """
    if abs(value) >= Fraction(1, 1000):
        return f"{float(value) * 100:+.3g} %"
    return format_ppm(value)


def format_limits(limits: tuple[Number, Number]) -> str:
    """An error range: ``±20 ppm`` when symmetric, else ``-100 %..0 ppm``.

    Examples
    --------
    >>> format_limits((Fraction(-1, 50), Fraction(1, 50))), format_limits((Fraction(-1, 10**4), Fraction(0)))
    ('±2 %', '-100 ppm..0 ppm')
    """
    low, high = limits
    if low == -high:
        return "±" + format_error(high).lstrip("+")
    return f"{format_error(low)}..{format_error(high)}"
