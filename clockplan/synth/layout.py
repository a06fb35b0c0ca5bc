"""How a block of classes uses its part's outputs: extra outputs, fanout buffers, plain dividers.

A rule of the layout (common practice for point-to-point clock standards): one
clock output drives one load -- a consumer, a buffer, a divider or a PLL's
input. So within a block (one PLL, or one dedicated oscillator):

* each *own* class gets an output of its own; a class below the reach of the
  output dividers gets a plain divider after it (open ratio, planned later);
* an *attached* class is divided down exactly from another class of the block
  (``f_parent / f = k``, a whole number in the divider's range): a plain
  divider hangs on the parent's clock as one more load;
* outputs left over go to the classes with the most loads (a dynamic program
  over the spare outputs, fewest buffers first), each taking one load;
* a clock with more than one load left gets fanout buffers: the buffer
  template with the fewest parts, then least power, then least cost; past one
  buffer's outputs, buffers are chained (each feeds the next from one output).

The layout cost is monotone: adding a class to a block never lowers it
(fewer spare outputs, more loads), which makes it a valid lower bound in
the grouping search.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

from clockplan.synth.library import BufferTemplate, DividerTemplate
from clockplan.synth.objective import ZERO, Cost

__all__ = ["Fan", "fan_for", "OwnPlan", "AttachPlan", "Layout", "block_layout", "part_cost"]


def part_cost(template: object) -> Cost:
    """One part of a template: 1 part, its power and cost."""
    return Cost(1, template.power_w, template.cost)  # type: ignore[attr-defined]


@dataclass(frozen=True)
class Fan:
    """The buffers that give one clock ``loads`` loads: ``count`` buffers of ``buffer`` in a chain."""

    loads: int
    buffer: BufferTemplate | None = None
    count: int = 0

    @property
    def cost(self) -> Cost:
        """The buffers' parts, power and cost."""
        return part_cost(self.buffer).times(self.count) if self.buffer is not None else ZERO


def _buffers_needed(loads: int, outputs: int) -> int:
    # A chain: every buffer but the last gives one output to the next one.
    return 0 if loads <= 1 else -(-(loads - 1) // (outputs - 1))


def fan_for(loads: int, buffers: Sequence[BufferTemplate]) -> Fan | None:
    """The cheapest way to give one clock ``loads`` loads, or None if it needs a buffer and none is allowed.

    Examples
    --------
    >>> from clockplan.synth.library import default_library
    >>> fan = fan_for(3, default_library().buffers)
    >>> fan.buffer.name, fan.count
    ('fanout-4', 1)
    >>> fan_for(1, []).count
    0
    """
    if loads <= 1:
        return Fan(loads)
    options = [Fan(loads, b, _buffers_needed(loads, b.outputs)) for b in buffers]
    if not options:
        return None
    return min(options, key=lambda f: (f.cost.key(), f.buffer.name))  # type: ignore[union-attr]


@dataclass(frozen=True)
class OwnPlan:
    """An own class: ``outputs`` outputs of the part, a plain divider after them if ``low``.

    The first output carries ``fan`` (the loads left after each extra output
    took one consumer or divider).
    """

    cls: int
    outputs: int
    low: bool
    fan: Fan


@dataclass(frozen=True)
class AttachPlan:
    """An attached class: a divider of ``ratio`` on the clock of class ``parent``, then ``fan`` to its consumers."""

    cls: int
    parent: int
    ratio: int
    fan: Fan


@dataclass(frozen=True)
class Layout:
    """A block's use of outputs, buffers and dividers, and what they cost (the PLL or oscillator itself excluded)."""

    own: tuple[OwnPlan, ...]
    attached: tuple[AttachPlan, ...]
    cost: Cost


def _spare_allocation(loads: list[int], eligible: list[bool], spare: int, buffers: Sequence[BufferTemplate]) -> list[int] | None:
    """Extra outputs per class minimizing the buffers' cost (dynamic program over the spare outputs)."""
    # A class takes at most load - 1 extra outputs (one load per output), so spare outputs past that
    # sum serve nobody: best[s] is "at most s", and capping s there changes no answer. Without the
    # cap a part of a million outputs made this table a million entries per class.
    spare = max(0, min(spare, sum(load - 1 for load, ok in zip(loads, eligible) if ok)))
    # best[s] = (cost key, allocation) using at most s spare outputs over the classes seen so far
    best: dict[int, tuple[tuple, list[int]]] = {s: ((0, Fraction(0), Fraction(0)), []) for s in range(spare + 1)}
    for load, ok in zip(loads, eligible):
        grown: dict[int, tuple[tuple, list[int]]] = {}
        for s in range(spare + 1):
            choice = None
            for extra in range(0, (min(s, load - 1) if ok else 0) + 1):
                fan = fan_for(load - extra, buffers)
                if fan is None:
                    continue
                prior_key, prior = best[s - extra]
                key = tuple(a + b for a, b in zip(prior_key, fan.cost.key()))
                if choice is None or key < choice[0]:
                    choice = (key, prior + [extra])
            if choice is None:
                return None
            grown[s] = choice
        best = grown
    return best[spare][1]


def block_layout(
    outputs: int,
    own: Sequence[tuple[int, int, bool]],
    attached: Sequence[tuple[int, int, int, int]],
    buffers: Sequence[BufferTemplate],
    divider: DividerTemplate | None,
) -> Layout | None:
    """Lay out a block on a part with ``outputs`` outputs.

    Parameters
    ----------
    outputs
        The part's output count.
    own
        ``(class, consumers, low)`` for each own class.
    attached
        ``(class, parent class, ratio, consumers)`` for each attached class.
    buffers, divider
        The allowed buffer templates and the divider template.

    Returns
    -------
    Layout or None
        None when the block cannot be laid out: more own classes than
        outputs, or a buffer or divider needed and not allowed.

    Examples
    --------
    Two PCIe loads and one Ethernet load on a 4-output PLL: each gets an
    output, no buffer.

    >>> from clockplan.synth.library import default_library
    >>> lib = default_library()
    >>> block_layout(4, [(0, 1, False), (1, 2, False)], [], lib.buffers, lib.divider).cost.parts
    0
    >>> block_layout(2, [(0, 1, False), (1, 3, False)], [], lib.buffers, lib.divider).own[1].fan.count
    1
    """
    if len(own) > outputs:
        return None
    needs_divider = any(low for _, _, low in own) or bool(attached)
    if needs_divider and divider is None:
        return None
    hangs = {cls: 0 for cls, _, _ in own}
    for _, parent, _, _ in attached:
        hangs[parent] += 1
    loads = [count + hangs[cls] for cls, count, _ in own]
    extras = _spare_allocation(loads, [not low for _, _, low in own], outputs - len(own), buffers)
    if extras is None:
        return None
    cost = ZERO
    own_plans = []
    for (cls, _, low), load, extra in zip(own, loads, extras):
        fan = fan_for(load - extra, buffers)
        assert fan is not None
        own_plans.append(OwnPlan(cls, 1 + extra, low, fan))
        cost = cost + fan.cost + (part_cost(divider) if low else ZERO)
    attach_plans = []
    for cls, parent, ratio, count in attached:
        fan = fan_for(count, buffers)
        if fan is None:
            return None
        attach_plans.append(AttachPlan(cls, parent, ratio, fan))
        cost = cost + fan.cost + part_cost(divider)
    return Layout(tuple(own_plans), tuple(attach_plans), cost)
