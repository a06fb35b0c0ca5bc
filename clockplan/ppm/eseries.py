"""Preferred component values of IEC 60063 (the E series).

E6, E12 and E24 are the standard's listed values, which differ from
``10^(i/n)`` rounded in several places (2.7, 3.0, 3.3 ... 8.2), so they are
written out. E48, E96 and E192 follow the rounded formula at three significant
figures, with the one listed exception of E192 (9.20 instead of 9.19).
"""

from __future__ import annotations

from fractions import Fraction

from clockplan.errors import ClockplanError

__all__ = ["E_SERIES_NAMES", "series_mantissas", "series_values"]

_LISTED: dict[str, tuple[str, ...]] = {
    "E6": ("1.0", "1.5", "2.2", "3.3", "4.7", "6.8"),
    "E12": ("1.0", "1.2", "1.5", "1.8", "2.2", "2.7", "3.3", "3.9", "4.7", "5.6", "6.8", "8.2"),
    "E24": (
        "1.0", "1.1", "1.2", "1.3", "1.5", "1.6", "1.8", "2.0", "2.2", "2.4", "2.7", "3.0",
        "3.3", "3.6", "3.9", "4.3", "4.7", "5.1", "5.6", "6.2", "6.8", "7.5", "8.2", "9.1",
    ),
}
_COMPUTED = {"E48": 48, "E96": 96, "E192": 192}
_E192_EXCEPTIONS = {Fraction(919, 100): Fraction(920, 100)}

E_SERIES_NAMES = tuple(_LISTED) + tuple(_COMPUTED)


def series_mantissas(name: str) -> tuple[Fraction, ...]:
    """Values of one decade (1 <= v < 10) of an E series, exact.

    Examples
    --------
    >>> [str(v) for v in series_mantissas("E6")][:3]
    ['1', '3/2', '11/5']
    """
    key = name.upper()
    if key in _LISTED:
        return tuple(Fraction(v) for v in _LISTED[key])
    if key in _COMPUTED:
        n = _COMPUTED[key]
        values = [Fraction(round(10 ** (i / n), 2)).limit_denominator(100) for i in range(n)]
        if key == "E192":
            values = [_E192_EXCEPTIONS.get(v, v) for v in values]
        return tuple(values)
    raise ClockplanError(
        f"unknown E series {name!r}",
        hint="use one of " + ", ".join(E_SERIES_NAMES),
    )


def series_values(name: str, low: Fraction, high: Fraction) -> tuple[Fraction, ...]:
    """All values of an E series between ``low`` and ``high`` inclusive, any unit.

    Examples
    --------
    >>> [str(v * 10**12) for v in series_values("E12", Fraction(9, 10**12), Fraction(15, 10**12))]
    ['10', '12', '15']
    """
    if not 0 < low <= high:
        raise ClockplanError(f"value range {low}..{high} is empty", hint="give 0 < low <= high")
    mantissas = series_mantissas(name)
    decade = Fraction(1)
    while decade > low:
        decade /= 10
    while decade * 10 <= low:
        decade *= 10
    found = []
    while decade * mantissas[0] <= high:
        found.extend(decade * m for m in mantissas if low <= decade * m <= high)
        decade *= 10
    return tuple(found)
