"""Consumer classes: the consumers that want one exact frequency, grouped.

Synthesis assigns frequencies, not single consumers: every consumer of a
class is served by the same part (extra outputs or a fanout buffer give each
its own load). A class's tolerance is the tightest allowed synthesis error of
its consumers. Classes are numbered from the highest frequency down, so that a
class that could be divided down from another comes after it.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

from clockplan.parts import Consumer
from clockplan.units import format_frequency

__all__ = ["ConsumerClass", "consumer_classes"]


@dataclass(frozen=True)
class ConsumerClass:
    """One frequency and the consumers that want it.

    ``index`` is the class's place, highest frequency first.
    """

    index: int
    frequency: Fraction
    tolerance: Fraction
    consumers: tuple[str, ...]

    @property
    def count(self) -> int:
        """How many consumers (loads) the class has."""
        return len(self.consumers)

    @property
    def exact(self) -> bool:
        """True if the class must be synthesized exactly."""
        return self.tolerance == 0

    def label(self) -> str:
        """Short text: the frequency and the consumers."""
        return f"{format_frequency(self.frequency)} ({', '.join(self.consumers)})"


def consumer_classes(consumers: Sequence[Consumer]) -> tuple[ConsumerClass, ...]:
    """Group consumers by exact frequency, highest first.

    Examples
    --------
    >>> from clockplan.parts import Consumer
    >>> cs = [Consumer("a", "", Fraction(100)), Consumer("b", "", Fraction(125)), Consumer("c", "", Fraction(100), Fraction(1, 100))]
    >>> [(k.frequency, k.consumers, k.tolerance) for k in consumer_classes(cs)]
    [(Fraction(125, 1), ('b',), Fraction(0, 1)), (Fraction(100, 1), ('a', 'c'), Fraction(0, 1))]
    """
    by_frequency: dict[Fraction, list[Consumer]] = {}
    for consumer in consumers:
        by_frequency.setdefault(consumer.frequency, []).append(consumer)
    ordered = sorted(by_frequency, reverse=True)
    return tuple(
        ConsumerClass(
            index,
            hz,
            min(c.max_synthesis_error for c in by_frequency[hz]),
            tuple(c.id for c in by_frequency[hz]),
        )
        for index, hz in enumerate(ordered)
    )
