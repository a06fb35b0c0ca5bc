"""The shipped table of interface clock requirements: lazy loading and key lookup.

The table lives in ``clockplan/data/standards.toml``. Nothing is read until a
standard is first asked for, and each entry is converted to a
:class:`~clockplan.standards.model.StandardBudget` only when used, so importing
clockplan (and starting the command line) costs nothing.

Keys are matched case-insensitively, ignoring spaces, dashes and underscores,
and through each entry's aliases: ``"PCIe Gen4 reference"``, ``"pcie-gen4"``
and ``"PCIE_GEN4"`` all find the same entry. Dots are kept, so ``"2.5GBASE-T"``
and ``"25GBASE-R"`` stay apart.
"""

from __future__ import annotations

import difflib
import functools
import re
from fractions import Fraction
from typing import Any

from clockplan.errors import BoardError, ClockplanError, UnitError
from clockplan.standards.model import StandardBudget
from clockplan.units import parse_frequency, parse_ppm, parse_time

__all__ = [
    "normalize_key",
    "standard_keys",
    "get_standard",
    "all_standards",
    "find_standards",
    "closest_keys",
    "DERIVED_BUDGETS",
]

_TABLE_PARTS = ("data", "standards.toml")
_IGNORED = re.compile(r"[\s_\-]+")

#: Budgets that are computed from the design rather than looked up, with the
#: inline table a consumer writes for each (see :mod:`clockplan.standards.resolve`).
DERIVED_BUDGETS = {
    "uart": 'uart = { frame = "8N1", oversampling = 16 }',
    "can": "can = { prop_seg = 1, phase_seg1 = 4, phase_seg2 = 4, sjw = 4 }",
    "rtc": 'rtc = { drift = "1 s", per = "1 day" }',
    "converter": 'converter = { snr = "70 dB", f_in = "100 MHz" }',
}


def normalize_key(text: str) -> str:
    """Fold a standard name for matching: lower case, no spaces, dashes or underscores.

    Examples
    --------
    >>> normalize_key("PCIe Gen4 reference")
    'pciegen4reference'
    """
    return _IGNORED.sub("", text).lower()


@functools.cache
def _raw_table() -> dict[str, dict[str, Any]]:
    # Imported here: reading the table is the first use, not module import.
    import tomllib
    from importlib import resources

    resource = resources.files("clockplan").joinpath(*_TABLE_PARTS)
    data = tomllib.loads(resource.read_text(encoding="utf-8"))
    return data["standard"]


@functools.cache
def _index() -> dict[str, str]:
    """Map every normalized key and alias to its canonical key."""
    index: dict[str, str] = {}
    for key, entry in _raw_table().items():
        for name in (key, *entry.get("aliases", ())):
            folded = normalize_key(name)
            other = index.setdefault(folded, key)
            if other != key:
                raise ClockplanError(
                    f"standards table: name {name!r} is used by both {other!r} and {key!r}",
                    hint="make every key and alias unique",
                )
    return index


def standard_keys() -> tuple[str, ...]:
    """Canonical keys of the shipped table, in table order.

    Examples
    --------
    >>> "pcie-gen4" in standard_keys()
    True
    """
    return tuple(_raw_table())


def _range(values: Any, parse: Any, what: str) -> tuple[Any, Any]:
    if not isinstance(values, list) or len(values) != 2:
        raise UnitError(f"{what} {values!r} must be a list of two values", hint='e.g. ["12 kHz", "20 MHz"]')
    low, high = parse(values[0]), parse(values[1])
    if low > high:
        raise UnitError(f"{what} {values!r} runs backwards", hint="write the lower value first")
    return low, high


def _frequency_range(values: Any, what: str) -> tuple[Fraction, Fraction]:
    return _range(values, parse_frequency, what)


def _budget_from_entry(key: str, entry: dict[str, Any]) -> StandardBudget:
    spread = entry.get("spread")
    spread_rate = entry.get("spread_rate")
    band = entry.get("jitter_band")
    jitter_rms = entry.get("jitter_rms")
    jitter_pp = entry.get("jitter_pp")
    ppm = entry.get("ppm")
    return StandardBudget(
        key=key,
        title=entry["title"],
        family=entry["family"],
        nominal_hz=tuple(parse_frequency(text) for text in entry.get("nominal", ())),
        ppm=parse_ppm(ppm) if ppm is not None else None,
        spread=parse_ppm(spread) if spread is not None else None,
        spread_rate_hz=_frequency_range(spread_rate, "spread_rate") if spread_rate is not None else None,
        jitter_rms_s=parse_time(jitter_rms) if jitter_rms is not None else None,
        jitter_pp_s=parse_time(jitter_pp) if jitter_pp is not None else None,
        jitter_band_hz=_frequency_range(band, "jitter_band") if band is not None else None,
        jitter_notes=entry.get("jitter_notes", ""),
        source=entry["source"],
        confidence=entry["confidence"],
        notes=entry.get("notes", ""),
        aliases=tuple(entry.get("aliases", ())),
    )


@functools.cache
def _budget(key: str) -> StandardBudget:
    try:
        return _budget_from_entry(key, _raw_table()[key])
    except (KeyError, ValueError) as err:
        # The shipped table is ours: a bad entry is a packaging bug, reported plainly.
        raise ClockplanError(f"standards table entry {key!r} is malformed: {err}") from None


def closest_keys(word: str, n: int = 3) -> list[str]:
    """Canonical keys that look most like ``word`` (by name, alias or family).

    Examples
    --------
    >>> closest_keys("pcie gen 4")[0]
    'pcie-gen4'
    """
    index = _index()
    folded = normalize_key(word)
    if not folded:
        return []
    # A family word ("ethernet", "usb") is best answered by the family's members.
    found = [key for key, entry in _raw_table().items() if folded == normalize_key(entry["family"])]
    for name in difflib.get_close_matches(folded, list(index), n=4 * n, cutoff=0.6):
        if index[name] not in found:
            found.append(index[name])
    if not found:
        found = [key for key in _raw_table() if folded in normalize_key(key)]
    return found[:n]


def _unknown_key_error(word: str, key_path: str | None) -> BoardError:
    folded = normalize_key(word)
    suggestions = closest_keys(word)
    if folded in DERIVED_BUDGETS:
        hint = (
            f"{word!r} budgets are derived from the design, not looked up: write "
            f"{DERIVED_BUDGETS[folded]} in the consumer instead of a standard"
        )
    elif suggestions:
        hint = "did you mean " + " or ".join(repr(k) for k in suggestions) + "?"
        hint += " ('clockplan standards' lists every key)"
    else:
        hint = "'clockplan standards' lists every key"
    return BoardError(f"unknown standard {word!r}", key=key_path, hint=hint)


def get_standard(name: str, *, key: str | None = None) -> StandardBudget:
    """Look up a standard by key or alias (case, spaces, dashes and underscores ignored).

    Parameters
    ----------
    name
        What the user wrote, e.g. ``"PCIe Gen4 reference"``.
    key
        Key path for the error message, e.g. ``"consumer[2].standard"``.

    Raises
    ------
    BoardError
        For an unknown name, with the closest known keys as a hint.

    Examples
    --------
    >>> get_standard("PCIe Gen4 reference").key
    'pcie-gen4'
    """
    if not isinstance(name, str):
        raise BoardError(f"standard must be text, not {name!r}", key=key, hint='e.g. standard = "pcie-gen4"')
    canonical = _index().get(normalize_key(name))
    if canonical is None:
        raise _unknown_key_error(name, key)
    return _budget(canonical)


def all_standards() -> tuple[StandardBudget, ...]:
    """Every entry of the table, parsed, in table order."""
    return tuple(_budget(key) for key in _raw_table())


def _haystack(budget: StandardBudget) -> str:
    parts = (budget.key, budget.title, budget.family, *budget.aliases)
    return " ".join(parts).lower() + " " + " ".join(normalize_key(p) for p in parts)


def find_standards(word: str | None = None) -> tuple[StandardBudget, ...]:
    """Entries whose key, title, family or aliases contain ``word`` (all when ``None``).

    Examples
    --------
    >>> [b.key for b in find_standards("sata")]
    ['sata']
    """
    if not word:
        return all_standards()
    plain = word.lower().strip()
    folded = normalize_key(word)
    return tuple(b for b in all_standards() if plain in _haystack(b) or folded in _haystack(b))
