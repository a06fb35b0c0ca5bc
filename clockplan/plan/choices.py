"""Allowed divider values as a sorted ladder the planner can search by bisection.

A PLL output divider allows a range (maybe in steps, such as even only) or an
explicit set (such as powers of two). When an open plain divider follows the
output, the ratio the consumer sees is the product of both; a
:class:`Ladder` then holds the products inside the window that matters and
remembers how each product splits into the two settings.
"""

from __future__ import annotations

import bisect
from collections.abc import Sequence
from dataclasses import dataclass, field

from clockplan.parts import IntChoices

__all__ = ["Ladder", "ladder_of", "product_ladder", "at_or_below", "at_or_above"]


def at_or_below(choices: IntChoices, x: int) -> int | None:
    """The largest allowed value ``<= x``, or None.

    Examples
    --------
    >>> at_or_below(IntChoices(2, 256, step=2), 7)
    6
    """
    if choices.values is not None:
        index = bisect.bisect_right(choices.values, x)
        return choices.values[index - 1] if index else None
    if x < choices.lo:
        return None
    top = min(x, choices.hi)
    return top - (top - choices.lo) % choices.step


def at_or_above(choices: IntChoices, x: int) -> int | None:
    """The smallest allowed value ``>= x``, or None.

    Examples
    --------
    >>> at_or_above(IntChoices.of((1, 2, 4, 8)), 5)
    8
    """
    if choices.values is not None:
        index = bisect.bisect_left(choices.values, x)
        return choices.values[index] if index < len(choices.values) else None
    bottom = max(x, choices.lo)
    value = bottom + (-(bottom - choices.lo)) % choices.step
    return value if value <= choices.hi else None


@dataclass(frozen=True)
class Ladder:
    """Sorted allowed divider values (or products of divider values) in a window.

    ``splits`` maps a product to the settings that make it (one per factor);
    it is empty for a single divider.
    """

    values: Sequence[int]
    splits: dict[int, tuple[int, ...]] = field(default_factory=dict)
    truncated: bool = False

    def below(self, x: int) -> int | None:
        """The largest value ``<= x`` in the ladder, or None."""
        index = bisect.bisect_right(self.values, x)
        return self.values[index - 1] if index else None

    def above(self, x: int) -> int | None:
        """The smallest value ``>= x`` in the ladder, or None."""
        index = bisect.bisect_left(self.values, x)
        return self.values[index] if index < len(self.values) else None

    def between(self, lo: int, hi: int) -> Sequence[int]:
        """The values ``lo <= d <= hi``."""
        start = bisect.bisect_left(self.values, lo)
        stop = bisect.bisect_right(self.values, hi)
        return self.values[start:stop]

    def split(self, value: int) -> tuple[int, ...]:
        """The settings (one per divider in the chain) that make ``value``."""
        return self.splits.get(value, (value,))


def ladder_of(choices: IntChoices, lo: int, hi: int) -> Ladder:
    """The allowed values of ``choices`` in ``[lo, hi]``, widened by one allowed value each side.

    Examples
    --------
    >>> list(ladder_of(IntChoices(1, 256), 10, 12).values)
    [9, 10, 11, 12, 13]
    """
    first = at_or_below(choices, lo - 1) or at_or_above(choices, lo)
    last = at_or_above(choices, hi + 1) or at_or_below(choices, hi)
    if first is None or last is None or first > last:
        return Ladder(())
    if choices.values is not None:
        start = bisect.bisect_left(choices.values, first)
        stop = bisect.bisect_right(choices.values, last)
        return Ladder(choices.values[start:stop])
    return Ladder(range(first, last + 1, choices.step))


def product_ladder(factors: Sequence[IntChoices], lo: int, hi: int, cap: int) -> Ladder:
    """Products ``d1 * d2 * ...`` (one value from each set) in ``[lo, hi]``, widened by one each side.

    Each product keeps the split with the fewest dividers other than 1, then
    the smallest sum. At most ``cap`` products are kept (``truncated`` says
    when the window held more).

    Examples
    --------
    >>> ladder = product_ladder([IntChoices(4, 8), IntChoices(1, 3)], 20, 22, 100)
    >>> list(ladder.values), ladder.split(21)
    ([18, 20, 21, 24], (7, 3))
    """
    best: dict[int, tuple[int, ...]] = {}
    partial: dict[int, tuple[int, ...]] = {1: ()}
    for index, choices in enumerate(factors):
        rest = factors[index + 1 :]
        rest_lo = 1
        rest_hi = 1
        for other in rest:
            rest_lo *= other.lo
            rest_hi *= other.hi
        grown: dict[int, tuple[int, ...]] = {}
        for value, split in partial.items():
            # Widen by one product on each side of the window: a product just
            # outside still shapes the error curve inside it.
            low = max(1, (lo - 1) // (value * rest_hi))
            high = -(-(hi + 1) // (value * rest_lo))
            start = at_or_below(choices, low) or at_or_above(choices, low)
            stop = at_or_above(choices, high) or at_or_below(choices, high)
            if start is None or stop is None:
                continue
            for d in _values_between(choices, start, stop):
                _keep_better(grown, value * d, split + (d,))
                if len(grown) > 4 * cap:
                    break
        partial = grown
    for product, split in partial.items():
        _keep_better(best, product, split)
    ordered = sorted(best)
    below = [p for p in ordered if p < lo]
    inside = [p for p in ordered if lo <= p <= hi]
    above = [p for p in ordered if p > hi]
    values = below[-1:] + inside + above[:1]
    truncated = len(values) > cap
    if truncated:
        values = values[:cap]
    return Ladder(values, {p: best[p] for p in values}, truncated)


def _values_between(choices: IntChoices, lo: int, hi: int) -> Sequence[int]:
    if choices.values is not None:
        return [v for v in choices.values if lo <= v <= hi]
    first = at_or_above(choices, lo)
    if first is None:
        return ()
    return range(first, min(hi, choices.hi) + 1, choices.step)


def _keep_better(table: dict[int, tuple[int, ...]], product: int, split: tuple[int, ...]) -> None:
    def rank(s: tuple[int, ...]) -> tuple[int, int]:
        return (sum(1 for d in s if d != 1), sum(s))

    current = table.get(product)
    if current is None or rank(split) < rank(current):
        table[product] = split
