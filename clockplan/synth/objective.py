"""The objective synthesis minimizes: parts, then power, then cost, then the worst margin.

Trees are compared criterion by criterion (a later one only breaks ties of
all earlier ones):

1. the number of parts (oscillators, PLLs, dividers, fanout buffers);
2. the total steady power, exact in watts;
3. the total relative cost, exact;
4. the worst budget margin, larger first: the smallest fraction of a budget
   left over any consumer's ppm and jitter budgets.

Part counts, power and cost add over the parts of a tree, so they are summed
exactly (:class:`Cost`); the margin is a float from the budget stages.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

__all__ = ["Cost", "ZERO", "tree_key"]


@dataclass(frozen=True)
class Cost:
    """Parts, steady power (W) and relative cost of some parts of a tree, exact.

    Examples
    --------
    >>> a = Cost(1, Fraction(35, 100), Fraction(3))
    >>> b = Cost(1, Fraction(1, 50), Fraction(1))
    >>> (a + b).parts, (a + b).power_w, (a + b).key() < (a + a).key()
    (2, Fraction(37, 100), True)
    """

    parts: int = 0
    power_w: Fraction = Fraction(0)
    cost: Fraction = Fraction(0)

    def __add__(self, other: "Cost") -> "Cost":
        return Cost(self.parts + other.parts, self.power_w + other.power_w, self.cost + other.cost)

    def __sub__(self, other: "Cost") -> "Cost":
        return Cost(self.parts - other.parts, self.power_w - other.power_w, self.cost - other.cost)

    def times(self, count: int) -> "Cost":
        """``count`` of these parts."""
        return Cost(self.parts * count, self.power_w * count, self.cost * count)

    def key(self) -> tuple[int, Fraction, Fraction]:
        """Sort key: smaller is better."""
        return (self.parts, self.power_w, self.cost)


ZERO = Cost()


def tree_key(cost: Cost, worst_margin: float | None) -> tuple[int, Fraction, Fraction, float]:
    """The full objective key of a tree; smaller is better.

    A tree without any judged budget has no margin and sorts as if its margin were infinite.

    Examples
    --------
    >>> tree_key(Cost(3), 0.5) < tree_key(Cost(3), 0.2)
    True
    >>> tree_key(Cost(2), 0.0) < tree_key(Cost(3), 0.9)
    True
    """
    margin = math.inf if worst_margin is None else worst_margin
    return (*cost.key(), -margin)
