"""The margin policy: when a budget that passes has too little of it left.

One rule for every budget a consumer is judged by (the synthesis error, the
frequency error in ppm, the RMS jitter): the *headroom* is the share of the
budget still free (``1 - used / allowed``; ``0.25`` = a quarter left, ``0`` at
the limit, negative over it), and a consumer inside its budget with less
headroom than the board's ``margin_warning`` (``[board] margin_warning``,
default 20 %, the common-practice design margin) gets a warning finding.
:func:`is_thin` is the one place that decides; the budget stages and the
audit call it.

A thin margin is a warning, not a failure: the budgets are planning
estimates, and a figure with little room left is the one a datasheet
correction, a colder corner or a worse part moves over the line.
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any

from clockplan.errors import ClockplanError

__all__ = [
    "DEFAULT_MARGIN_WARNING",
    "MARGIN_WARNING_RANGE",
    "parse_margin_warning",
    "format_margin_warning",
    "is_thin",
    "synthesis_headroom",
    "budget_headroom",
]

#: The headroom below which a passing budget warns (20 %, common practice for a design margin).
DEFAULT_MARGIN_WARNING = Fraction(1, 5)
#: Allowed values of ``margin_warning``: 0 (never warn) up to, not including, 100 % (warn on every pass).
MARGIN_WARNING_RANGE = (Fraction(0), Fraction(1))


def parse_margin_warning(value: Any) -> Fraction:
    """Read ``margin_warning`` (``"20 %"``, ``"12.5 %"``, ``"0 %"``) as an exact fraction of a budget.

    The unit ``%`` is required (a bare ``0.2`` or ``20`` could mean either), and
    the value must lie in 0 % .. 100 % (100 % excluded: it would warn on every
    budget, including an exact target met exactly).

    Raises
    ------
    ClockplanError
        Not a text with ``%``, not a number, or out of range (the board reader
        locates it at ``board.margin_warning``).

    Examples
    --------
    >>> parse_margin_warning("20 %")
    Fraction(1, 5)
    >>> parse_margin_warning("0%")
    Fraction(0, 1)
    """
    from clockplan.units import parse_number

    shown = repr(value) if len(repr(value)) <= 40 else repr(value)[:37] + "..."
    hint = "write a share of the budget with its unit, e.g. margin_warning = \"20 %\" (0 % turns the warning off)"
    if not isinstance(value, str) or not value.strip().endswith("%"):
        raise ClockplanError(f"margin_warning {shown} needs the unit %", hint=hint)
    try:
        share = parse_number(value.strip()[:-1].strip()) / 100
    except ClockplanError as err:
        raise ClockplanError(f"margin_warning {shown} is not a percentage: {err.message}", hint=hint) from None
    low, high = MARGIN_WARNING_RANGE
    if not low <= share < high:
        raise ClockplanError(f"margin_warning {shown} is outside 0 % .. 100 % (100 % excluded)", hint=hint)
    return share


def format_margin_warning(threshold: Fraction) -> str:
    """The threshold as text, e.g. ``'20 %'``.

    Examples
    --------
    >>> format_margin_warning(Fraction(1, 5)), format_margin_warning(Fraction(1, 8))
    ('20 %', '12.5 %')
    """
    return f"{float(threshold) * 100:g} %"


def is_thin(headroom: float | Fraction | None, threshold: Fraction) -> bool:
    """Whether a budget passes with less headroom than ``threshold``: the margin policy.

    ``headroom`` is the share of the budget left (negative when over, where the
    budget's own finding speaks, so it is not thin but broken); None (no budget,
    or an exact target met exactly) is never thin. Exactly at the threshold is
    not thin: the warning is for *less* than the margin asked.

    Examples
    --------
    >>> is_thin(0.056, Fraction(1, 5)), is_thin(0.2, Fraction(1, 5)), is_thin(-0.1, Fraction(1, 5))
    (True, False, False)
    """
    if headroom is None:
        return False
    return 0 <= headroom < threshold


def synthesis_headroom(error: Fraction, allowed: Fraction) -> Fraction | None:
    """The share of an allowed synthesis error still free, exactly: ``1 - |error| / allowed``.

    None for an exact target (``allowed == 0``): there is no budget to measure
    room in (a missed exact target is the audit's ``frequency`` error).

    Examples
    --------
    >>> synthesis_headroom(Fraction(-19, 1000), Fraction(2, 100))
    Fraction(1, 20)
    """
    if allowed == 0:
        return None
    return 1 - abs(error) / allowed


def budget_headroom(margin: Fraction, half_width: Fraction) -> Fraction:
    """The share of a budget left, ``margin / half_width``; a budget of width zero has none.

    A ±0 budget (``"0 ppm"``) has no room to share out: its headroom is 0 when
    the result sits exactly on it and -1 (over) otherwise, never a division by zero.

    Examples
    --------
    >>> budget_headroom(Fraction(40), Fraction(100))
    Fraction(2, 5)
    >>> budget_headroom(Fraction(0), Fraction(0)), budget_headroom(Fraction(-1, 10**6), Fraction(0))
    (Fraction(0, 1), Fraction(-1, 1))
    >>> budget_headroom(-1e-6, Fraction(1, 10**400))
    Fraction(-1000000000, 1)
    """
    if half_width == 0:
        return Fraction(0) if margin >= 0 else Fraction(-1)
    # Exact, whatever mix of float and Fraction: a float margin over a Fraction width smaller than
    # the smallest float would otherwise divide by 0.0. Held within ±1e9 so that it converts to a float.
    headroom = Fraction(margin) / Fraction(half_width)
    return min(max(headroom, Fraction(-(10**9))), Fraction(10**9))
