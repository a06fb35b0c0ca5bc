"""Reading a consumer-list board: the input of ``clockplan synthesize``.

A consumer list is a board file with ``[board]`` and ``[[consumer]]`` tables
whose consumers name no ``source`` (synthesis draws the tree), optionally one
fixed ``[[reference]]`` the tree must be built on, and a ``[synthesis]`` table
(which part templates are allowed, a user library, reference frequencies to
try, how many trees to show, a time limit). The format is in
``docs/synthesis.md``. The ordinary loader (:func:`clockplan.boardfile.load_board`)
keeps refusing such a file: it needs sources and a reference.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import Any

from clockplan.boardfile import (
    finish_part,
    read_board_section,
    unstated_conditions,
    read_consumer,
    read_reference,
)
from clockplan.errors import BoardError
from clockplan.parts import Consumer, Reference
from clockplan.tomlread import (
    Locator,
    TableReader,
    nonempty_text,
    read_document,
    read_text_file,
    whole_number,
)
from clockplan.units import parse_frequency, parse_ratio

__all__ = [
    "SynthesisSettings",
    "ConsumerList",
    "parse_consumer_list",
    "load_consumer_list",
    "require_conditions",
    "PENDING_SOURCE",
]

_SECTIONS = ("board", "consumer", "reference", "synthesis")
#: The source a consumer carries until synthesis connects it.
PENDING_SOURCE = "(to be synthesized)"


@dataclass(frozen=True)
class SynthesisSettings:
    """The ``[synthesis]`` table: what the board asks of the search.

    ``library`` is a user library path (relative paths are taken from the board
    file's folder); ``allow`` restricts the templates; ``reference_frequencies``
    restricts the main reference's frequency; ``alternatives`` and
    ``time_limit_s`` are defaults the command line may override.
    """

    library: str | None = None
    allow: tuple[str, ...] | None = None
    reference_frequencies: tuple[Fraction, ...] | None = None
    alternatives: int | None = None
    time_limit_s: float | None = None


@dataclass(frozen=True)
class ConsumerList:
    """A consumer-list board.

    ``consumers`` carry :data:`PENDING_SOURCE` as their source; ``raw_consumers``
    are their tables as written (without ``source``), for the synthesized board
    file. ``fixed_reference`` (and its table) is the reference the user fixed.
    """

    name: str
    temperature_c: tuple[float, float]
    lifetime_s: float
    raw_board: dict[str, Any]
    consumers: tuple[Consumer, ...]
    raw_consumers: tuple[dict[str, Any], ...]
    settings: SynthesisSettings
    fixed_reference: Reference | None = None
    raw_reference: dict[str, Any] | None = None
    source_file: str | None = None
    board_line: int | None = None


def _strings(value: Any) -> tuple[str, ...]:
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        raise BoardError("expected an array of names", hint='write allow = ["xo", "int-synth-4", "fanout-4"]')
    return tuple(value)


def _frequencies(value: Any) -> tuple[Fraction, ...]:
    if not isinstance(value, list) or not value:
        raise BoardError("expected a non-empty array of frequencies", hint='write reference_frequencies = ["25 MHz", "27 MHz"]')
    return tuple(parse_frequency(v) for v in value)


def _seconds(value: Any) -> float:
    seconds = parse_ratio(value)
    if not 0 < seconds <= 3600:
        raise BoardError(f"time limit {value!r} is outside 0..3600 seconds", hint="write time_limit = 20 (seconds)")
    return float(seconds)


def _read_settings(doc: dict[str, Any], ctx: Locator) -> SynthesisSettings:
    if "synthesis" not in doc:
        return SynthesisSettings()
    reader = TableReader(doc["synthesis"], "synthesis", ctx)
    settings = SynthesisSettings(
        library=reader.get("library", nonempty_text, None),
        allow=reader.get("allow", _strings, None),
        reference_frequencies=reader.get("reference_frequencies", _frequencies, None),
        alternatives=reader.get("alternatives", lambda v: whole_number(v, 0), None),
        time_limit_s=reader.get("time_limit", _seconds, None),
    )
    reader.raw("description")
    reader.finish()
    return settings


def _read_consumers(doc: dict[str, Any], ctx: Locator) -> tuple[tuple[Consumer, ...], tuple[dict[str, Any], ...]]:
    entries = doc.get("consumer", [])
    if not isinstance(entries, list):
        raise ctx.error("consumer", "'consumer' must be an array of tables", "write each one under [[consumer]]")
    consumers, raws = [], []
    seen: dict[str, str] = {}
    for index, table in enumerate(entries):
        key = f"consumer[{index}]"
        if isinstance(table, dict) and "source" in table:
            raise ctx.error(
                f"{key}.source",
                "a consumer list leaves the source to synthesis",
                "remove 'source' here; a board whose tree is drawn is for 'clockplan plan' or 'clockplan audit'",
            )
        reader = TableReader({**table, "source": PENDING_SOURCE} if isinstance(table, dict) else table, key, ctx)
        consumer = finish_part(reader, read_consumer(reader))
        if consumer.id in seen:
            raise ctx.error(f"{key}.id", f"duplicate id {consumer.id!r} (already used by {seen[consumer.id]})", "give every consumer its own id")
        seen[consumer.id] = f"{key}.id"
        consumers.append(consumer)
        raws.append(dict(table))
    if not consumers:
        raise BoardError("the board lists no consumer", file=ctx.file, hint="add [[consumer]] tables with id, frequency and standard")
    return tuple(consumers), tuple(raws)


def _read_fixed_reference(doc: dict[str, Any], ctx: Locator) -> tuple[Reference | None, dict[str, Any] | None]:
    entries = doc.get("reference", [])
    if not isinstance(entries, list):
        raise ctx.error("reference", "'reference' must be an array of tables", "write it under [[reference]]")
    if len(entries) > 1:
        raise ctx.error(
            "reference[1]",
            "synthesis builds on one fixed reference at most",
            "keep the reference the tree must use; synthesis adds dedicated oscillators (such as a watch crystal) itself",
        )
    if not entries:
        return None, None
    reader = TableReader(entries[0], "reference[0]", ctx)
    return finish_part(reader, read_reference(reader)), dict(entries[0])


def parse_consumer_list(text: str, file: str | None = None) -> ConsumerList:
    """Parse a consumer-list board.

    Raises
    ------
    BoardError
        Invalid TOML, unknown sections or keys, a consumer with a ``source``,
        more than one fixed reference, or any bad value; located by key path
        and line.

    Examples
    --------
    >>> spec = parse_consumer_list('[[consumer]]\\nid = "phy"\\nfrequency = "125 MHz"\\nstandard = "1000BASE-X"\\n')
    >>> spec.consumers[0].id, spec.consumers[0].budget.key
    ('phy', '1000base-x')
    """
    def hint_for(section: str) -> str | None:
        if section in ("pll", "divider", "buffer"):
            return "synthesis chooses PLLs, dividers and buffers; offer your own parts in a library file ([synthesis] library)"
        return None

    doc, ctx = read_document(text, file, _SECTIONS, hint_for)
    name, temperature, lifetime = read_board_section(doc, ctx)
    consumers, raws = _read_consumers(doc, ctx)
    reference, raw_reference = _read_fixed_reference(doc, ctx)
    if reference is not None and reference.id in {c.id for c in consumers}:
        raise ctx.error("reference[0].id", f"the reference and a consumer are both called {reference.id!r}", "give every part its own id")
    return ConsumerList(
        name=name,
        temperature_c=temperature,
        lifetime_s=lifetime,
        raw_board=dict(doc.get("board", {})),
        consumers=consumers,
        raw_consumers=raws,
        settings=_read_settings(doc, ctx),
        fixed_reference=reference,
        raw_reference=raw_reference,
        source_file=file,
        board_line=ctx.line_of("board"),
    )


def require_conditions(spec: ConsumerList) -> None:
    """Refuse a consumer list with a ppm budget but no ``temperature`` or ``lifetime`` in ``[board]``.

    Synthesis chooses the oscillators, and their figures drift with
    temperature and age; without the conditions the trees would be judged at
    25 °C on parts that never age (``docs/synthesis.md``).

    Raises
    ------
    BoardError
        Located at ``board.temperature`` or ``board.lifetime``, naming a consumer whose budget needs it.
    """
    from clockplan.ppm.conditions import LIFETIME_HINT, TEMPERATURE_HINT

    judged = [c.id for c in spec.consumers if c.budget is not None and c.budget.ppm is not None]
    if not judged:
        return
    hints = {"temperature": TEMPERATURE_HINT, "lifetime": LIFETIME_HINT}
    for key in unstated_conditions(spec.raw_board):
        hint = hints[key] if spec.board_line is not None else hints[key].replace("to [board]", "in a [board] section")
        raise BoardError(
            f"the consumer list states no {key}, but {judged[0]!r} has a frequency-error budget and synthesis "
            f"chooses oscillators whose figures {'drift with temperature' if key == 'temperature' else 'age'}: "
            f"the trees would be judged {'at 25 °C only' if key == 'temperature' else 'on parts that never age'}",
            file=spec.source_file,
            key=f"board.{key}",
            line=spec.board_line,
            hint=hint,
        )


def load_consumer_list(path: str | Path) -> ConsumerList:
    """Read a consumer-list board file (see :func:`parse_consumer_list`)."""
    return parse_consumer_list(read_text_file(path, "board file"), str(path))
