"""Reading board files (TOML) into the domain model, with located errors.

Every problem names the file, the key path (``pll[1].outputs.out0.divider``)
and the line where it can be found, and says how to fix it. Unknown keys are
errors (a typo must not silently drop a constraint), with a suggestion.
The file format is documented in ``docs/board-format.md``.
"""

from __future__ import annotations

import dataclasses
import re
import tomllib
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any, TypeVar

from clockplan.errors import BoardError, ClockplanError, did_you_mean
from clockplan.parts import (
    REFERENCE_KINDS,
    Board,
    Buffer,
    Consumer,
    Denominator,
    Divider,
    FrequencyRange,
    IntChoices,
    Pll,
    PllOutput,
    Reference,
)
from clockplan.units import parse_duration, parse_frequency, parse_ppm, parse_ratio, parse_temperature

__all__ = ["load_board", "parse_board", "TableReader", "ID_PATTERN"]

T = TypeVar("T")

#: Part ids: a letter, then letters, digits, ``_`` or ``-`` (no dots: ``pll.out`` names an output).
ID_PATTERN = re.compile(r"^[A-Za-z][A-Za-z0-9_\-]*$")
_MAX_RANGE_SPAN = 10**12  # a divider range wider than this is surely a typo
_SECTIONS = ("board", "reference", "pll", "divider", "buffer", "consumer")


# --------------------------------------------------------------------------- locations


class _LineIndex:
    """Finds the line of a key path in the TOML text (best effort, for messages)."""

    _HEADER = re.compile(r"^\s*\[\[?\s*([A-Za-z0-9_.\-\"' ]+?)\s*\]\]?\s*(#.*)?$")

    def __init__(self, text: str) -> None:
        self.lines = text.splitlines()
        self.blocks: dict[str, list[int]] = {}
        for number, line in enumerate(self.lines, start=1):
            match = self._HEADER.match(line)
            if match and line.lstrip().startswith("[["):
                self.blocks.setdefault(match.group(1).strip(), []).append(number)

    def find(self, section: str, index: int | None, subkey: str | None) -> int | None:
        if index is None:
            start = next((n for n, l in enumerate(self.lines, 1) if re.match(rf"^\s*\[\s*{section}\s*\]", l)), None)
        else:
            starts = self.blocks.get(section, [])
            start = starts[index] if index < len(starts) else None
        if start is None or not subkey:
            return start
        pattern = re.compile(rf"^\s*(\[\s*{section}\.)?{re.escape(subkey)}\b")
        for number in range(start + 1, len(self.lines) + 1):
            line = self.lines[number - 1]
            if line.lstrip().startswith("[[") or (line.lstrip().startswith("[") and not line.lstrip().startswith(f"[{section}.")):
                break
            if pattern.match(line):
                return number
        return start


@dataclass
class _Context:
    file: str | None
    index: _LineIndex
    lines: dict[str, int] = field(default_factory=dict)

    def line_of(self, key: str) -> int | None:
        match = re.match(r"^([a-z_]+)(?:\[(\d+)\])?(?:\.([A-Za-z0-9_\-]+))?", key)
        if not match:
            return None
        section, index, subkey = match.group(1), match.group(2), match.group(3)
        return self.index.find(section, int(index) if index is not None else None, subkey)

    def error(self, key: str, message: str, hint: str | None = None) -> BoardError:
        return BoardError(message, file=self.file, key=key, line=self.line_of(key), hint=hint)


# --------------------------------------------------------------------------- table reader


class TableReader:
    """Reads one TOML table, tracking which keys were used and where they are.

    Budget modules use it to parse their own sub-tables with located errors.

    Examples
    --------
    ``reader.get("frequency", parse_frequency)`` returns the parsed value or raises a
    :class:`BoardError` naming ``consumer[2].frequency`` and its line.
    """

    def __init__(self, table: Any, key: str, ctx: _Context) -> None:
        if not isinstance(table, dict):
            raise ctx.error(key, f"expected a table, got {_type_name(table)}", hint=f"write '{key}' as a TOML table")
        self.table = table
        self.key = key
        self.ctx = ctx
        self.used: set[str] = set()

    def path(self, name: str) -> str:
        """The key path of ``name`` inside this table."""
        return f"{self.key}.{name}"

    def error(self, name: str | None, message: str, hint: str | None = None) -> BoardError:
        """A located error for key ``name`` of this table (or the table itself)."""
        return self.ctx.error(self.path(name) if name else self.key, message, hint)

    def has(self, name: str) -> bool:
        """True if the table has key ``name``."""
        return name in self.table

    def get(self, name: str, parse: Callable[[Any], T], default: Any = ..., hint: str | None = None) -> T:
        """Parse key ``name`` with ``parse``; a missing key returns ``default`` or is an error."""
        self.used.add(name)
        if name not in self.table:
            if default is ...:
                raise self.error(None, f"missing key '{name}'", hint or f"add {name} = ... to {self.key}")
            return default
        try:
            return parse(self.table[name])
        except ClockplanError as err:
            if err.file or err.key:
                raise
            raise self.ctx.error(self.path(name), err.message, err.hint or hint) from None
        except (TypeError, ValueError, ArithmeticError) as err:
            raise self.error(name, f"invalid value {self.table[name]!r}: {err}", hint) from None

    def sub(self, name: str) -> "TableReader":
        """A reader for the sub-table ``name``."""
        self.used.add(name)
        return TableReader(self.table[name], self.path(name), self.ctx)

    def raw(self, name: str, default: Any = None) -> Any:
        """The unparsed value of ``name`` (marking it used)."""
        self.used.add(name)
        return self.table.get(name, default)

    def finish(self) -> None:
        """Refuse keys that no parser asked for."""
        for name in self.table:
            if name not in self.used:
                suggestion = did_you_mean(name, self.used)
                raise self.error(
                    name,
                    f"unknown key '{name}'",
                    suggestion or "see docs/board-format.md for the keys this table accepts",
                )


def _type_name(value: Any) -> str:
    names = {dict: "a table", list: "an array", str: "a string", bool: "a boolean", int: "an integer", float: "a float"}
    return names.get(type(value), type(value).__name__)


# --------------------------------------------------------------------------- value parsers


def _text(value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise BoardError(f"expected a non-empty string, got {_type_name(value)}")
    return value.strip()


def _part_id(value: Any) -> str:
    text = _text(value)
    if not ID_PATTERN.match(text):
        raise BoardError(
            f"invalid id {text!r}",
            hint="ids start with a letter and use letters, digits, '_' or '-' (no dots or spaces)",
        )
    return text


def _whole(value: Any, lo: int = 1) -> int:
    number = parse_ratio(value)
    if number.denominator != 1:
        raise BoardError(f"{value!r} is not a whole number", hint="dividers and counts are whole numbers")
    if number < lo:
        raise BoardError(f"{value!r} is below the minimum of {lo}", hint=f"use a whole number of at least {lo}")
    return int(number)


def _pair(value: Any, what: str) -> tuple[Any, Any]:
    if not isinstance(value, list) or len(value) != 2:
        raise BoardError(f"expected a [min, max] pair, got {value!r}", hint=f"write e.g. {what}")
    return value[0], value[1]


def _frequency_range(value: Any) -> FrequencyRange:
    lo_text, hi_text = _pair(value, '["2.4 GHz", "3.2 GHz"]')
    lo, hi = parse_frequency(lo_text), parse_frequency(hi_text)
    if lo > hi:
        raise BoardError(f"range {value!r} runs backwards", hint="write [min, max] with min <= max")
    return FrequencyRange(lo, hi)


def _int_choices(value: Any) -> IntChoices:
    """``[lo, hi]``, or a table ``{min, max, step}`` or ``{values = [...]}``."""
    if isinstance(value, dict):
        unknown = set(value) - {"min", "max", "step", "values"}
        if unknown:
            raise BoardError(f"unknown key {sorted(unknown)[0]!r} in a divider range", hint="use min, max, step or values")
        if "values" in value:
            values = value["values"]
            if not isinstance(values, list) or not values:
                raise BoardError("'values' must be a non-empty array of whole numbers", hint="write values = [1, 2, 4, 8]")
            return IntChoices.of(tuple(_whole(v) for v in values))
        if "min" not in value or "max" not in value:
            raise BoardError("a divider range needs 'min' and 'max'", hint="write { min = 2, max = 256, step = 2 }")
        lo, hi, step = _whole(value["min"]), _whole(value["max"]), _whole(value.get("step", 1))
    else:
        lo_value, hi_value = _pair(value, "[1, 256]")
        lo, hi, step = _whole(lo_value), _whole(hi_value), 1
    if lo > hi:
        raise BoardError(f"range {lo}..{hi} runs backwards", hint="write the smaller value first")
    if hi - lo > _MAX_RANGE_SPAN:
        raise BoardError(f"range {lo}..{hi} is implausibly wide", hint=f"real dividers span at most {_MAX_RANGE_SPAN}")
    return IntChoices(lo, hi, step)


def _temperature_range(value: Any) -> tuple[float, float]:
    lo_text, hi_text = _pair(value, '["-40 C", "85 C"]')
    lo, hi = parse_temperature(lo_text), parse_temperature(hi_text)
    if lo > hi:
        raise BoardError(f"temperature range {value!r} runs backwards", hint="write [coldest, hottest]")
    return lo, hi


def _symmetric_error(value: Any) -> Fraction:
    lo, hi = parse_ppm(value)
    return max(-lo, hi)


def _mode(value: Any) -> str:
    text = _text(value).lower()
    if text not in ("integer", "fractional"):
        raise BoardError(f"unknown PLL mode {value!r}", hint="use 'integer' or 'fractional'")
    return text


def _kind(value: Any) -> str:
    text = _text(value).lower()
    if text not in REFERENCE_KINDS:
        hint = did_you_mean(text, REFERENCE_KINDS) or "kinds: " + ", ".join(REFERENCE_KINDS)
        raise BoardError(f"unknown oscillator kind {value!r}", hint=hint)
    return text


# --------------------------------------------------------------------------- sections


def _read_board_section(doc: dict, ctx: _Context) -> tuple[str, tuple[float, float], float]:
    if "board" not in doc:
        return "unnamed board", (25.0, 25.0), 0.0
    reader = TableReader(doc["board"], "board", ctx)
    name = reader.get("name", _text, "unnamed board")
    temperature = reader.get("temperature", _temperature_range, (25.0, 25.0))
    lifetime = reader.get("lifetime", parse_duration, 0.0)
    reader.raw("description")
    reader.finish()
    return name, temperature, lifetime


def _located(reader: TableReader, parse: Callable[[], T]) -> T:
    """Run a budget module's parser; put the file and line on its error (its key path is its own)."""
    try:
        return parse()
    except ClockplanError as err:
        if err.file:
            raise
        raise reader.ctx.error(err.key or reader.key, err.message, err.hint) from None


def _read_reference(reader: TableReader) -> Reference:
    from clockplan.ppm.parse import REFERENCE_KEYS, parse_oscillator_spec

    reference = Reference(
        id=reader.get("id", _part_id),
        frequency=reader.get("frequency", parse_frequency),
        kind=reader.get("kind", _kind, "xo"),
    )
    reader.raw("description")
    accuracy_keys = [name for name in REFERENCE_KEYS if name != "kind" and reader.has(name)]
    for name in REFERENCE_KEYS:
        reader.raw(name)
    if not accuracy_keys:
        return reference  # no accuracy data: the ppm stage says so (docs/frequency-accuracy.md)
    spec = _located(reader, lambda: parse_oscillator_spec(reader.table, reader.key, reference.frequency))
    return dataclasses.replace(reference, oscillator=spec)


def _read_outputs(reader: TableReader) -> tuple[PllOutput, ...]:
    outputs = reader.sub("outputs")
    if not outputs.table:
        raise outputs.error(None, "a PLL needs at least one output", 'write outputs = { out0 = { divider = [1, 256] } }')
    result = []
    for name in outputs.table:
        if not ID_PATTERN.match(name):
            raise outputs.error(name, f"invalid output name {name!r}", "use letters, digits, '_' or '-'")
        out = outputs.sub(name)
        spread = None
        if out.has("spread"):
            from clockplan.ppm.parse import parse_spread

            out.raw("spread")
            spread = _located(out, lambda: parse_spread(out.table["spread"], out.path("spread")))
        result.append(PllOutput(name=name, divider=out.get("divider", _int_choices), spread=spread))
        out.raw("description")
        out.finish()
    return tuple(result)


def _read_denominator(reader: TableReader, mode: str) -> Denominator | None:
    fixed = reader.get("denominator", lambda v: _whole(v, 2), None)
    limit = reader.get("max_denominator", lambda v: _whole(v, 2), None)
    if fixed is not None and limit is not None:
        raise reader.error("max_denominator", "give either 'denominator' (fixed modulus) or 'max_denominator', not both")
    if mode == "fractional" and fixed is None and limit is None:
        raise reader.error(
            None,
            "a fractional PLL needs its denominator rule",
            "add denominator = \"2^24\" (fixed modulus) or max_denominator = 4194303 (programmable)",
        )
    if mode == "integer" and (fixed or limit):
        raise reader.error("denominator" if fixed else "max_denominator", "an integer-N PLL has no denominator", "remove it, or set mode = \"fractional\"")
    return Denominator(fixed, limit) if (fixed or limit) else None


def _read_pll(reader: TableReader) -> Pll:
    mode = reader.get("mode", _mode, "integer")
    n_lo, n_hi = reader.get("n", lambda v: tuple(parse_ratio(x) for x in _pair(v, "[16, 4095]")))
    if not 0 < n_lo <= n_hi:
        raise reader.error("n", f"N range {n_lo}..{n_hi} must be positive and ascending")
    pll = Pll(
        id=reader.get("id", _part_id),
        input=reader.get("input", _text),
        vco=reader.get("vco", _frequency_range),
        pfd=reader.get("pfd", _frequency_range),
        ref_divider=reader.get("r", _int_choices, IntChoices(1, 1)),
        feedback_min=n_lo,
        feedback_max=n_hi,
        mode=mode,  # type: ignore[arg-type]
        outputs=_read_outputs(reader),
        denominator=_read_denominator(reader, mode),
        input_range=reader.get("input_range", _frequency_range, None),
    )
    reader.raw("description")
    return pll


def _read_pll_pins(reader: TableReader, pll: Pll) -> dict[str, Any]:
    if not reader.has("settings"):
        return {}
    settings = reader.sub("settings")
    pins: dict[str, Any] = {}
    if settings.has("r"):
        pins["r"] = settings.get("r", _whole)
    if settings.has("n"):
        pins["n"] = settings.get("n", _positive_ratio)
    if settings.has("outputs"):
        outputs = settings.sub("outputs")
        names = [o.name for o in pll.outputs]
        for name in outputs.table:
            if name not in names:
                raise outputs.error(name, f"PLL {pll.id!r} has no output {name!r}", did_you_mean(name, names) or f"outputs: {', '.join(names)}")
            outputs.used.add(name)
        pins["dividers"] = {name: outputs.get(name, _whole) for name in outputs.table}
    settings.finish()
    return pins


def _positive_ratio(value: Any) -> Fraction:
    ratio = parse_ratio(value)
    if ratio <= 0:
        raise BoardError(f"ratio {value!r} must be positive")
    return ratio


def _read_divider(reader: TableReader) -> tuple[Divider, dict[str, Any]]:
    divider = Divider(
        id=reader.get("id", _part_id),
        input=reader.get("input", _text),
        ratio=reader.get("ratio", _int_choices),
    )
    pins = {}
    if reader.has("settings"):
        settings = reader.sub("settings")
        pins["ratio"] = settings.get("ratio", _whole)
        settings.finish()
    reader.raw("description")
    return divider, pins


def _read_buffer(reader: TableReader) -> Buffer:
    buffer = Buffer(
        id=reader.get("id", _part_id),
        input=reader.get("input", _text),
        outputs=reader.get("outputs", _whole),
    )
    reader.raw("description")
    return buffer


def _read_consumer(reader: TableReader) -> Consumer:
    from clockplan.standards.resolve import BUDGET_FIELDS, resolve_budget

    consumer = Consumer(
        id=reader.get("id", _part_id),
        source=reader.get("source", _text),
        frequency=reader.get("frequency", parse_frequency),
        max_synthesis_error=reader.get("max_synthesis_error", _symmetric_error, Fraction(0)),
        standard=reader.get("standard", _text, None),
    )
    reader.raw("description")
    for name in BUDGET_FIELDS:
        reader.raw(name)
    budget = _located(reader, lambda: resolve_budget(consumer.standard, reader.table, reader.key))
    return dataclasses.replace(consumer, budget=budget)


def _array_of_tables(doc: dict, name: str, ctx: _Context) -> Iterator[TableReader]:
    value = doc.get(name, [])
    if isinstance(value, dict):
        raise ctx.error(name, f"'{name}' must be an array of tables", hint=f"write each one under [[{name}]], not [{name}]")
    if not isinstance(value, list):
        raise ctx.error(name, f"'{name}' must be an array of tables, got {_type_name(value)}", hint=f"write [[{name}]] sections")
    for index, table in enumerate(value):
        yield TableReader(table, f"{name}[{index}]", ctx)


# --------------------------------------------------------------------------- whole board


def parse_board(text: str, file: str | None = None) -> Board:
    """Parse board-file text into a :class:`~clockplan.parts.Board`.

    Parameters
    ----------
    text
        The TOML text.
    file
        The file name, for error messages.

    Raises
    ------
    BoardError
        Anything wrong with the file, located by key path and line.
    """
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        line = getattr(err, "lineno", None) or _line_from_message(str(err))
        raise BoardError(f"not valid TOML: {err}", file=file, line=line, hint="check quoting, brackets and '=' on that line") from None
    ctx = _Context(file, _LineIndex(text))
    for name in doc:
        if name not in _SECTIONS:
            raise ctx.error(name, f"unknown section '{name}'", did_you_mean(name, _SECTIONS) or "sections: " + ", ".join(_SECTIONS))
    name, temperature, lifetime = _read_board_section(doc, ctx)
    pins: dict[str, dict[str, Any]] = {}
    references = tuple(_finished(r, _read_reference(r)) for r in _array_of_tables(doc, "reference", ctx))
    plls = []
    for reader in _array_of_tables(doc, "pll", ctx):
        pll = _read_pll(reader)
        pins[pll.id] = _read_pll_pins(reader, pll)
        plls.append(_finished(reader, pll))
    dividers = []
    for reader in _array_of_tables(doc, "divider", ctx):
        divider, divider_pins = _read_divider(reader)
        pins[divider.id] = divider_pins
        dividers.append(_finished(reader, divider))
    buffers = tuple(_finished(r, _read_buffer(r)) for r in _array_of_tables(doc, "buffer", ctx))
    consumers = tuple(_finished(r, _read_consumer(r)) for r in _array_of_tables(doc, "consumer", ctx))
    if not references:
        raise BoardError("the board has no reference oscillator", file=file, hint="add a [[reference]] section with id and frequency")
    if not consumers:
        raise BoardError("the board has no consumer", file=file, hint="add a [[consumer]] section with id, source and frequency")
    board = Board(
        name=name,
        temperature_c=temperature,
        lifetime_s=lifetime,
        references=references,
        plls=tuple(plls),
        dividers=tuple(dividers),
        buffers=buffers,
        consumers=consumers,
        pins=pins,
        source_file=file,
        lines=_line_table(ctx, doc),
    )
    _check_unique_ids(board, ctx)
    from clockplan.graph import build_graph

    build_graph(board)  # refuses unknown sources, loops and over-subscribed buffers
    return board


def _finished(reader: TableReader, part: T) -> T:
    part = _with_noise_keys(reader, part)
    reader.finish()
    return part


# --------------------------------------------------------------------------- noise keys
# The jitter model's keys on any part kind (docs/jitter.md, docs/loop-filter.md).
# Their readers need numpy, so they are imported only when a board uses them.

_NOISE_KEYS: dict[type, tuple[str, ...]] = {
    Reference: ("phase_noise",),
    Pll: ("loop", "noise", "loop_filter"),
    Divider: ("additive_noise",),
    Buffer: ("additive_jitter", "additive_jitter_band"),
}


def _read_located(reader: TableReader, name: str, parse: Callable[[Any, str], T]) -> T | None:
    """Parse optional key ``name`` with a reader that takes the key path; locate its errors in the file."""
    return _located(reader, lambda: reader.get(name, lambda value: parse(value, reader.path(name)), None))


def _with_noise_keys(reader: TableReader, part: T) -> T:
    """``part`` with its phase-noise, loop, loop-filter and additive-noise keys read."""
    keys = _NOISE_KEYS.get(type(part), ())
    if not any(reader.has(name) for name in keys):
        return part
    from clockplan.jitter import parse as noise

    if isinstance(part, Reference):
        return dataclasses.replace(part, phase_noise=_read_located(reader, "phase_noise", noise.parse_phase_noise))
    if isinstance(part, Pll):
        return _with_pll_noise(reader, part)
    if isinstance(part, Divider):
        return dataclasses.replace(part, additive_noise=_read_located(reader, "additive_noise", noise.parse_additive_noise))
    band = reader.raw("additive_jitter_band")
    if band is not None and not reader.has("additive_jitter"):
        raise reader.error("additive_jitter_band", "a band without additive_jitter", 'add additive_jitter = "90 fs", or remove the band')

    def additive(value: Any, key: str) -> Any:
        return noise.parse_additive_jitter(value, key, band, reader.path("additive_jitter_band"))

    return dataclasses.replace(part, additive_jitter=_read_located(reader, "additive_jitter", additive))


def _with_pll_noise(reader: TableReader, pll: Pll) -> Pll:
    from clockplan.jitter.parse import parse_loop, parse_pll_noise
    from clockplan.loopfilter.board import parse_loop_filter

    if reader.has("loop") and reader.has("loop_filter"):
        raise reader.error(
            "loop_filter",
            "give either loop or loop_filter, not both",
            "a loop_filter's own transfer function replaces the bandwidth-and-damping loop: remove loop",
        )
    return dataclasses.replace(
        pll,
        loop=_read_located(reader, "loop", parse_loop),
        noise=_read_located(reader, "noise", parse_pll_noise),
        loop_filter=_read_located(reader, "loop_filter", parse_loop_filter),
    )


def _line_from_message(message: str) -> int | None:
    match = re.search(r"line (\d+)", message)
    return int(match.group(1)) if match else None


def _line_table(ctx: _Context, doc: dict) -> dict[str, int]:
    lines: dict[str, int] = {}
    for section in _SECTIONS[1:]:
        entries = doc.get(section, [])
        for index, table in enumerate(entries if isinstance(entries, list) else []):
            base = f"{section}[{index}]"
            line = ctx.line_of(base)
            if line:
                lines[base] = line
            for key in table if isinstance(table, dict) else []:
                key_line = ctx.line_of(f"{base}.{key}")
                if key_line:
                    lines[f"{base}.{key}"] = key_line
    return lines


def _check_unique_ids(board: Board, ctx: _Context) -> None:
    seen: dict[str, str] = {}
    groups = (("reference", board.references), ("pll", board.plls), ("divider", board.dividers), ("buffer", board.buffers), ("consumer", board.consumers))
    for group, parts in groups:
        for index, part in enumerate(parts):
            key = f"{group}[{index}].id"
            if part.id in seen:
                raise ctx.error(key, f"duplicate id {part.id!r} (already used by {seen[part.id]})", "give every part its own id")
            seen[part.id] = key


def load_board(path: str | Path) -> Board:
    """Read and validate a board file.

    Examples
    --------
    >>> board = load_board("boards/industrial-gateway.toml")  # doctest: +SKIP
    >>> board.name  # doctest: +SKIP
    'Industrial gateway'
    """
    path = Path(path)
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise BoardError("file not found", file=str(path), hint="check the path; 'clockplan new FILE' writes a starter board") from None
    except IsADirectoryError:
        raise BoardError("is a folder, not a board file", file=str(path), hint="name a .toml file") from None
    except OSError as err:
        raise BoardError(f"cannot read the file: {err.strerror}", file=str(path)) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as err:
        raise BoardError(f"not UTF-8 text (byte {err.start})", file=str(path), hint="save the board file as UTF-8 TOML") from None
    return parse_board(text, str(path))
