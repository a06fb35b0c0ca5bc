"""The planner's objective: a lexicographic key, documented in docs/planning.md.

Plans are compared criterion by criterion; a later criterion only breaks
ties of all earlier ones:

1. every consumer inside its allowed synthesis error (feasible plans first);
2. the smallest worst synthesis error ``|actual / target - 1|``, exact;
3. integer-N over fractional-N: fewer PLLs running a fractional N
   (a fractional-N PLL whose chosen N happens to be whole counts as integer);
4. the highest PFD frequency (lower in-band noise): the product of the
   PFD frequencies of the PLLs in the plan, larger first;
5. fewer fractional-N PLLs whose integer-boundary spur falls inside the loop
   bandwidth;
6. fewer dividers other than 1, then the smallest sum of divider values;
7. the integer-boundary spur furthest from the carrier (the smallest offset
   over the fractional-N PLLs, larger first).

Scores of independent parts of a plan combine with :meth:`Score.combined`.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from fractions import Fraction

__all__ = ["Score"]


@dataclass(frozen=True)
class Score:
    """The measures the objective compares, for one part of a plan or a whole plan.

    Parameters
    ----------
    violations
        Number of consumers outside their allowed synthesis error.
    worst_error
        Largest ``|actual / target - 1|`` over the consumers, exact.
    fractional
        Number of PLLs running a non-integer N.
    pfd_product
        Product of the PFD frequencies in Hz (1 when there is no PLL).
    spurs_in_band
        Number of fractional-N PLLs whose integer-boundary spur falls inside
        the loop bandwidth.
    active_dividers
        Number of divider settings other than 1.
    divider_sum
        Sum of all divider settings.
    spur_offset
        Smallest integer-boundary spur offset in Hz, None if no fractional-N PLL.

    Examples
    --------
    >>> exact = Score(worst_error=Fraction(0))
    >>> off = Score(worst_error=Fraction(1, 10**6))
    >>> exact.key() < off.key()
    True
    """

    violations: int = 0
    worst_error: Fraction = Fraction(0)
    fractional: int = 0
    pfd_product: Fraction = Fraction(1)
    spurs_in_band: int = 0
    active_dividers: int = 0
    divider_sum: int = 0
    spur_offset: Fraction | None = None

    @property
    def feasible(self) -> bool:
        """True if every consumer is inside its allowed synthesis error."""
        return self.violations == 0

    def key(self) -> tuple:
        """The sort key: smaller is better."""
        offset = -self.spur_offset if self.spur_offset is not None else Fraction(-(10**30))
        return (
            self.violations > 0,
            self.worst_error,
            self.fractional,
            -self.pfd_product,
            self.spurs_in_band,
            self.active_dividers,
            self.divider_sum,
            offset,
        )

    def combined(self, other: "Score") -> "Score":
        """The score of two independent parts of one plan taken together.

        Examples
        --------
        >>> a = Score(worst_error=Fraction(1, 100), fractional=1)
        >>> b = Score(worst_error=Fraction(1, 1000), active_dividers=2)
        >>> a.combined(b).worst_error, a.combined(b).fractional, a.combined(b).active_dividers
        (Fraction(1, 100), 1, 2)
        """
        offsets = [o for o in (self.spur_offset, other.spur_offset) if o is not None]
        return Score(
            violations=self.violations + other.violations,
            worst_error=max(self.worst_error, other.worst_error),
            fractional=self.fractional + other.fractional,
            pfd_product=self.pfd_product * other.pfd_product,
            spurs_in_band=self.spurs_in_band + other.spurs_in_band,
            active_dividers=self.active_dividers + other.active_dividers,
            divider_sum=self.divider_sum + other.divider_sum,
            spur_offset=min(offsets) if offsets else None,
        )

    def with_dividers(self, dividers: "list[int] | tuple[int, ...]") -> "Score":
        """A copy that also counts these divider settings."""
        return replace(
            self,
            active_dividers=self.active_dividers + sum(1 for d in dividers if d != 1),
            divider_sum=self.divider_sum + sum(dividers),
        )
