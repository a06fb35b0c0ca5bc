"""Writing planned settings back into a board file, keeping the user's text.

Only the ``settings`` of each PLL and divider table change: an existing
one-line ``settings = { ... }`` is replaced, dotted ``settings.x = ...`` lines
and ``[pll.settings]`` sub-tables are replaced by one line, and a table
without settings gets one after its last key. Every other line, comment and
blank line stays as it was. The result is read back and checked before
anything is written, and the file is replaced atomically
(:func:`clockplan.fileio.atomic_write_bytes`). The edit works on the bytes the
board was loaded from (byte-order mark and line endings kept), and nothing is
written if the file changed on disk since then.
"""

from __future__ import annotations

import re
import tomllib
from fractions import Fraction
from pathlib import Path

from clockplan.errors import BoardError, ClockplanError
from clockplan.fileio import refuse_overwrite
from clockplan.parts import Board, PllSetting, Settings

__all__ = ["settings_line", "write_settings", "settings_bytes", "write_board_file"]

_HEADER = re.compile(r"^\s*\[(\[)?\s*([A-Za-z0-9_.\-\"' ]+?)\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(r"^\s*[A-Za-z0-9_\-\"']+(\s*\.\s*[A-Za-z0-9_\-\"']+)*\s*=")
_SETTINGS_INLINE = re.compile(r"^\s*settings\s*=")
_SETTINGS_DOTTED = re.compile(r"^\s*settings\s*\.")


def _ratio_text(value: Fraction) -> str:
    """A TOML value for an exact ratio: an integer, a short exact decimal string, or ``"p/q"``."""
    value = Fraction(value)
    if value.denominator == 1:
        return str(value.numerator)
    for digits in range(1, 16):
        scaled = value * 10**digits
        if scaled.denominator == 1:
            whole, part = divmod(scaled.numerator, 10**digits)
            return f'"{whole}.{str(part).rjust(digits, "0")}"'
    return f'"{value.numerator}/{value.denominator}"'


def settings_line(setting: PllSetting | int, indent: str = "") -> str:
    """The ``settings = { ... }`` line for a PLL setting or a divider ratio.

    Examples
    --------
    >>> settings_line(PllSetting(1, Fraction(100), {"eth": 20, "pcie": 25}))
    'settings = { r = 1, n = 100, outputs = { eth = 20, pcie = 25 } }'
    >>> settings_line(11)
    'settings = { ratio = 11 }'
    """
    if isinstance(setting, PllSetting):
        outputs = ", ".join(f"{name} = {d}" for name, d in setting.dividers.items())
        return f"{indent}settings = {{ r = {setting.r}, n = {_ratio_text(setting.n)}, outputs = {{ {outputs} }} }}"
    return f"{indent}settings = {{ ratio = {setting} }}"


def _blocks(lines: list[str], section: str) -> list[tuple[int, int]]:
    """(start, end) line indexes of each ``[[section]]`` table, sub-tables included."""
    starts = []
    for index, line in enumerate(lines):
        match = _HEADER.match(line)
        if match and match.group(1) and match.group(2) == section:
            starts.append(index)
    blocks = []
    for start in starts:
        end = len(lines)
        for index in range(start + 1, len(lines)):
            match = _HEADER.match(lines[index])
            if match and (match.group(1) or not match.group(2).startswith(section + ".")):
                end = index
                break
        blocks.append((start, end))
    return blocks


def _rewrite_block(lines: list[str], start: int, end: int, section: str, new_line: str) -> list[str]:
    """The lines of one table with its settings replaced by ``new_line``."""
    body = lines[start:end]
    kept: list[str] = []
    insert_at = None
    in_settings_table = False
    first_subtable = None
    for line in body:
        match = _HEADER.match(line) if kept else None
        if match:
            name = match.group(2)
            in_settings_table = name == f"{section}.settings" or name.startswith(f"{section}.settings.")
            if in_settings_table:
                continue
            if first_subtable is None:
                first_subtable = len(kept)
        elif in_settings_table:
            if _KEY.match(line):
                continue
            if not line.strip():
                continue
        elif (_SETTINGS_INLINE.match(line) or _SETTINGS_DOTTED.match(line)) and first_subtable is None:
            if insert_at is None:
                insert_at = len(kept)
                kept.append(new_line)
            continue
        kept.append(line)
    if insert_at is None:
        limit = first_subtable if first_subtable is not None else len(kept)
        # After the table's last line of content (a multi-line array ends there too),
        # before the blank lines and comments that lead into the next table.
        last = max((i for i in range(1, limit) if kept[i].strip() and not kept[i].lstrip().startswith("#")), default=0)
        kept.insert(last + 1, new_line)
    return kept


def write_settings(text: str, board: Board, settings: Settings) -> str:
    """Return ``text`` with the ``settings`` of every PLL and divider in ``settings`` filled in.

    Raises
    ------
    ClockplanError
        If the file's layout cannot be edited safely (the check after editing failed).

    Examples
    --------
    >>> text = '[[divider]]\\nid = "d"\\ninput = "ref"\\nratio = [1, 16]  # keep me\\n'
    >>> print(write_settings(text, board, Settings({}, {"d": 4})), end="")  # doctest: +SKIP
    [[divider]]
    id = "d"
    input = "ref"
    ratio = [1, 16]  # keep me
    settings = { ratio = 4 }
    """
    doc = tomllib.loads(text)
    lines = text.splitlines()
    newline = "\r\n" if "\r\n" in text else "\n"
    edits: list[tuple[int, int, list[str]]] = []
    for section, table in (("pll", settings.plls), ("divider", settings.dividers)):
        entries = doc.get(section, [])
        for (start, end), entry in zip(_blocks(lines, section), entries):
            part_id = entry.get("id")
            if part_id not in table:
                continue
            edits.append((start, end, _rewrite_block(lines, start, end, section, settings_line(table[part_id]))))
    for start, end, replacement in sorted(edits, reverse=True):
        lines[start:end] = replacement
    result = newline.join(lines) + (newline if text.endswith(("\n", "\r\n")) or not text else "")
    _check_round_trip(result, board, settings)
    return result


def _check_round_trip(text: str, board: Board, settings: Settings) -> None:
    from clockplan.boardfile import parse_board

    try:
        written = parse_board(text, board.source_file).given_settings()
    except BoardError as err:
        raise ClockplanError(
            f"writing the settings would break the board file: {err.message}",
            file=board.source_file,
            hint="write the settings as one line 'settings = { ... }' per table and try again",
        ) from None
    for pll_id, setting in settings.plls.items():
        got = written.plls.get(pll_id)
        if got is None or (got.r, got.n, dict(got.dividers)) != (setting.r, setting.n, dict(setting.dividers)):
            raise ClockplanError(
                f"the settings of {pll_id} could not be written back faithfully",
                file=board.source_file,
                hint="write the PLL's settings as one line 'settings = { ... }' and try again",
            )
    for divider_id, ratio in settings.dividers.items():
        if written.dividers.get(divider_id) != ratio:
            raise ClockplanError(f"the ratio of {divider_id} could not be written back faithfully", file=board.source_file)


_BOM = b"\xef\xbb\xbf"


def settings_bytes(data: bytes, board: Board, settings: Settings) -> bytes:
    """The board file's bytes ``data`` with the settings filled in; BOM and line endings kept.

    Examples
    --------
    >>> settings_bytes(b"\\xef\\xbb\\xbf[board]\\r\\n...", board, plan.settings)[:3]  # doctest: +SKIP
    b'\\xef\\xbb\\xbf'
    """
    bom = _BOM if data.startswith(_BOM) else b""
    text = data[len(bom):].decode("utf-8")
    return bom + write_settings(text, board, settings).encode("utf-8")


def _unchanged_on_disk(source: str | Path, loaded: bytes) -> None:
    """Refuse when the board file on disk is no longer the one that was read and planned."""
    from clockplan.tomlread import read_file_bytes

    try:
        now = read_file_bytes(source, "board file")
    except BoardError as err:
        raise ClockplanError(f"the board file changed during the run ({err.message}); nothing was written",
                             file=str(source), hint="run the plan again on the file as it is now") from None
    if now != loaded:
        raise ClockplanError("the board file changed on disk since it was read; nothing was written "
                             "(the plan is for the file as it was)",
                             file=str(source), hint="run the plan again on the file as it is now")


def write_board_file(source: str | Path, target: str | Path, board: Board, settings: Settings, in_place: bool = False) -> Path:
    """Write the board file with ``settings`` filled in to ``target``, atomically.

    The settings go into the bytes the board was parsed from
    (``board.source_bytes``), never a second read of ``source``: its byte-order
    mark and line endings are kept, and if ``source`` changed on disk since it
    was read (edited, replaced, deleted) nothing is written. Refuses to write
    over ``source`` unless ``in_place`` is true.

    Raises
    ------
    ClockplanError
        Writing over the input without ``in_place``, the board file changed
        since it was read, or a file that cannot be written.

    Examples
    --------
    >>> write_board_file("boards/edge-router.toml", "planned.toml", board, plan.settings)  # doctest: +SKIP
    PosixPath('planned.toml')
    """
    from clockplan.fileio import atomic_write_bytes

    refuse_overwrite(target, protected=[source], allow=in_place)
    loaded = board.source_bytes
    if loaded is None:  # a board built in code: the file is all there is
        from clockplan.tomlread import read_file_bytes

        loaded = read_file_bytes(source, "board file")
    data = settings_bytes(loaded, board, settings)
    _unchanged_on_disk(source, loaded)
    atomic_write_bytes(target, data)
    return Path(target)
