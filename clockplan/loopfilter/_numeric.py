"""Small numeric helpers shared by the loop-filter modules (plain Python, no scipy)."""

from __future__ import annotations

import math
from collections.abc import Callable

__all__ = ["geometric_bisection"]


def geometric_bisection(predicate: Callable[[float], bool], low: float, high: float, rel_tol: float = 1e-13) -> float:
    """Return the point in ``[low, high]`` (both > 0) where ``predicate`` turns from True to False.

    Bisects on ``log(x)``, so the answer has a relative accuracy of
    ``rel_tol`` whatever the scale.  ``predicate(low)`` is assumed True and
    ``predicate(high)`` False.

    Examples
    --------
    >>> round(geometric_bisection(lambda x: x * x < 2, 1.0, 2.0), 12)
    1.414213562373
    """
    for _ in range(200):
        middle = math.sqrt(low * high)
        if predicate(middle):
            low = middle
        else:
            high = middle
        if high / low - 1 < rel_tol:
            break
    return math.sqrt(low * high)
