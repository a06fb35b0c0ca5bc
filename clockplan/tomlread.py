"""Located reading of TOML documents: every error names the file, key path and line.

The board reader (:mod:`clockplan.boardfile`) and the synthesis readers
(consumer lists, part libraries) share this machinery: reading a file as
UTF-8, parsing TOML, refusing unknown sections, a :class:`TableReader` that
refuses unknown keys with a suggestion, and the small value parsers
(whole numbers, ``[min, max]`` pairs, frequency ranges, divider choices).
"""

from __future__ import annotations

import datetime
import os
import re
import stat
import tomllib
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, TypeVar

from clockplan.errors import BoardError, ClockplanError, did_you_mean, printable
from clockplan.fileio import check_path
from clockplan.limits import check_limits
from clockplan.parts import FrequencyRange, IntChoices
from clockplan.units import parse_frequency, parse_ratio

__all__ = [
    "ID_PATTERN",
    "MAX_FILE_BYTES",
    "MAX_NESTING",
    "LineIndex",
    "Locator",
    "TableReader",
    "read_text_file",
    "read_file_bytes",
    "decode_text",
    "read_document",
    "located",
    "type_name",
    "nonempty_text",
    "part_id",
    "whole_number",
    "min_max_pair",
    "frequency_range",
    "int_choices",
]

T = TypeVar("T")

#: Part ids: a letter, then letters, digits, ``_`` or ``-`` (no dots: ``pll.out`` names an output).
ID_PATTERN = re.compile(r"^[A-Za-z][A-Za-z0-9_\-]*$")
_MAX_RANGE_SPAN = 10**12  # a divider range wider than this is surely a typo
#: The largest input file read (bytes); a board of thousands of parts is a few hundred kB.
MAX_FILE_BYTES = 16 * 1024 * 1024
#: How deep tables and arrays may nest; a board file needs four or five levels.
MAX_NESTING = 32


# --------------------------------------------------------------------------- locations


class LineIndex:
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
class Locator:
    file: str | None
    index: LineIndex
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

    def __init__(self, table: Any, key: str, ctx: Locator) -> None:
        if not isinstance(table, dict):
            raise ctx.error(key, f"expected a table, got {type_name(table)}", hint=f"write '{key}' as a TOML table")
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
        """A reader for the sub-table ``name``; a missing one is a located error."""
        self.used.add(name)
        if name not in self.table:
            raise self.error(None, f"missing key '{name}'", f"add {name} = {{ ... }} to {self.key}")
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


def type_name(value: Any) -> str:
    names = {dict: "a table", list: "an array", str: "a string", bool: "a boolean", int: "an integer", float: "a float"}
    return names.get(type(value), type(value).__name__)


# --------------------------------------------------------------------------- value parsers


def nonempty_text(value: Any) -> str:
    if isinstance(value, str) and not value.strip():
        raise BoardError("expected text, got an empty string", hint='write it in quotes, e.g. "ref"')
    if not isinstance(value, str):
        raise BoardError(f"expected text, got {type_name(value)}", hint='write it in quotes, e.g. "ref"')
    # Control characters (an escape sequence, a newline in a name) are kept as visible escapes:
    # the text reaches terminals and Markdown as it is.
    return printable(value.strip())


def part_id(value: Any) -> str:
    text = nonempty_text(value)
    if not ID_PATTERN.match(text):
        raise BoardError(
            f"invalid id {text!r}",
            hint="ids start with a letter and use letters, digits, '_' or '-' (no dots or spaces)",
        )
    return text


def whole_number(value: Any, lo: int = 1) -> int:
    number = parse_ratio(value)
    if number.denominator != 1:
        raise BoardError(f"{value!r} is not a whole number", hint="dividers and counts are whole numbers")
    if number < lo:
        raise BoardError(f"{value!r} is below the minimum of {lo}", hint=f"use a whole number of at least {lo}")
    return int(number)


def min_max_pair(value: Any, what: str) -> tuple[Any, Any]:
    if not isinstance(value, list) or len(value) != 2:
        raise BoardError(f"expected a [min, max] pair, got {value!r}", hint=f"write e.g. {what}")
    return value[0], value[1]


def frequency_range(value: Any) -> FrequencyRange:
    lo_text, hi_text = min_max_pair(value, '["2.4 GHz", "3.2 GHz"]')
    lo, hi = parse_frequency(lo_text), parse_frequency(hi_text)
    if lo > hi:
        raise BoardError(f"range {value!r} runs backwards", hint="write [min, max] with min <= max")
    return FrequencyRange(lo, hi)


def int_choices(value: Any) -> IntChoices:
    """``[lo, hi]``, or a table ``{min, max, step}`` or ``{values = [...]}``."""
    if isinstance(value, dict):
        unknown = set(value) - {"min", "max", "step", "values"}
        if unknown:
            raise BoardError(f"unknown key {sorted(unknown)[0]!r} in a divider range", hint="use min, max, step or values")
        if "values" in value:
            values = value["values"]
            if not isinstance(values, list) or not values:
                raise BoardError("'values' must be a non-empty array of whole numbers", hint="write values = [1, 2, 4, 8]")
            return IntChoices.of(tuple(whole_number(v) for v in values))
        if "min" not in value or "max" not in value:
            raise BoardError("a divider range needs 'min' and 'max'", hint="write { min = 2, max = 256, step = 2 }")
        lo, hi, step = whole_number(value["min"]), whole_number(value["max"]), whole_number(value.get("step", 1))
    else:
        lo_value, hi_value = min_max_pair(value, "[1, 256]")
        lo, hi, step = whole_number(lo_value), whole_number(hi_value), 1
    if lo > hi:
        raise BoardError(f"range {lo}..{hi} runs backwards", hint="write the smaller value first")
    if hi - lo > _MAX_RANGE_SPAN:
        raise BoardError(f"range {lo}..{hi} is implausibly wide", hint=f"real dividers span at most {_MAX_RANGE_SPAN}")
    return IntChoices(lo, hi, step)

def located(reader: TableReader, parse: Callable[[], T]) -> T:
    """Run a budget module's parser; put the file and line on its error (its key path is its own)."""
    try:
        return parse()
    except ClockplanError as err:
        if err.file:
            raise
        raise reader.ctx.error(err.key or reader.key, err.message, err.hint) from None


# --------------------------------------------------------------------------- files and documents


def read_file_bytes(path: str | Path, what: str, missing_hint: str = "check the path") -> bytes:
    """The bytes of the regular file ``path``; ``what`` names the file in messages.

    A FIFO, a device or a socket is refused rather than read (a FIFO with no
    writer would block forever); so is a path no file system accepts (a NUL
    byte, over the length limits).

    Raises
    ------
    BoardError
        The file is missing, a folder, not a regular file, unreadable or
        larger than :data:`MAX_FILE_BYTES`.
    """
    try:
        check_path(path, f"{what} path")
    except ClockplanError as err:
        raise BoardError(err.message, hint=err.hint) from None
    path = Path(path)
    try:
        # O_NONBLOCK: opening a FIFO with no writer returns at once (then refused) instead of blocking.
        handle = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
        with os.fdopen(handle, "rb") as stream:
            mode = os.fstat(stream.fileno()).st_mode
            if stat.S_ISDIR(mode):
                raise IsADirectoryError
            if not stat.S_ISREG(mode):
                raise BoardError(f"is not a regular file (a FIFO, device or socket); a {what} must be one",
                                 file=str(path), hint="save the board to a file and name that file")
            data = stream.read(MAX_FILE_BYTES + 1)
        if len(data) > MAX_FILE_BYTES:
            raise BoardError(
                f"the {what} is larger than {MAX_FILE_BYTES // (1024 * 1024)} MB",
                file=str(path),
                hint=f"a {what} is a few kB of TOML; check that this is the right file",
            )
        return data
    except FileNotFoundError:
        raise BoardError("file not found", file=str(path), hint=missing_hint) from None
    except IsADirectoryError:
        raise BoardError(f"is a folder, not a {what}", file=str(path), hint="name a .toml file") from None
    except OSError as err:
        raise BoardError(f"cannot read the {what}: {err.strerror}", file=str(path)) from None


def decode_text(data: bytes, path: str | Path, what: str) -> str:
    """UTF-8 text of a file's bytes; a UTF-8 byte-order mark (some editors write one) is skipped."""
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        raise BoardError(f"not UTF-8 text (byte {err.start})", file=str(path), hint=f"save the {what} as UTF-8 TOML") from None


def read_text_file(path: str | Path, what: str, missing_hint: str = "check the path") -> str:
    """The UTF-8 text of ``path``; ``what`` names the file in messages (``"board file"``, ``"library file"``).

    Line endings are kept as in the file (``\\r\\n`` stays).

    Raises
    ------
    BoardError
        See :func:`read_file_bytes`; also a file that is not UTF-8. A UTF-8
        byte-order mark is skipped.
    """
    return decode_text(read_file_bytes(path, what, missing_hint), path, what)


def read_document(
    text: str, file: str | None, sections: Sequence[str], hint_for: Callable[[str], str | None] = lambda name: None
) -> tuple[dict[str, Any], Locator]:
    """The TOML document and a locator for its errors; every top-level section must be one of ``sections``.

    ``hint_for(section)`` may suggest a fix for an unknown section before the
    closest known name is offered.

    Examples
    --------
    >>> doc, _ = read_document('[[buffer]]\\nname = "b"\\n', "lib.toml", ("buffer",))
    >>> doc["buffer"][0]["name"]
    'b'
    """
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        line = getattr(err, "lineno", None) or _line_from_message(str(err))
        raise BoardError(f"not valid TOML: {err}", file=file, line=line, hint="check quoting, brackets and '=' on that line") from None
    except RecursionError:
        raise BoardError(
            "arrays or tables nest too deeply to read",
            file=file,
            hint=f"a board file needs a few levels of nesting; at most {MAX_NESTING} are read",
        ) from None
    except ValueError as err:  # e.g. an integer literal of thousands of digits
        raise BoardError(f"not valid TOML: {err}", file=file, hint="write numbers of a sensible size") from None
    ctx = Locator(file, LineIndex(text))
    _check_nesting(doc, ctx)
    check_limits(doc, ctx.error)
    for section in doc:
        if section not in sections:
            hint = hint_for(section) or did_you_mean(section, sections) or "sections: " + ", ".join(sections)
            raise ctx.error(section, f"unknown section '{section}'", hint)
    return doc, ctx


def _check_nesting(doc: dict[str, Any], ctx: Locator) -> None:
    """Refuse values nested deeper than :data:`MAX_NESTING`, and TOML dates and times (checked without recursion)."""
    stack: list[tuple[Any, str, int]] = [(value, name, 1) for name, value in doc.items()]
    while stack:
        value, key, depth = stack.pop()
        if isinstance(value, (datetime.date, datetime.time)):
            # TOML reads 1979-05-27 or 07:32:00 unquoted as a date or time: no clockplan key takes one.
            raise ctx.error(
                key if len(key) <= 120 else key[:117] + "...",
                f"the value {value.isoformat()} is a TOML date or time, which no key of clockplan takes",
                "quote it if it is text; write quantities with their unit, e.g. '5 min' or '25 MHz'",
            )
        if depth > MAX_NESTING:
            raise ctx.error(
                key if len(key) <= 120 else key[:117] + "...",
                f"tables or arrays nest more than {MAX_NESTING} levels deep",
                "a board file needs a few levels of nesting; check the brackets",
            )
        if isinstance(value, dict):
            stack += [(item, f"{key}.{name}", depth + 1) for name, item in value.items()]
        elif isinstance(value, list):
            stack += [(item, f"{key}[{index}]", depth + 1) for index, item in enumerate(value)]


def _line_from_message(message: str) -> int | None:
    match = re.search(r"line (\d+)", message)
    return int(match.group(1)) if match else None
