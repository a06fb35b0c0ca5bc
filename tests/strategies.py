"""Board-file generators for fuzzing: valid boards as TOML text, then mutated.

One generator serves two drivers. The test suite draws through hypothesis
(:func:`board_cases`, with shrinking and a reproducible database-free run);
the campaign in ``bench/fuzz.py`` draws through :class:`RandomPicker` so that
a seed and a case number name every case. The generator builds a board as
plain Python data in signal order (references, PLLs, dividers, buffers,
consumers, every source defined before it is used), writes it as TOML with
:func:`to_toml`, and a mutation may then break it: drop a key, put a value of
the wrong type, an absurd value (0 Hz, negative, 1e30 Hz, NaN, 10**400, a very
long string), deep nesting, unicode or duplicate ids, a loop, a dangling
source; or mangle the text itself (empty, truncated, binary junk, a BOM).
Four mutations (issue 15) start from a board with a value for most numeric keys
(``tests.boards.RANGES_BOARD``) and change one numeric leaf: an extreme or tiny
magnitude with its unit kept, a deeply nested expression, non-ASCII digits;
or put control characters in the board's name.

Every board is invented test data.
"""

from __future__ import annotations

import random
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any, Protocol, TypeVar

from hypothesis import strategies as st

from clockplan.tomlwrite import toml_key, toml_value

__all__ = [
    "Picker",
    "RandomPicker",
    "HypothesisPicker",
    "FuzzCase",
    "to_toml",
    "valid_board",
    "mutate",
    "generate_case",
    "board_cases",
    "valid_boards",
    "MUTATIONS",
    "EXTREME_NUMBERS",
    "numeric_leaves",
]

T = TypeVar("T")


class Picker(Protocol):
    """Where the generator's choices come from (a seeded RNG or hypothesis)."""

    def integer(self, lo: int, hi: int) -> int: ...

    def choice(self, options: Sequence[T]) -> T: ...

    def chance(self, p: float) -> bool: ...


class RandomPicker:
    """Choices from a seeded :class:`random.Random` (the campaign)."""

    def __init__(self, rng: random.Random) -> None:
        self.rng = rng

    def integer(self, lo: int, hi: int) -> int:
        return self.rng.randint(lo, hi)

    def choice(self, options: Sequence[T]) -> T:
        return options[self.rng.randrange(len(options))]

    def chance(self, p: float) -> bool:
        return self.rng.random() < p


class HypothesisPicker:
    """Choices drawn through hypothesis, so failing cases shrink."""

    def __init__(self, draw: Callable[[st.SearchStrategy[Any]], Any]) -> None:
        self.draw = draw

    def integer(self, lo: int, hi: int) -> int:
        return self.draw(st.integers(lo, hi))

    def choice(self, options: Sequence[T]) -> T:
        return options[self.draw(st.integers(0, len(options) - 1))]

    def chance(self, p: float) -> bool:
        # Hypothesis shrinks integers towards 0, so "no" is the simple side.
        return self.draw(st.integers(0, 999)) >= round((1 - p) * 1000)


@dataclass(frozen=True)
class FuzzCase:
    """One input: the file's bytes and how it was made (for the outcome tables)."""

    data: bytes
    mutation: str

    @property
    def text(self) -> str:
        return self.data.decode("utf-8", errors="replace")


# --------------------------------------------------------------------------- TOML writing


def _scalar_values(value: Any) -> Any:
    """``value`` with lone surrogates (which no UTF-8 file can hold) replaced by '?'."""
    if isinstance(value, str):
        return "".join("?" if 0xD800 <= ord(char) <= 0xDFFF else char for char in value)
    if isinstance(value, list):
        return [_scalar_values(v) for v in value]
    if isinstance(value, dict):
        return {_scalar_values(k): _scalar_values(v) for k, v in value.items()}
    return value


def _key(name: str) -> str:
    return toml_key(_scalar_values(name))


def _value(value: Any) -> str:
    return toml_value(_scalar_values(value))


def to_toml(doc: dict[str, Any]) -> str:
    """TOML text for a board document: ``[board]`` as a table, parts as arrays of tables.

    A section whose value is not what the format expects (a mutation) is written
    as a plain ``key = value`` line at the top so the text stays TOML.
    """
    head: list[str] = []
    body: list[str] = []
    for section, value in doc.items():
        if isinstance(value, dict):
            body.append(f"[{_key(section)}]")
            body += [f"{_key(k)} = {_value(v)}" for k, v in value.items()]
            body.append("")
        elif isinstance(value, list) and value and all(isinstance(t, dict) for t in value):
            for table in value:
                body.append(f"[[{_key(section)}]]")
                body += [f"{_key(k)} = {_value(v)}" for k, v in table.items()]
                body.append("")
        else:
            head.append(f"{_key(section)} = {_value(value)}")
    return "\n".join(head + [""] + body)


# --------------------------------------------------------------------------- valid boards

_REF_FREQUENCIES = ["25 MHz", "10 MHz", "19.2 MHz", "24 MHz", "27 MHz", "38.4 MHz", "32.768 kHz",
                    "100 MHz", "12.288 MHz", "48 MHz", "156.25 MHz", "1 Hz", "100 GHz", "14.31818 MHz"]
_CONSUMER_FREQUENCIES = ["125 MHz", "156.25 MHz", "100 MHz", "25 MHz", "50 MHz", "48 MHz", "12.288 MHz",
                         "11.2896 MHz", "148.5 MHz", "148.5/1.001 MHz", "24 MHz", "1.8432 MHz", "32.768 kHz",
                         "322.265625 MHz", "122.88 MHz", "1 Hz", "100 GHz", "33.333 MHz", "200 MHz"]
_KINDS = ["crystal", "xo", "vcxo", "tcxo", "ocxo", "mems", "rc"]
_STANDARDS = ["1000base-t", "pcie-gen3", "usb2-hs", "sata", "ddr-reference", "audio-mclk-48k", "sdi-hd",
              "10gbase-r", "rtc-32k", "gnss"]
_ERRORS = ["±20 ppm", "±1 ppb", "-50..+30 ppm", "0.5 %", "500 ppb", "±0.001 ppm", "+-100 ppm"]


def _hz_text(pick: Picker, pool: Sequence[str]) -> Any:
    roll = pick.integer(0, 9)
    if roll < 7:
        return pick.choice(pool)
    if roll == 7:
        return pick.integer(1, 10**11)  # a bare number is Hz
    if roll == 8:
        return f"{pick.integer(1, 999)}.{pick.integer(0, 999):03d} {pick.choice(['Hz', 'kHz', 'MHz', 'GHz'])}"
    return f"{pick.integer(1, 10**6)}/{pick.integer(1, 10**4)} MHz"


def _choices(pick: Picker, lo: int, hi: int) -> Any:
    form = pick.integer(0, 3)
    a = pick.integer(lo, hi)
    b = pick.integer(a, max(a, hi))
    if form == 0:
        return [a, b]
    if form == 1:
        return {"min": a, "max": b, "step": pick.choice([1, 2, 4])}
    if form == 2:
        return {"values": sorted({pick.integer(lo, hi) for _ in range(pick.integer(1, 5))})}
    return [a, b if pick.chance(0.5) else a]


def _reference(pick: Picker, index: int) -> dict[str, Any]:
    ref: dict[str, Any] = {"id": f"ref{index}", "frequency": _hz_text(pick, _REF_FREQUENCIES)}
    if pick.chance(0.5):
        ref["kind"] = pick.choice(_KINDS)
    if pick.chance(0.4):  # the accuracy keys come with the tolerance they need
        ref["tolerance"] = pick.choice(_ERRORS)
        if pick.chance(0.5):
            ref["stability"] = pick.choice(_ERRORS)
            ref["stability_range"] = pick.choice(["-40..85 C", "-55..125 C", ["0 C", "70 C"]])
        if pick.chance(0.4):
            ref["aging"] = {"first_year": "±2 ppm", "per_year": "±0.5 ppm"}
    if pick.chance(0.2):
        ref["phase_noise"] = [["10 Hz", -100], ["1 kHz", -140], ["100 kHz", pick.choice([-150, -160, -170])]]
    if pick.chance(0.1):
        ref["description"] = pick.choice(["main oscillator", "ü" * 5, "x" * 300])
    return ref


def _pll(pick: Picker, index: int, sources: list[str]) -> dict[str, Any]:
    vco_lo = pick.choice([100, 300, 1000, 2400, 4000])
    vco_hi = vco_lo * pick.choice([1, 2, 3])
    mode = pick.choice(["integer", "fractional"])
    outputs = {f"out{k}": {"divider": _choices(pick, 1, 512)} for k in range(pick.integer(1, 3))}
    pll: dict[str, Any] = {
        "id": f"pll{index}",
        "input": pick.choice(sources),
        "vco": [f"{vco_lo} MHz", f"{vco_hi} MHz"],
        "pfd": [f"{pick.choice([1, 5, 10])} MHz", f"{pick.choice([50, 100, 200])} MHz"],
        "n": [pick.choice([1, 4, 8, 16]), pick.choice([255, 1023, 4095, 65535])],
        "outputs": outputs,
    }
    if pick.chance(0.6):
        pll.update(r=_choices(pick, 1, 64))  # the input divider set
    if mode == "fractional" or pick.chance(0.2):
        pll["mode"] = mode
    if mode == "fractional":
        if pick.chance(0.5):
            pll["denominator"] = pick.choice(["2^24", "2^48", 1000, 65536, "2^20"])
        else:
            pll["max_denominator"] = pick.choice([65535, 4194303, 2**48, 2**32 - 1])
    if pick.chance(0.15):
        pll["input_range"] = ["1 MHz", "200 MHz"]
    if pick.chance(0.3):
        settings: dict[str, Any] = {}
        if pick.chance(0.7):
            settings["r"] = pick.integer(1, 4)
        if pick.chance(0.7):
            settings["n"] = pick.choice([100, "100", "19.6608", "96 + 1/3", 48, "2^7"])
        if pick.chance(0.7):
            settings["outputs"] = {name: pick.integer(1, 64) for name in outputs if pick.chance(0.7)}
        pll["settings"] = settings
    if pick.chance(0.2):
        pll["loop"] = {"bandwidth": pick.choice(["20 kHz", "200 kHz", "1 Hz"]), "damping": pick.choice([0.707, 1, 0.5])}
    if pick.chance(0.15):
        pll["noise"] = {"fom": "-227 dBc/Hz", "flicker_fom": "-264 dBc/Hz", "output_floor": "-160 dBc/Hz"}
    if index == 0 and pick.chance(0.1):
        # One spread per clock path (the board refuses stacked spreads): only the first PLL spreads,
        # from its loop or from an output that declares it spreads alone.
        spread = {"mode": "down", "depth": pick.choice(["0.5 %", "5000 ppm", "0 %"]), "rate": "31.5 kHz"}
        if pick.chance(0.5):
            pll["spread"] = spread
        else:
            first = next(iter(outputs))
            outputs[first].update(independent_spread=True, spread=spread)
    return pll


def _divider(pick: Picker, index: int, sources: list[str]) -> dict[str, Any]:
    divider: dict[str, Any] = {"id": f"div{index}", "input": pick.choice(sources), "ratio": _choices(pick, 1, 65535)}
    if pick.chance(0.3):
        divider["settings"] = {"ratio": pick.integer(1, 16)}
    if pick.chance(0.15):
        divider["additive_noise"] = pick.choice(["-160 dBc/Hz", "-150 dBc/Hz"])
    return divider


def _consumer(pick: Picker, index: int, sources: list[str]) -> dict[str, Any]:
    consumer: dict[str, Any] = {
        "id": f"load{index}",
        "source": pick.choice(sources),
        "frequency": _hz_text(pick, _CONSUMER_FREQUENCIES),
    }
    if pick.chance(0.3):
        consumer["max_synthesis_error"] = pick.choice(["±2 %", "±1 ppb", "±100 ppm", "0 ppm", "±0.001 ppb"])
    if pick.chance(0.3):
        consumer["standard"] = pick.choice(_STANDARDS)
    elif pick.chance(0.2):
        consumer["ppm"] = pick.choice(_ERRORS)
    if pick.chance(0.15):
        consumer["jitter"] = pick.choice(["0.5 ps", "1 ns", "50 fs"])
        consumer["jitter_band"] = ["12 kHz", "20 MHz"]
    return consumer


def valid_board(pick: Picker) -> dict[str, Any]:
    """A board document that should load: every source exists, no loop, buffers big enough."""
    doc: dict[str, Any] = {}
    if pick.chance(0.7):
        board: dict[str, Any] = {"name": pick.choice(["fuzz board", "Ünïcode bøard", "[bold]markup[/bold]", "a<b>&c"])}
        if pick.chance(0.4):
            board["temperature"] = [pick.choice(["-40 C", "0 C", "25 C"]), pick.choice(["85 C", "105 °C", "25 C"])]
        if pick.chance(0.3):
            board["lifetime"] = pick.choice(["10 years", "6 months", "0 h"])
        doc["board"] = board
    references = [_reference(pick, k) for k in range(pick.integer(1, 3))]
    doc["reference"] = references
    sources = [r["id"] for r in references]
    plls = []
    for k in range(pick.integer(0, 3)):
        pll = _pll(pick, k, sources)
        plls.append(pll)
        sources += [f"{pll['id']}.{name}" for name in pll["outputs"]]
    if plls:
        doc["pll"] = plls
    dividers = []
    for k in range(pick.integer(0, 2)):
        dividers.append(_divider(pick, k, sources))
        sources.append(dividers[-1]["id"])
    if dividers:
        doc["divider"] = dividers
    buffers = []
    for k in range(pick.integer(0, 2)):
        buffers.append({"id": f"buf{k}", "input": pick.choice(sources), "outputs": 1})
        if pick.chance(0.3):
            buffers[-1]["additive_jitter"] = pick.choice(["60 fs", "0.1 ps"])
        sources.append(buffers[-1]["id"])
    consumers = [_consumer(pick, k, sources) for k in range(pick.integer(1, 5))]
    doc["consumer"] = consumers
    for buffer in buffers:
        loads = sum(1 for part in dividers + buffers + plls + consumers if part.get("input", part.get("source")) == buffer["id"])
        buffer["outputs"] = loads + pick.integer(0, 2) if loads else pick.integer(1, 4)
    if buffers:
        doc["buffer"] = buffers
    if any(_ages(ref) for ref in references):
        # An aging reference needs the board's lifetime (else the audit refuses the board: docs/board-format.md).
        doc.setdefault("board", {}).setdefault("lifetime", pick.choice(["10 years", "6 months", "0 h"]))
    return doc


def _ages(ref: dict[str, Any]) -> bool:
    """Whether a generated reference ages: its own aging, or the typical grade a reference without data gets."""
    if "tolerance" in ref:
        return "aging" in ref
    return ref.get("kind", "xo") in ("crystal", "xo", "tcxo", "ocxo")


# --------------------------------------------------------------------------- mutations

_ABSURD: list[Any] = [
    0, -1, "0 Hz", "-25 MHz", "1e30 Hz", 1e30, float("nan"), float("inf"), float("-inf"), 10**400, -(10**400),
    "10^400", "1e400", "2^4096", "1/0", "", " ", "x" * 10_000, "ü" * 50, "1e-30 Hz", "0.0001 mHz", "5 THz",
    True, [], {}, [[[]]], {"a": {"b": {}}}, "25 MHz MHz", "±", "..", "-0", "1e308", 1.5, -0.0,
    "200 %", "-150 %", "1e9 ppm", "±nan ppm", "NaN Hz", "inf Hz", "(((((1)))))", "9" * 5000,
    "1 year", "-40 C", "100 GHz", "1 Hz", 2**63, 2**64 + 1, "2^48", "1/3", "1e-400", 0.1, "μs",
]


def _parts(doc: dict[str, Any]) -> list[dict[str, Any]]:
    return [t for name in ("reference", "pll", "divider", "buffer", "consumer") for t in doc.get(name, []) if isinstance(t, dict)]


def _tables(value: Any) -> list[dict[str, Any]]:
    """Every table inside ``value`` (depth first), to mutate one at random."""
    found: list[dict[str, Any]] = []
    stack = [value]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            found.append(item)
            stack += list(item.values())
        elif isinstance(item, list):
            stack += item
    return found


def _drop_key(pick: Picker, doc: dict[str, Any]) -> None:
    table = pick.choice(_tables(doc))
    if table:
        del table[pick.choice(list(table))]


def _absurd_value(pick: Picker, doc: dict[str, Any]) -> None:
    table = pick.choice(_tables(doc)[1:] or [doc])
    if table:
        table[pick.choice(list(table))] = pick.choice(_ABSURD)


def _wrong_type(pick: Picker, doc: dict[str, Any]) -> None:
    table = pick.choice(_tables(doc)[1:] or [doc])
    if table:
        key = pick.choice(list(table))
        old = table[key]
        table[key] = pick.choice([[old], {"value": old}, str(old), 7, True, 2.5, [old, old, old]])


def _deep_nesting(pick: Picker, doc: dict[str, Any]) -> None:
    depth = pick.choice([20, 120, 300])  # deeper text comes from "deep-toml"
    value: Any = "25 MHz"
    for _ in range(depth):
        value = [value] if pick.chance(0.5) else {"x": value}
    table = pick.choice(_parts(doc) or [doc])
    table[pick.choice(list(table) or ["id"])] = value


def _unicode_id(pick: Picker, doc: dict[str, Any]) -> None:
    part = pick.choice(_parts(doc))
    part["id"] = pick.choice(["réf", "时钟", "a\u200bb", "ref\nx", "a.b", "1abc", "-", "a" * 5000, "𝔸𝔹"])


def _duplicate_id(pick: Picker, doc: dict[str, Any]) -> None:
    parts = _parts(doc)
    a, b = pick.choice(parts), pick.choice(parts)
    b["id"] = a["id"]


def _cycle(pick: Picker, doc: dict[str, Any]) -> None:
    inner = [t for name in ("pll", "divider", "buffer") for t in doc.get(name, [])]
    if not inner:
        doc.setdefault("divider", []).append({"id": "loop_a", "input": "loop_b", "ratio": [1, 4]})
        doc["divider"].append({"id": "loop_b", "input": "loop_a", "ratio": [1, 4]})
        return
    part = pick.choice(inner)
    # Feed the part from itself or from something it feeds.
    downstream = [t["id"] for t in inner if t.get("input") == part["id"]]
    outs = [f"{part['id']}.{o}" for o in part.get("outputs", {})] if isinstance(part.get("outputs"), dict) else []
    part["input"] = pick.choice(downstream + outs + [part["id"]])


def _dangling(pick: Picker, doc: dict[str, Any]) -> None:
    part = pick.choice(_parts(doc))
    key = "source" if "source" in part else "input"
    part[key] = pick.choice(["nowhere", "pll0", "pll0.nothing", "ref0.out0", "", "ref0 "])


def _unknown_key(pick: Picker, doc: dict[str, Any]) -> None:
    table = pick.choice(_tables(doc))
    table[pick.choice(["frequncy", "sourse", "zzz", "ratio", "settings", "outputs"])] = pick.choice(_ABSURD[:12])


def _many_parts(pick: Picker, doc: dict[str, Any]) -> None:
    consumers = doc.setdefault("consumer", [])
    references = doc.get("reference")
    source = references[0].get("id", "ref0") if isinstance(references, list) and references and isinstance(references[0], dict) else "ref0"
    for k in range(pick.choice([50, 300])):
        consumers.append({"id": f"bulk{k}", "source": source, "frequency": f"{k + 1} MHz"})


def _huge_ranges(pick: Picker, doc: dict[str, Any]) -> None:
    for part in doc.get("pll", []) + doc.get("divider", []):
        if "ratio" in part:
            part["ratio"] = [1, pick.choice([10**6, 10**12, 10**13])]
        if "outputs" in part and isinstance(part["outputs"], dict):
            for out in part["outputs"].values():
                if isinstance(out, dict):
                    out["divider"] = [1, pick.choice([10**6, 10**12])]
        if "n" in part:
            part["n"] = [1, pick.choice([10**6, 10**12, "2^48"])]


# --- values that parse but are no physical quantity (issue 15): planted in a board that has a
# value for most numeric keys of the format (tests.boards.RANGES_BOARD), one leaf at a time.

#: Extreme and tiny magnitudes, written in place of a leaf's number (its unit kept).
EXTREME_NUMBERS = ("1e400", "1e308", "1e300", "1e200", "9223372036854775808", "2^1000", "-1e300", "5e-324",
                   "1e-300", "1e-400", "0", "-0.0", "1e30", "1e-30", "-1")
#: Non-ASCII decimal digits (full-width, Arabic-Indic, Extended Arabic-Indic, Devanagari).
_DIGIT_SETS = ("０１２３４５６７８９", "٠١٢٣٤٥٦٧٨٩", "۰۱۲۳۴۵۶۷۸۹", "०१२३४५६७८९")
_LEADING_NUMBER = re.compile(r"^\s*(?:±|\+/-|\+-)?\s*[-+]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][-+]?[0-9]+)?")


def _ranges_doc() -> dict[str, Any]:
    import tomllib

    from tests.boards import RANGES_BOARD

    return tomllib.loads(RANGES_BOARD)


def numeric_leaves(doc: Any) -> list[tuple[list[Any], Any]]:
    """``(container path, key)`` of every leaf that holds a number or text starting with one."""
    found: list[tuple[list[Any], Any]] = []
    stack: list[tuple[Any, list[Any]]] = [(doc, [])]
    while stack:
        item, path = stack.pop()
        entries = item.items() if isinstance(item, dict) else enumerate(item) if isinstance(item, list) else ()
        for key, value in entries:
            if isinstance(value, (dict, list)):
                stack.append((value, path + [key]))
            elif isinstance(value, (int, float)) and not isinstance(value, bool) or (
                isinstance(value, str) and _LEADING_NUMBER.match(value)
            ):
                found.append((path, key))
    return sorted(found, key=repr)


def _container(doc: Any, path: list[Any]) -> Any:
    for key in path:
        doc = doc[key]
    return doc


def _replace_number(value: Any, number: str) -> Any:
    """``value`` with its leading number replaced by ``number`` (text, unit kept), or ``number`` itself."""
    if isinstance(value, str):
        match = _LEADING_NUMBER.match(value)
        if match:
            return number + value[match.end():]
    return number


def _plant(pick: Picker, doc: dict[str, Any], make: Callable[[Any], Any]) -> None:
    doc.clear()
    doc.update(_ranges_doc())
    path, key = pick.choice(numeric_leaves(doc))
    table = _container(doc, path)
    table[key] = make(table[key])


def _extreme_magnitude(pick: Picker, doc: dict[str, Any]) -> None:
    number = pick.choice(EXTREME_NUMBERS)
    _plant(pick, doc, lambda value: _replace_number(value, number))


def _deep_expression(pick: Picker, doc: dict[str, Any]) -> None:
    depth = pick.choice([30, 31, 32, 33, 200, 990])
    style = pick.choice(["parens", "signs", "powers"])

    def nest(value: Any) -> str:
        text = value if isinstance(value, str) else str(value)
        match = _LEADING_NUMBER.match(text)
        number, unit = (match.group(0).strip(), text[match.end():]) if match else ("1", "")
        number = number.lstrip("±+/-") or "1"
        if style == "parens":
            return "(" * depth + number + ")" * depth + unit
        if style == "signs":
            return "-" * (depth - depth % 2) + number + unit
        return "1^" * depth + number + unit

    _plant(pick, doc, nest)


def _non_ascii_digits(pick: Picker, doc: dict[str, Any]) -> None:
    digits = pick.choice(_DIGIT_SETS)
    _plant(pick, doc, lambda value: (value if isinstance(value, str) else str(value)).translate(
        str.maketrans("0123456789", digits)))


def _control_text(pick: Picker, doc: dict[str, Any]) -> None:
    board = doc.setdefault("board", {})
    board["name"] = pick.choice(["red\x1b[31m", "two\nlines", "bell\x07", "nul\x00", "\x9b2J", "tab\tname|pipe"])


_DOC_MUTATIONS: dict[str, Callable[[Picker, dict[str, Any]], None]] = {
    "extreme-magnitude": _extreme_magnitude,
    "deep-expression": _deep_expression,
    "non-ascii-digits": _non_ascii_digits,
    "control-text": _control_text,
    "drop-key": _drop_key,
    "absurd-value": _absurd_value,
    "wrong-type": _wrong_type,
    "deep-nesting": _deep_nesting,
    "unicode-id": _unicode_id,
    "duplicate-id": _duplicate_id,
    "cycle": _cycle,
    "dangling-source": _dangling,
    "unknown-key": _unknown_key,
    "many-parts": _many_parts,
    "huge-ranges": _huge_ranges,
}


def _text_mutation(pick: Picker, kind: str, data: bytes) -> bytes:
    if kind == "empty":
        return b""
    if kind == "bom":
        return b"\xef\xbb\xbf" + data
    if kind == "truncate":
        return data[: pick.integer(0, len(data))]
    if kind == "binary-junk":
        junk = bytes(pick.integer(0, 255) for _ in range(pick.integer(1, 64)))
        at = pick.integer(0, len(data))
        return data[:at] + junk + data[at:]
    if kind == "line-shuffle":
        lines = data.split(b"\n")
        a, b = pick.integer(0, len(lines) - 1), pick.integer(0, len(lines) - 1)
        lines[a], lines[b] = lines[b], lines[a]
        return b"\n".join(lines)
    if kind == "deep-toml":
        depth = pick.choice([100, 1000, 5000])
        return data + b"\nextra = " + b"[" * depth + b"]" * depth + b"\n"
    if kind == "crlf":
        return data.replace(b"\n", b"\r\n")
    raise ValueError(kind)


_TEXT_MUTATIONS = ("empty", "bom", "truncate", "binary-junk", "line-shuffle", "deep-toml", "crlf")

#: Every mutation name, plus ``"none"`` for a valid board left as it is.
MUTATIONS = ("none",) + tuple(_DOC_MUTATIONS) + _TEXT_MUTATIONS


def mutate(pick: Picker, doc: dict[str, Any], kind: str) -> bytes:
    """The board ``doc`` written as TOML bytes after mutation ``kind``."""
    if kind in _DOC_MUTATIONS:
        _DOC_MUTATIONS[kind](pick, doc)
        if pick.chance(0.3):  # sometimes two faults at once
            _DOC_MUTATIONS[pick.choice(list(_DOC_MUTATIONS))](pick, doc)
    data = to_toml(doc).encode("utf-8", errors="surrogatepass")
    if kind in _TEXT_MUTATIONS:
        data = _text_mutation(pick, kind, data)
    return data


def generate_case(pick: Picker, mutation: str | None = None) -> FuzzCase:
    """One fuzz case: a valid board (a quarter of the time) or a mutated one."""
    doc = valid_board(pick)
    kind = mutation or ("none" if pick.chance(0.25) else pick.choice(MUTATIONS[1:]))
    return FuzzCase(mutate(pick, doc, kind), kind)


@st.composite
def board_cases(draw: Callable[[st.SearchStrategy[Any]], Any], mutation: str | None = None) -> FuzzCase:
    """Hypothesis strategy: a fuzz case, valid or mutated."""
    return generate_case(HypothesisPicker(draw), mutation)


@st.composite
def valid_boards(draw: Callable[[st.SearchStrategy[Any]], Any]) -> str:
    """Hypothesis strategy: the TOML text of a valid board."""
    return to_toml(valid_board(HypothesisPicker(draw)))
