"""Preferred number series for resistors and capacitors (IEC 60063 E-series).

A designed component value (say 3.917 nF) is not something one can buy; the
nearest value of a preferred series is.  IEC 60063 defines the series E3, E6,
E12 and E24 by tables (their values were rounded by hand long ago and do not
all follow the geometric formula) and E48, E96, E192 by the formula
``round(10 ** (i / n), 3 significant digits)`` with a single exception
(9.20 instead of 9.19 in E192).

"Nearest" means nearest in ratio (smallest ``|log(value / candidate)|``),
because the series are geometric: the step between neighbours is a constant
percentage, so an absolute distance would favour the lower neighbour.

Values are returned as the float nearest to the exact decimal value
(``4.7e-9``, never ``4.700000000000001e-09``).
"""

from __future__ import annotations

import math
from bisect import bisect_left
from fractions import Fraction
from functools import lru_cache

from clockplan.errors import ClockplanError

__all__ = [
    "SERIES_NAMES",
    "series_mantissas",
    "series_tolerance",
    "eseries_values",
    "exact_values",
    "snap",
    "nearest_values",
]

# IEC 60063 tables, mantissas times 10 (E3..E24) -- integers keep them exact.
_E24_TENTHS = (
    10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
    33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
)
_TABLED_STRIDE = {"E3": 8, "E6": 4, "E12": 2, "E24": 1}
_FORMULA_SIZES = {"E48": 48, "E96": 96, "E192": 192}
# Tolerance each series was made for (IEC 60063): neighbouring values are
# about two tolerances apart, so a value snapped to the series is within
# roughly one tolerance of the ideal.
_TOLERANCES = {
    "E3": 0.4, "E6": 0.2, "E12": 0.1, "E24": 0.05,
    "E48": 0.02, "E96": 0.01, "E192": 0.005,
}

SERIES_NAMES: tuple[str, ...] = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")


def _normalise_name(series: str) -> str:
    name = str(series).strip().upper()
    if name not in SERIES_NAMES:
        raise ClockplanError(
            f"unknown preferred-number series {series!r}",
            hint="use one of " + ", ".join(SERIES_NAMES) + " (IEC 60063)",
        )
    return name


@lru_cache(maxsize=None)
def _mantissa_hundredths(name: str) -> tuple[int, ...]:
    """Mantissas of one decade as integers in hundredths (1.00 -> 100)."""
    if name in _TABLED_STRIDE:
        return tuple(10 * v for v in _E24_TENTHS[:: _TABLED_STRIDE[name]])
    n = _FORMULA_SIZES[name]
    values = [round(100 * 10 ** (i / n)) for i in range(n)]
    if name == "E192":
        values[values.index(919)] = 920  # the one exception in IEC 60063
    return tuple(values)


def series_mantissas(series: str) -> tuple[float, ...]:
    """Return the values of one decade of ``series``, from 1.0 up to below 10.

    Examples
    --------
    >>> series_mantissas("E6")
    (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
    """
    return tuple(v / 100 for v in _mantissa_hundredths(_normalise_name(series)))


def series_tolerance(series: str) -> float:
    """Return the component tolerance ``series`` was made for, as a fraction.

    Examples
    --------
    >>> series_tolerance("E24")
    0.05
    """
    return _TOLERANCES[_normalise_name(series)]


def _value(hundredths: int, decade: int) -> float:
    # Parsing the decimal text gives the correctly rounded float.
    return float(f"{hundredths}e{decade - 2}")


def eseries_values(series: str, decade_lo: int, decade_hi: int) -> list[float]:
    """Return every value of ``series`` in the decades ``10**decade_lo`` .. ``10**decade_hi``.

    Both decades are included; the list is sorted and ends below
    ``10**(decade_hi + 1)``.

    Parameters
    ----------
    series
        ``"E3"``, ``"E6"``, ``"E12"``, ``"E24"``, ``"E48"``, ``"E96"`` or ``"E192"``
        (case does not matter).
    decade_lo, decade_hi
        Powers of ten, e.g. ``-12`` for picofarads.

    Examples
    --------
    >>> eseries_values("E3", -9, -8)
    [1e-09, 2.2e-09, 4.7e-09, 1e-08, 2.2e-08, 4.7e-08]
    """
    name = _normalise_name(series)
    if int(decade_lo) != decade_lo or int(decade_hi) != decade_hi or decade_hi < decade_lo:
        raise ClockplanError(
            f"bad decade range {decade_lo!r}..{decade_hi!r}",
            hint="give two integers with decade_lo <= decade_hi, e.g. -12 and -6",
        )
    mantissas = _mantissa_hundredths(name)
    return [_value(m, d) for d in range(int(decade_lo), int(decade_hi) + 1) for m in mantissas]


def exact_values(series: str, low: Fraction | int, high: Fraction | int) -> tuple[Fraction, ...]:
    """Return every value of ``series`` with ``low <= value <= high``, as exact fractions.

    For exact work (e.g. load capacitances kept as :class:`~fractions.Fraction`).

    Examples
    --------
    >>> [str(v * 10**12) for v in exact_values("E12", Fraction(9, 10**12), Fraction(15, 10**12))]
    ['10', '12', '15']
    """
    name = _normalise_name(series)
    low, high = Fraction(low), Fraction(high)
    if not 0 < low <= high:
        raise ClockplanError(f"value range {low}..{high} is empty", hint="give 0 < low <= high")
    mantissas = _mantissa_hundredths(name)
    decade = math.floor(math.log10(low)) - 1  # float log may be off by one: start a decade early
    found: list[Fraction] = []
    while Fraction(mantissas[0], 100) * Fraction(10) ** decade <= high:
        scale = Fraction(10) ** decade / 100
        found.extend(v for v in (m * scale for m in mantissas) if low <= v <= high)
        decade += 1
    return tuple(found)


def _check_positive(value: float) -> float:
    try:
        number = float(value)
    except (TypeError, ValueError):
        number = math.nan
    if not (math.isfinite(number) and number > 0):
        raise ClockplanError(
            f"cannot pick a preferred value for {value!r}",
            hint="component values must be finite and greater than zero",
        )
    return number


def _candidates(value: float, name: str, spread: int) -> list[float]:
    """Series values in the decades around ``value`` (``spread`` decades either side)."""
    decade = math.floor(math.log10(value))
    return eseries_values(name, decade - spread, decade + spread)


def _ratio_distance(value: float, candidate: float) -> float:
    return abs(math.log(candidate / value))


def snap(value: float, series: str) -> float:
    """Return the value of ``series`` nearest to ``value`` (nearest in ratio).

    Examples
    --------
    >>> snap(3.9e-9, "E12")
    3.9e-09
    >>> snap(4.0e3, "E24")
    3900.0
    """
    return nearest_values(value, series, 1)[0]


def nearest_values(value: float, series: str, n: int) -> list[float]:
    """Return the ``n`` values of ``series`` nearest to ``value``, nearest first.

    Useful to offer alternatives (e.g. the two neighbours of a crystal load
    capacitance). Ties in ratio go to the smaller value.

    Examples
    --------
    >>> nearest_values(4.0e-12, "E12", 3)
    [3.9e-12, 4.7e-12, 3.3e-12]
    """
    number = _check_positive(value)
    name = _normalise_name(series)
    if int(n) != n or n < 1:
        raise ClockplanError(f"cannot return {n!r} values", hint="ask for n >= 1 values")
    count = int(n)
    per_decade = len(_mantissa_hundredths(name))
    spread = 1 + count // per_decade
    candidates = _candidates(number, name, spread)
    # Only the neighbourhood of the insertion point can hold the nearest values.
    at = bisect_left(candidates, number)
    window = candidates[max(at - count, 0) : at + count]
    return sorted(window, key=lambda c: (_ratio_distance(number, c), c))[:count]
