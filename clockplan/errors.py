"""Errors the user can cause, with where they happened and how to fix them.

Every problem that comes from input (a board file, a command-line value, a
library call with impossible arguments) raises :class:`ClockplanError` or a
subclass. It is a :class:`ValueError`, so library users can catch it the usual
way; the CLI catches it and prints one clean message, never a traceback.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable

__all__ = [
    "ClockplanError",
    "BoardError",
    "UnitError",
    "InfeasibleError",
    "did_you_mean",
    "printable",
]


def printable(text: str, keep_newlines: bool = False) -> str:
    """``text`` with control characters written as escapes (``\\n``, ``\\x1b``), safe to print.

    Board text reaches terminals and Markdown: an escape sequence in a name could
    recolour or rewrite the screen, a newline could fake a line of the report.

    Examples
    --------
    >>> printable("red\\x1b[31m\\nname")
    'red\\\\x1b[31m\\\\nname'
    """
    if text.isprintable() or all(c.isprintable() or (keep_newlines and c == "\n") for c in text):
        return text
    out = []
    for char in text:
        if char.isprintable() or char == " " or (keep_newlines and char == "\n"):
            out.append(char)
        else:
            out.append(repr(char)[1:-1] if char not in "'\"" else char)
    return "".join(out)


class ClockplanError(ValueError):
    """Base class for every error the user can cause.

    Parameters
    ----------
    message
        What is wrong, in one sentence.
    file
        The file the problem is in, if any.
    key
        The key path inside the file, e.g. ``pll[2].outputs.out0.divider``.
    line
        The 1-based line number, where known.
    hint
        How to fix it.
    """

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        key: str | None = None,
        line: int | None = None,
        hint: str | None = None,
    ) -> None:
        self.message = message
        self.file = file
        self.key = key
        self.line = line
        self.hint = hint
        super().__init__(self.describe())

    def located(
        self, *, file: str | None = None, key: str | None = None, line: int | None = None
    ) -> "ClockplanError":
        """Return a copy with missing location fields filled in."""
        return type(self)(
            self.message,
            file=self.file or file,
            key=self.key or key,
            line=self.line or line,
            hint=self.hint,
        )

    def describe(self) -> str:
        """Format the error as ``file:line: key: message (hint)``."""
        where = []
        if self.file:
            where.append(printable(self.file) + (f":{self.line}" if self.line else ""))
        elif self.line:
            where.append(f"line {self.line}")
        if self.key:
            where.append(printable(self.key))
        message = printable(self.message, keep_newlines=True)
        text = ": ".join(where + [message]) if where else message
        if self.hint:
            text += f"\n  hint: {printable(self.hint, keep_newlines=True)}"
        return text


class BoardError(ClockplanError):
    """A board file (or board data) is malformed or inconsistent."""


class UnitError(ClockplanError):
    """A quantity's text could not be read (bad number, unknown unit)."""


class InfeasibleError(ClockplanError):
    """No plan meets the constraints; the message says which constraint blocks."""


def did_you_mean(word: str, choices: Iterable[str], n: int = 3) -> str:
    """Return a ``did you mean ...?`` phrase for the closest choices, or ``""``.

    Examples
    --------
    >>> did_you_mean("ref_mian", ["ref_main", "pll_a"])
    "did you mean 'ref_main'?"
    """
    close = difflib.get_close_matches(word, list(choices), n=n, cutoff=0.6)
    if not close:
        return ""
    return "did you mean " + " or ".join(repr(c) for c in close) + "?"
