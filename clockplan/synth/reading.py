"""Reading the synthesis input files (consumer lists, part libraries): text, TOML and located errors.

Both files are read the way board files are: a file that cannot be read, is
not UTF-8, or is not valid TOML is one located :class:`~clockplan.errors.BoardError`,
and an unknown section names the ones the file may have.
"""

from __future__ import annotations

import tomllib
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from clockplan.boardfile import _Context, _LineIndex  # the board reader's locator, shared on purpose
from clockplan.errors import BoardError, did_you_mean

__all__ = ["read_text_file", "read_document"]


def read_text_file(path: str | Path, what: str) -> str:
    """The UTF-8 text of ``path``; ``what`` names the file in the hint (``"board file"``, ``"library file"``)."""
    path = Path(path)
    try:
        return path.read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise BoardError(f"{what} not found", file=str(path), hint="check the path") from None
    except IsADirectoryError:
        raise BoardError(f"is a folder, not a {what}", file=str(path), hint="name a .toml file") from None
    except UnicodeDecodeError as err:
        raise BoardError(f"not UTF-8 text (byte {err.start})", file=str(path), hint=f"save the {what} as UTF-8 TOML") from None
    except OSError as err:
        raise BoardError(f"cannot read the {what}: {err.strerror}", file=str(path)) from None


def read_document(
    text: str, file: str | None, sections: Sequence[str], hint_for: Callable[[str], str | None] = lambda name: None
) -> tuple[dict[str, Any], _Context]:
    """The TOML document and a locator for its errors; every top-level section must be one of ``sections``.

    Examples
    --------
    >>> doc, _ = read_document('[[buffer]]\\nname = "b"\\n', "lib.toml", ("buffer",))
    >>> doc["buffer"][0]["name"]
    'b'
    """
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise BoardError(f"not valid TOML: {err}", file=file, hint="check quoting, brackets and '=' on that line") from None
    ctx = _Context(file, _LineIndex(text))
    for section in doc:
        if section not in sections:
            hint = hint_for(section) or did_you_mean(section, sections) or "sections: " + ", ".join(sections)
            raise ctx.error(section, f"unknown section '{section}'", hint)
    return doc, ctx
