"""Can a set of frequencies share one VCO of a PLL template?

Every output of a PLL divides the same VCO frequency by a whole number, so
frequencies that must be exact can share a VCO only at a whole multiple of
their least common multiple (``clockplan.plan.rational.lcm_fractions``), and
only where each quotient is a divider the template allows. A frequency below
the reach of the output dividers (``f * D_max`` under the VCO range) gets a
plain divider after its output with a fixed ratio ``b``: the smallest that
lets the output dividers reach ``f * b`` from the top of the VCO range
(:func:`low_ratio`); the output then runs at ``f * b``. A frequency with an
allowed synthesis error needs some divider that puts it inside its window at
that VCO frequency.

This check looks at the VCO alone, not at the reference: whether a feedback
ratio reaches the VCO frequency from a given reference (integer-N, the
denominator rule, the PFD range) is settled later by the planner on the
whole block. It is therefore *hereditary*: if a set can share a VCO, so can
every subset (the same VCO frequency and dividers serve it), which is what
lets the grouping search prune a block as soon as it cannot grow. Where the
check would have to examine more than ``MAX_MULTIPLES`` common multiples it
answers yes (optimistically, again hereditary), and the planner decides.

Results are cached per template and frequency set.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

from clockplan.plan.choices import at_or_above, ladder_of
from clockplan.plan.rational import ceil_fraction, floor_fraction, lcm_fractions, multiples_in
from clockplan.synth.classes import ConsumerClass
from clockplan.synth.library import DividerTemplate, PllTemplate
from clockplan.units import format_frequency

__all__ = ["MAX_MULTIPLES", "Compat", "VcoCompat", "needs_low_divider", "low_ratio"]

#: Common multiples examined before the check answers yes and leaves it to the planner.
MAX_MULTIPLES = 4000


def needs_low_divider(template: PllTemplate, hz: Fraction) -> bool:
    """True if no output divider reaches ``hz`` from any VCO frequency of the template.

    Examples
    --------
    >>> from clockplan.synth.library import default_library
    >>> t = default_library().pll("int-synth-4")
    >>> needs_low_divider(t, Fraction(3_072_000)), needs_low_divider(t, Fraction(12_288_000))
    (True, False)
    """
    return hz * template.output_divider.hi < template.vco.lo


def low_ratio(template: PllTemplate, divider: DividerTemplate | None, hz: Fraction) -> int | None:
    """The plain divider's ratio for a frequency below the output dividers' reach, or None if none works.

    The output dividers must reach ``hz * b`` from every VCO frequency:
    ``hz * b * D_max`` at or above the top of the VCO range and ``hz * b * D_min``
    at or below its bottom. Of those ``b``, the smallest power of two is taken
    where there is one (the low clocks of a board are mostly binary fractions of
    their family -- audio bit clocks, baud clocks, real-time clocks: common
    practice), else the smallest.

    Examples
    --------
    >>> from clockplan.synth.library import default_library
    >>> lib = default_library()
    >>> low_ratio(lib.pll("int-synth-4"), lib.divider, Fraction(1_843_200)), low_ratio(lib.pll("int-synth-4"), lib.divider, Fraction(3_072_000))
    (4, 4)
    """
    if divider is None:
        return None
    smallest = max(1, ceil_fraction(template.vco.hi / (hz * template.output_divider.hi)))
    largest = floor_fraction(template.vco.lo / (hz * template.output_divider.lo))
    power = 1 << (smallest - 1).bit_length()
    for b in (power, at_or_above(divider.ratio, smallest)):
        if b is not None and smallest <= b <= largest and b in divider.ratio:
            return b
    return None


@dataclass(frozen=True)
class Compat:
    """The answer for one template and set: ``ok``, a witness VCO frequency, or why not.

    ``vco_hz`` is None when the answer needed no witness (no exact frequency
    in the set, or the optimistic cap). ``reason`` says why not, in words.
    """

    ok: bool
    vco_hz: Fraction | None = None
    reason: str = ""


def _feedback_reaches(template: PllTemplate, input_hz: Fraction, v: Fraction, cap: int = 4096) -> bool:
    """Some R in the template's set puts the PFD in range and ``v`` on the feedback grid with N in range."""
    ratio = v / input_hz  # N = ratio * R
    lo = max(ceil_fraction(input_hz / template.pfd.hi), ceil_fraction(template.feedback_min / ratio), 1)
    hi = min(floor_fraction(input_hz / template.pfd.lo), floor_fraction(template.feedback_max / ratio))
    b = ratio.denominator
    rule = template.denominator if template.mode == "fractional" else None
    for count, r in enumerate(ladder_of(template.ref_divider, lo, hi).between(lo, hi)):
        if count >= cap:
            return True  # not prejudged: the planner decides
        if r % b == 0:
            return True
        if rule is not None:
            if rule.fixed is not None and (r * rule.fixed) % b == 0:
                return True
            if rule.limit is not None and b // math.gcd(b, r) <= rule.limit:
                return True
    return False


class VcoCompat:
    """Cached VCO compatibility of class sets for the templates of a library.

    Parameters
    ----------
    classes
        All consumer classes, by index.
    divider
        The plain divider template put after an output for low frequencies
        (None: such frequencies cannot be reached).

    Examples
    --------
    >>> from clockplan.synth.library import default_library
    >>> from clockplan.synth.classes import ConsumerClass
    >>> mhz = lambda x: Fraction(x) * 10**6
    >>> cs = [ConsumerClass(0, mhz("156.25"), Fraction(0), ("a",)), ConsumerClass(1, mhz(125), Fraction(0), ("b",)),
    ...       ConsumerClass(2, mhz(100), Fraction(0), ("c",))]
    >>> lib = default_library()
    >>> VcoCompat(cs, lib.divider).check(lib.pll("int-synth-4"), (0, 1, 2)).vco_hz
    Fraction(2500000000, 1)
    """

    def __init__(self, classes: Sequence[ConsumerClass], divider: DividerTemplate | None) -> None:
        self.classes = list(classes)
        self.divider = divider
        self._cache: dict[tuple[str, tuple[int, ...]], Compat] = {}

    def low(self, template: PllTemplate, index: int) -> bool:
        """True if class ``index`` needs a plain divider after its output on ``template``."""
        return needs_low_divider(template, self.classes[index].frequency)

    def low_ratio(self, template: PllTemplate, index: int) -> int | None:
        """The plain divider ratio class ``index`` gets on ``template`` (1 when it needs none)."""
        if not self.low(template, index):
            return 1
        return low_ratio(template, self.divider, self.classes[index].frequency)

    def _output_hz(self, template: PllTemplate, c: ConsumerClass) -> Fraction:
        """The frequency class ``c``'s output runs at: its own, or lifted above its plain divider."""
        ratio = self.low_ratio(template, c.index)
        assert ratio is not None
        return c.frequency * ratio

    def check(self, template: PllTemplate, members: Sequence[int]) -> Compat:
        """Can the classes ``members`` share one VCO of ``template``, each on its own output?"""
        key = (template.name, tuple(sorted(members)))
        found = self._cache.get(key)
        if found is None:
            found = self._check(template, key[1])
            self._cache[key] = found
        return found

    # ----------------------------------------------------------------- the check

    def _check(self, template: PllTemplate, members: tuple[int, ...]) -> Compat:
        if len(members) > template.outputs:
            return Compat(False, reason=f"{len(members)} frequencies need {len(members)} outputs; {template.name} has {template.outputs}")
        classes = [self.classes[i] for i in members]
        for c in classes:
            if self.low(template, c.index) and self.low_ratio(template, c.index) is None:
                return Compat(False, reason=f"{format_frequency(c.frequency)} is below the reach of {template.name}'s output dividers and no plain divider allowed brings it in reach")
        exact = [c for c in classes if c.exact]
        windowed = [c for c in classes if not c.exact]
        for c in classes:
            if len(members) > 1 and not self.check(template, (c.index,)).ok:
                return Compat(False, reason=self.check(template, (c.index,)).reason)
        if not exact:
            return self._alone(template, classes[0]) if len(classes) == 1 else Compat(True)
        step = lcm_fractions(self._output_hz(template, c) for c in exact)
        multiples = multiples_in(step, template.vco.lo, template.vco.hi)
        if len(multiples) > MAX_MULTIPLES:
            return Compat(True)
        for m in multiples:
            v = m * step
            if all(self._exact_at(template, c, v) for c in exact) and all(self._window_at(template, c, v) for c in windowed):
                return Compat(True, v)
        return Compat(False, reason=self._why_not(template, exact, step, bool(multiples)))

    def exact_from(self, template: PllTemplate, members: Sequence[int], input_hz: Fraction) -> bool:
        """Whether an exact plan exists from a reference at ``input_hz`` (every member exact).

        The planner's exact path (docs/planning.md) in brief: a common multiple of
        the outputs inside the VCO range, each divider allowed, and an R that puts
        the PFD in range with N in range and on the part's grid (whole; ``k/M`` for
        a fixed modulus; a denominator within the limit). Used to turn down a block
        before running the planner, whose search for the nearest (inexact) plan is
        slow; a set with more common multiples than ``MAX_MULTIPLES`` is not
        prejudged (True).
        """
        key = ("exact-from", template.name, tuple(sorted(members)), input_hz)
        found = self._cache.get(key)
        if found is None:
            found = Compat(self._exact_from(template, key[2], input_hz))
            self._cache[key] = found
        return found.ok

    def _exact_from(self, template: PllTemplate, members: tuple[int, ...], input_hz: Fraction) -> bool:
        classes = [self.classes[i] for i in members]
        if any(not c.exact for c in classes):
            return True  # a class allowed an error: the planner's sweep decides
        if not self.check(template, members).ok:
            return False
        step = lcm_fractions(self._output_hz(template, c) for c in classes)
        multiples = multiples_in(step, template.vco.lo, template.vco.hi)
        if len(multiples) > MAX_MULTIPLES:
            return True
        for m in multiples:
            v = m * step
            if all(self._exact_at(template, c, v) for c in classes) and _feedback_reaches(template, input_hz, v):
                return True
        return False

    def _exact_at(self, template: PllTemplate, c: ConsumerClass, v: Fraction) -> bool:
        q = v / self._output_hz(template, c)
        return q.denominator == 1 and q.numerator in template.output_divider

    def _window_at(self, template: PllTemplate, c: ConsumerClass, v: Fraction) -> bool:
        hz = self._output_hz(template, c)
        lo = ceil_fraction(v / (hz * (1 + c.tolerance)))
        hi = floor_fraction(v / (hz * (1 - c.tolerance))) if c.tolerance < 1 else lo + 10**9
        value = at_or_above(template.output_divider, lo)
        return value is not None and value <= hi

    def _alone(self, template: PllTemplate, c: ConsumerClass) -> Compat:
        """A windowed class alone: some output divider puts some VCO frequency inside its window."""
        hz = self._output_hz(template, c)
        lo = ceil_fraction(template.vco.lo / (hz * (1 + c.tolerance)))
        hi = floor_fraction(template.vco.hi / (hz * (1 - c.tolerance))) if c.tolerance < 1 else template.output_divider.hi
        value = at_or_above(template.output_divider, lo)
        return Compat(True) if value is not None and value <= hi else Compat(False, reason=self._reach_text(template, c))

    def _reach_text(self, template: PllTemplate, c: ConsumerClass) -> str:
        return (
            f"{format_frequency(c.frequency)} is out of reach of {template.name}: no divider brings a VCO in "
            f"{format_frequency(template.vco.lo)} to {format_frequency(template.vco.hi)} to it"
        )

    def _why_not(self, template: PllTemplate, exact: list[ConsumerClass], step: Fraction, any_multiple: bool) -> str:
        names = ", ".join(format_frequency(c.frequency) for c in exact)
        span = f"{format_frequency(template.vco.lo)} to {format_frequency(template.vco.hi)}"
        if len(exact) == 1:
            return self._reach_text(template, exact[0])
        if not any_multiple:
            return f"{names} need a VCO at a multiple of {format_frequency(step)}; none lies in {span} ({template.name})"
        return (
            f"{names} need a VCO at a multiple of {format_frequency(step)}; no multiple in {span} "
            f"divides into every one of them with the dividers of {template.name}"
        )
