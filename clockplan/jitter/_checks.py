"""Argument checks shared by the jitter modules: numbers the user gives must make sense."""

from __future__ import annotations

import math
from fractions import Fraction

from clockplan.errors import ClockplanError

__all__ = ["positive_number"]


def positive_number(value: object, *, key: str, what: str, hint: str, allow_zero: bool = False) -> float:
    """Return ``value`` as a finite float above zero (or at least zero), else raise.

    Exact inputs (int, Fraction) are converted to the nearest float: noise
    arithmetic is in floats.

    Examples
    --------
    >>> positive_number(Fraction(201, 2), key="ratio", what="divider ratio", hint="e.g. 4")
    100.5
    """
    try:
        number = float(Fraction(value)) if isinstance(value, (int, Fraction)) else float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        number = math.nan
    if isinstance(value, bool) or not math.isfinite(number) or number < 0 or (number == 0 and not allow_zero):
        limit = "zero or above" if allow_zero else "above zero"
        raise ClockplanError(f"{what} {value!r} is not a finite number {limit}", key=key, hint=hint)
    return number
