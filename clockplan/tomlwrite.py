"""A small TOML writer for whole new board files: values and array-of-tables entries.

The counterpart of :mod:`clockplan.tomlread`; the tree synthesis writes its
boards with it, and the fuzz strategies their generated boards.

Values are the raw TOML values a template or a consumer table was read from
(strings, numbers, booleans, arrays, inline tables), written back so that
reading the text gives the same values. Keys that are not bare TOML keys are
quoted.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Mapping
from typing import Any

__all__ = ["toml_key", "toml_string", "toml_value", "toml_table"]

_BARE = re.compile(r"^[A-Za-z0-9_\-]+$")


def toml_key(key: str) -> str:
    """A key, quoted when it is not a bare key.

    Examples
    --------
    >>> toml_key("vco"), toml_key("a.b")
    ('vco', '"a.b"')
    """
    return key if _BARE.match(key) else toml_string(key)


_SHORT_ESCAPES = {'"': '\\"', "\\": "\\\\", "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f", "\r": "\\r"}


def toml_string(text: str) -> str:
    """A TOML basic string: quotes, backslashes and every control character escaped.

    TOML forbids raw control characters other than tab in basic strings,
    DEL (U+007F) included, which a JSON encoder would leave raw.

    Examples
    --------
    >>> print(toml_string('a "b"\\tc\\x7f'))
    "a \\"b\\"\\tc\\u007F"
    """
    out = []
    for char in text:
        if char in _SHORT_ESCAPES:
            out.append(_SHORT_ESCAPES[char])
        elif ord(char) < 0x20 or ord(char) == 0x7F:
            out.append(f"\\u{ord(char):04X}")
        else:
            out.append(char)
    return '"' + "".join(out) + '"'


def toml_value(value: Any) -> str:
    """One value as TOML text.

    Examples
    --------
    >>> toml_value({"bandwidth": "200 kHz", "damping": 0.707})
    '{ bandwidth = "200 kHz", damping = 0.707 }'
    >>> toml_value([["10 Hz", -85], ["1 kHz", -138.5]])
    '[["10 Hz", -85], ["1 kHz", -138.5]]'
    """
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return toml_string(value)
    if isinstance(value, Mapping):
        inner = ", ".join(f"{toml_key(k)} = {toml_value(v)}" for k, v in value.items())
        return "{ " + inner + " }" if inner else "{}"
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    raise TypeError(f"cannot write {type(value).__name__} as TOML")


def toml_table(header: str, items: Iterable[tuple[str, Any]], array: bool = True) -> list[str]:
    """The lines of one ``[[header]]`` (or ``[header]``) table; ``None`` values are left out.

    Examples
    --------
    >>> toml_table("buffer", [("id", "fan1"), ("outputs", 4), ("additive_jitter", None)])
    ['[[buffer]]', 'id = "fan1"', 'outputs = 4']
    """
    lines = [f"[[{header}]]" if array else f"[{header}]"]
    for key, value in items:
        if value is not None:
            lines.append(f"{toml_key(key)} = {toml_value(value)}")
    return lines
