"""A synthesized tree: one main reference, blocks of classes, classes taken straight off the reference.

* The **main reference** (an oscillator template at a stock frequency, or the
  board's fixed reference) feeds every PLL block and every *direct* class; it
  has one output (one load), so more loads get fanout buffers.
* A **block** is one part serving some classes: a PLL template (each *own*
  class on outputs of its own) or a dedicated oscillator at the frequency of
  its one own class (a watch crystal for a real-time clock, say). *Attached*
  classes are divided down exactly from an own class of the block.
* A **direct** class runs at the reference's frequency, or at a whole
  fraction of it through a plain divider.

:class:`Problem` holds what every part of the search shares: the classes,
the library, the VCO compatibility cache and the layout cache.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

from clockplan.parts import Reference
from clockplan.plan.rational import ceil_fraction, floor_fraction
from clockplan.synth.classes import ConsumerClass, consumer_classes
from clockplan.synth.compat import VcoCompat
from clockplan.synth.input import ConsumerList
from clockplan.synth.layout import Fan, Layout, block_layout, fan_for, part_cost
from clockplan.synth.library import OscillatorTemplate, PartsLibrary, PllTemplate
from clockplan.synth.objective import ZERO, Cost
from clockplan.units import format_frequency

__all__ = ["MainReference", "Block", "DirectClass", "Tree", "Problem", "short_frequency"]


def short_frequency(hz: Fraction) -> str:
    """A frequency as an id fragment: ``25m``, ``24m576``, ``32k768``, ``148m35`` (rounded).

    Examples
    --------
    >>> short_frequency(Fraction(24_576_000)), short_frequency(Fraction(32768)), short_frequency(Fraction(25_000_000))
    ('24m576', '32k768', '25m')
    """
    for scale, letter in ((10**9, "g"), (10**6, "m"), (10**3, "k"), (1, "h")):
        if hz >= scale:
            whole, rest = divmod(round(hz * 1000 / scale), 1000)
            return f"{whole}{letter}{str(rest).rjust(3, '0').rstrip('0')}"
    return "0h"


@dataclass(frozen=True, eq=False)
class MainReference:
    """The tree's main reference: a library oscillator at ``hz``, or the board's fixed reference."""

    hz: Fraction
    template: OscillatorTemplate | None = None
    fixed: Reference | None = None
    raw: dict[str, Any] | None = None

    @property
    def name(self) -> str:
        """The template's name, or ``fixed``."""
        return self.template.name if self.template is not None else "fixed"

    @property
    def outputs(self) -> int:
        """How many loads it drives without a buffer."""
        return self.template.outputs if self.template is not None else 1

    @property
    def cost(self) -> Cost:
        """One part, its steady power and cost (a fixed reference costs what its power key says)."""
        if self.template is not None:
            return part_cost(self.template)
        power = self.fixed.oscillator.power if self.fixed is not None and self.fixed.oscillator is not None else None
        return Cost(1, Fraction(power.steady_w) if power is not None else Fraction(0), Fraction(0))

    def label(self) -> str:
        """E.g. ``25 MHz xo``."""
        return f"{format_frequency(self.hz)} {self.name if self.fixed is None else self.fixed.id + ' (fixed)'}"


@dataclass(frozen=True)
class Block:
    """One part and the classes it serves: ``own`` on outputs of their own, ``attached`` = ``(class, parent, ratio)``."""

    kind: Any  # PllTemplate | OscillatorTemplate
    own: tuple[int, ...]
    attached: tuple[tuple[int, int, int], ...] = ()

    @property
    def is_pll(self) -> bool:
        """True for a PLL block, False for a dedicated oscillator."""
        return isinstance(self.kind, PllTemplate)

    def members(self) -> tuple[int, ...]:
        """Every class of the block, own and attached, in order."""
        return tuple(sorted(self.own + tuple(c for c, _, _ in self.attached)))

    def signature(self) -> tuple:
        """What identifies the block (the template by name)."""
        return (self.kind.name, self.own, self.attached)


@dataclass(frozen=True)
class DirectClass:
    """A class served straight from the main reference: divided by ``ratio`` (1: no divider)."""

    cls: int
    ratio: int


@dataclass(frozen=True)
class Tree:
    """A whole tree: the main reference (None when no part needs it), blocks and direct classes."""

    reference: MainReference | None
    blocks: tuple[Block, ...]
    direct: tuple[DirectClass, ...] = ()

    @property
    def uses_reference(self) -> bool:
        """True if a PLL block or a direct class needs the main reference."""
        return any(b.is_pll for b in self.blocks) or bool(self.direct)

    def signature(self) -> tuple:
        """What makes two trees the same tree."""
        ref = (self.reference.name, self.reference.hz) if self.reference is not None and self.uses_reference else None
        return (ref, tuple(sorted(b.signature() for b in self.blocks)), tuple(sorted((d.cls, d.ratio) for d in self.direct)))


def _accuracy_spec(oscillator: "MainReference | OscillatorTemplate") -> Any:
    """The accuracy figures of a template or main reference (None: a fixed reference without them)."""
    if isinstance(oscillator, OscillatorTemplate):
        return oscillator.spec
    if oscillator.template is not None:
        return oscillator.template.spec
    return oscillator.fixed.oscillator if oscillator.fixed is not None else None


@dataclass(eq=False)
class Problem:
    """What the search shares: the consumer list, classes, library and caches.

    Examples
    --------
    >>> from clockplan.synth.input import parse_consumer_list
    >>> from clockplan.synth.library import default_library
    >>> spec = parse_consumer_list('[[consumer]]\\nid = "a"\\nfrequency = "100 MHz"\\n')
    >>> [c.label() for c in Problem.of(spec, default_library()).classes]
    ['100 MHz (a)']
    """

    spec: ConsumerList
    library: PartsLibrary
    classes: tuple[ConsumerClass, ...]
    compat: VcoCompat
    _layouts: dict[tuple, Layout | None] = field(default_factory=dict)
    _fits: dict[tuple, bool] = field(default_factory=dict)
    _costs: dict[tuple, Cost | None] = field(default_factory=dict)

    @classmethod
    def of(cls, spec: ConsumerList, library: PartsLibrary) -> "Problem":
        """The problem for a consumer list and a library."""
        classes = consumer_classes(spec.consumers)
        return cls(spec, library, classes, VcoCompat(classes, library.divider))

    # ----------------------------------------------------------------- layout and cost

    def layout(self, kind: Any, own: Sequence[int], attached: Sequence[tuple[int, int, int]]) -> Layout | None:
        """The layout of a block (cached)."""
        key = (kind.name, tuple(own), tuple(attached))
        if key not in self._layouts:
            pll = isinstance(kind, PllTemplate)
            own_rows = [(c, self.classes[c].count, pll and self.compat.low(kind, c)) for c in own]
            attached_rows = [(c, parent, ratio, self.classes[c].count) for c, parent, ratio in attached]
            self._layouts[key] = block_layout(kind.outputs, own_rows, attached_rows, self.library.buffers, self.library.divider)
        return self._layouts[key]

    def block_cost(self, block: Block) -> Cost | None:
        """The part, its dividers and buffers; None if the block cannot be laid out (cached)."""
        key = (block.kind.name, block.own, block.attached)
        if key not in self._costs:
            layout = self.layout(block.kind, block.own, block.attached)
            self._costs[key] = None if layout is None else part_cost(block.kind) + layout.cost
        return self._costs[key]

    def direct_loads(self, direct: DirectClass) -> int:
        """Loads a direct class puts on the main reference."""
        return self.classes[direct.cls].count if direct.ratio == 1 else 1

    def direct_cost(self, direct: DirectClass) -> Cost | None:
        """A direct class's divider and buffers (none at ratio 1)."""
        if direct.ratio == 1:
            return ZERO
        fan = fan_for(self.classes[direct.cls].count, self.library.buffers)
        if fan is None or self.library.divider is None:
            return None
        return part_cost(self.library.divider) + fan.cost

    def reference_fan(self, loads: int, outputs: int = 1) -> Fan | None:
        """The buffers the main reference needs for ``loads`` loads."""
        if loads <= outputs:
            return Fan(loads)
        return fan_for(loads - outputs + 1, self.library.buffers)

    def tree_cost(self, tree: Tree) -> Cost | None:
        """Every part of the tree; None if some block cannot be laid out."""
        total = ZERO
        for block in tree.blocks:
            cost = self.block_cost(block)
            if cost is None:
                return None
            total = total + cost
        for direct in tree.direct:
            cost = self.direct_cost(direct)
            if cost is None:
                return None
            total = total + cost
        if tree.uses_reference:
            assert tree.reference is not None
            loads = sum(1 for b in tree.blocks if b.is_pll) + sum(self.direct_loads(d) for d in tree.direct)
            fan = self.reference_fan(loads, tree.reference.outputs)
            if fan is None:
                return None
            total = total + tree.reference.cost + fan.cost
        return total

    # ----------------------------------------------------------------- accuracy precheck

    def fits(self, oscillator: "MainReference | OscillatorTemplate", cls: int) -> bool:
        """Whether an exact class's consumers keep their ppm budgets on this oscillator.

        An exact class gets exactly zero synthesis error, so its frequency error is
        the oscillator's alone: the same worst case the accuracy stage computes,
        whatever else shares the tree. A class allowed a synthesis error, or an
        oscillator without accuracy figures, is not prejudged (True); one whose
        stability band is not rated over the board's temperature range fails a
        class with a budget (the audit would not judge it).
        """
        spec = _accuracy_spec(oscillator)
        klass = self.classes[cls]
        if spec is None or not klass.exact:
            return True
        key = (id(spec), cls)
        if key not in self._fits:
            self._fits[key] = self._zero_error_fits(spec, klass)
        return self._fits[key]

    def rated_over_board(self, oscillator: "MainReference | OscillatorTemplate") -> bool:
        """False when the oscillator's stability band is not rated over the board's temperature range."""
        from clockplan.ppm.board import band_rated_over

        spec = _accuracy_spec(oscillator)
        return spec is None or band_rated_over(spec, self.spec.temperature_c)

    def _zero_error_fits(self, spec: Any, klass: ConsumerClass) -> bool:
        from clockplan.ppm.accuracy import consumer_accuracy
        from clockplan.ppm.board import band_rated_over, consumer_budget

        consumers = {c.id: c for c in self.spec.consumers}
        for consumer_id in klass.consumers:
            budget = consumer_budget(consumers[consumer_id].budget)
            if budget is None:
                continue
            if not band_rated_over(spec, self.spec.temperature_c):
                return False  # its band says nothing over the board's range: the audit would not judge it
            result = consumer_accuracy(spec, Fraction(0), None, self.spec.temperature_c, self.spec.lifetime_s, budget)
            if not result.passes:
                return False
        return True

    # ----------------------------------------------------------------- ratios

    def attach_ratio(self, parent: int, child: int) -> int | None:
        """``f_parent / f_child`` when it is a whole number a plain divider can make (exact)."""
        divider = self.library.divider
        ratio = self.classes[parent].frequency / self.classes[child].frequency
        if divider is None or ratio.denominator != 1 or ratio.numerator < 2 or ratio.numerator not in divider.ratio:
            return None
        return ratio.numerator

    def direct_ratio(self, reference_hz: Fraction, cls: int) -> int | None:
        """The divider ratio serving class ``cls`` from the reference (1: the reference itself), or None.

        Exact when the ratio is whole; otherwise the nearest ratio inside the class's allowed error.
        """
        klass = self.classes[cls]
        ratio = reference_hz / klass.frequency
        candidates = [ratio.numerator] if ratio.denominator == 1 else []
        if not candidates and klass.tolerance > 0:
            near = [floor_fraction(ratio), ceil_fraction(ratio)]
            inside = [k for k in near if k >= 1 and abs(reference_hz / k / klass.frequency - 1) <= klass.tolerance]
            candidates = sorted(inside, key=lambda k: abs(reference_hz / k / klass.frequency - 1))[:1]
        for k in candidates:
            if k == 1 or (self.library.divider is not None and k in self.library.divider.ratio):
                return k
        return None

    def reference_candidates(self) -> list[MainReference]:
        """Main references to try: the fixed one, or each stock frequency of each oscillator template
        that some PLL template accepts (restricted by ``[synthesis] reference_frequencies``)."""
        spec = self.spec
        if spec.fixed_reference is not None:
            return [MainReference(spec.fixed_reference.frequency, fixed=spec.fixed_reference, raw=spec.raw_reference)]
        wanted = spec.settings.reference_frequencies
        found = []
        for osc in self.library.oscillators:
            for hz in osc.frequencies:
                if wanted is not None and hz not in wanted:
                    continue
                if any(t.accepts_input(hz) for t in self.library.plls) or any(self.direct_ratio(hz, c.index) for c in self.classes):
                    found.append(MainReference(hz, osc))
        return found
