"""Reading board files (TOML) into the domain model, with located errors.

Every problem names the file, the key path (``pll[1].outputs.out0.divider``)
and the line where it can be found, and says how to fix it. Unknown keys are
errors (a typo must not silently drop a constraint), with a suggestion.
The file format is documented in ``docs/board-format.md``.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Iterator
from fractions import Fraction
from pathlib import Path
from typing import Any, TypeVar

from clockplan.errors import BoardError, did_you_mean
from clockplan.parts import (
    ACCURACY_POLICIES,
    REFERENCE_KINDS,
    WORST_CASE,
    Board,
    Buffer,
    Consumer,
    Denominator,
    Divider,
    IntChoices,
    Pll,
    PllOutput,
    Reference,
)
from clockplan.margins import DEFAULT_MARGIN_WARNING, parse_margin_warning
from clockplan.tomlread import (
    ID_PATTERN,
    Locator,
    TableReader,
    frequency_range,
    int_choices,
    located,
    min_max_pair,
    nonempty_text,
    part_id,
    read_document,
    decode_text,
    read_file_bytes,
    type_name,
    whole_number,
)
from clockplan.units import (
    parse_duration,
    parse_frequency,
    parse_ppm,
    parse_ratio,
    parse_temperature,
)

__all__ = [
    "load_board",
    "parse_board",
    "read_board_section",
    "CONDITION_KEYS",
    "unstated_conditions",
    "read_accuracy_policy",
    "read_reference",
    "read_consumer",
    "read_denominator",
    "pll_mode",
    "finish_part",
]

T = TypeVar("T")

_SECTIONS = ("board", "reference", "pll", "divider", "buffer", "consumer")
#: The largest fractional-N denominator read; real modulators use 2^24 to 2^48.
MAX_DENOMINATOR = 2**64


# --------------------------------------------------------------------------- board value parsers


def _temperature_range(value: Any) -> tuple[float, float]:
    lo_text, hi_text = min_max_pair(value, '["-40 C", "85 C"]')
    lo, hi = parse_temperature(lo_text), parse_temperature(hi_text)
    if lo > hi:
        raise BoardError(f"temperature range {value!r} runs backwards", hint="write [coldest, hottest]")
    return lo, hi


def _symmetric_error(value: Any) -> Fraction:
    lo, hi = parse_ppm(value)
    return max(-lo, hi)


def pll_mode(value: Any) -> str:
    text = nonempty_text(value).lower()
    if text not in ("integer", "fractional"):
        raise BoardError(f"unknown PLL mode {value!r}", hint="use 'integer' or 'fractional'")
    return text


def _choice(value: Any, choices: tuple[str, ...], what: str, plural: str) -> str:
    """``value`` as one of ``choices`` (case ignored), or a located error with the closest ones."""
    text = nonempty_text(value).lower()
    if text not in choices:
        hint = did_you_mean(text, choices) or f"{plural}: " + ", ".join(choices)
        raise BoardError(f"unknown {what} {value!r}", hint=hint)
    return text


def _kind(value: Any) -> str:
    return _choice(value, REFERENCE_KINDS, "oscillator kind", "kinds")


# --------------------------------------------------------------------------- sections


#: The operating conditions of ``[board]``; without them a board is held at 25 °C and 0 years.
CONDITION_KEYS = ("temperature", "lifetime")


def unstated_conditions(board_table: Any) -> tuple[str, ...]:
    """The :data:`CONDITION_KEYS` a ``[board]`` table (or its absence, ``None``) leaves out.

    Examples
    --------
    >>> unstated_conditions({"name": "x", "lifetime": "10 years"})
    ('temperature',)
    """
    table = board_table if isinstance(board_table, dict) else {}
    return tuple(key for key in CONDITION_KEYS if key not in table)


def read_board_section(doc: dict, ctx: Locator) -> tuple[str, tuple[float, float], float, Fraction]:
    """The ``[board]`` table: name, temperature range, lifetime and the margin policy's threshold."""
    if "board" not in doc:
        return "unnamed board", (25.0, 25.0), 0.0, DEFAULT_MARGIN_WARNING
    reader = TableReader(doc["board"], "board", ctx)
    name = reader.get("name", nonempty_text, "unnamed board")
    temperature = reader.get("temperature", _temperature_range, (25.0, 25.0))
    lifetime = reader.get("lifetime", parse_duration, 0.0)
    margin_warning = reader.get("margin_warning", parse_margin_warning, DEFAULT_MARGIN_WARNING)
    reader.raw("description")
    reader.raw("accuracy_policy")  # read by read_accuracy_policy
    reader.finish()
    return name, temperature, lifetime, margin_warning


def accuracy_policy(value: Any) -> str:
    """``"worst-case"`` or ``"statistical"`` (case and surrounding spaces ignored)."""
    return _choice(value, ACCURACY_POLICIES, "accuracy policy", "policies")


def read_accuracy_policy(doc: dict, ctx: Locator) -> str:
    """The board's ``[board] accuracy_policy``: how frequency-error budgets are judged (default worst case)."""
    if "board" not in doc:
        return WORST_CASE
    return TableReader(doc["board"], "board", ctx).get("accuracy_policy", accuracy_policy, WORST_CASE)




def read_reference(reader: TableReader) -> Reference:
    from clockplan.ppm.parse import REFERENCE_KEYS, parse_oscillator_spec

    reference = Reference(
        id=reader.get("id", part_id),
        frequency=reader.get("frequency", parse_frequency),
        kind=reader.get("kind", _kind, "xo"),
    )
    reader.raw("description")
    accuracy_keys = [name for name in REFERENCE_KEYS if name != "kind" and reader.has(name)]
    for name in REFERENCE_KEYS:
        reader.raw(name)
    if not accuracy_keys:
        return reference  # no accuracy data: the ppm stage says so (docs/frequency-accuracy.md)
    spec = located(reader, lambda: parse_oscillator_spec(reader.table, reader.key, reference.frequency))
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
        independent = out.get("independent_spread", _flag, False)
        spread = _read_spread(out)
        if spread is not None and not independent:
            raise out.error(
                "spread",
                f"output {name!r} cannot spread alone: a spread made by modulating the loop (its feedback "
                "divider or its VCO) sweeps the VCO, so it reaches every output of this PLL and every clock "
                "downstream",
                "move the spread to the PLL (spread = { ... } in its [[pll]] table): every output then spreads; "
                "or, if the part's datasheet says this output's divider makes its own spread (a fractional "
                "output divider with its own modulation), add independent_spread = true to this output "
                "(docs/board-format.md, 'Spread spectrum')",
            )
        result.append(
            PllOutput(name=name, divider=out.get("divider", int_choices), spread=spread, independent_spread=independent)
        )
        out.raw("description")
        out.finish()
    return tuple(result)


def _flag(value: Any) -> bool:
    if not isinstance(value, bool):
        raise BoardError(f"expected true or false, got {type_name(value)}")
    return value


def _read_spread(reader: TableReader) -> Any:
    """The table's ``spread`` (a ``SpreadSpectrum``) or None; a board spread must give its rate."""
    if not reader.has("spread"):
        return None
    from clockplan.ppm.parse import parse_spread

    reader.raw("spread")
    spread = located(reader, lambda: parse_spread(reader.table["spread"], reader.path("spread")))
    if spread.modulation_hz is None:
        raise reader.error(
            "spread",
            "a spread without its modulation rate",
            'add rate = "31.5 kHz" (the part\'s modulation rate): the rate sets the time deviation the spread '
            "adds to every clock it reaches (its jitter), and standards that allow spreading bound it",
        )
    return spread


def _denominator(value: Any) -> int:
    number = whole_number(value, 2)
    if number > MAX_DENOMINATOR:
        raise BoardError(f"denominator {number} is above 2^64", hint="fractional-N modulators use denominators up to about 2^48")
    return number


def read_denominator(reader: TableReader, mode: str) -> Denominator | None:
    fixed = reader.get("denominator", _denominator, None)
    limit = reader.get("max_denominator", _denominator, None)
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
    mode = reader.get("mode", pll_mode, "integer")
    n_lo, n_hi = reader.get("n", lambda v: tuple(parse_ratio(x) for x in min_max_pair(v, "[16, 4095]")))
    if not 0 < n_lo <= n_hi:
        raise reader.error("n", f"N range {n_lo}..{n_hi} must be positive and ascending")
    pll = Pll(
        id=reader.get("id", part_id),
        input=reader.get("input", nonempty_text),
        vco=reader.get("vco", frequency_range),
        pfd=reader.get("pfd", frequency_range),
        ref_divider=reader.get("r", int_choices, IntChoices(1, 1)),
        feedback_min=n_lo,
        feedback_max=n_hi,
        mode=mode,  # type: ignore[arg-type]
        outputs=_read_outputs(reader),
        denominator=read_denominator(reader, mode),
        input_range=reader.get("input_range", frequency_range, None),
        spread=_read_spread(reader),
    )
    reader.raw("description")
    return pll


def _read_pll_pins(reader: TableReader, pll: Pll) -> dict[str, Any]:
    if not reader.has("settings"):
        return {}
    settings = reader.sub("settings")
    pins: dict[str, Any] = {}
    if settings.has("r"):
        pins["r"] = settings.get("r", whole_number)
    if settings.has("n"):
        pins["n"] = settings.get("n", _positive_ratio)
    if settings.has("outputs"):
        outputs = settings.sub("outputs")
        names = [o.name for o in pll.outputs]
        for name in outputs.table:
            if name not in names:
                raise outputs.error(name, f"PLL {pll.id!r} has no output {name!r}", did_you_mean(name, names) or f"outputs: {', '.join(names)}")
            outputs.used.add(name)
        pins["dividers"] = {name: outputs.get(name, whole_number) for name in outputs.table}
    settings.finish()
    return pins


def _positive_ratio(value: Any) -> Fraction:
    ratio = parse_ratio(value)
    if ratio <= 0:
        raise BoardError(f"ratio {value!r} must be positive")
    return ratio


def _read_divider(reader: TableReader) -> tuple[Divider, dict[str, Any]]:
    divider = Divider(
        id=reader.get("id", part_id),
        input=reader.get("input", nonempty_text),
        ratio=reader.get("ratio", int_choices),
    )
    pins = {}
    if reader.has("settings"):
        settings = reader.sub("settings")
        pins["ratio"] = settings.get("ratio", whole_number)
        settings.finish()
    reader.raw("description")
    return divider, pins


def _read_buffer(reader: TableReader) -> Buffer:
    buffer = Buffer(
        id=reader.get("id", part_id),
        input=reader.get("input", nonempty_text),
        outputs=reader.get("outputs", whole_number),
    )
    reader.raw("description")
    return buffer


def read_consumer(reader: TableReader) -> Consumer:
    from clockplan.standards.resolve import BUDGET_FIELDS, resolve_budget

    consumer = Consumer(
        id=reader.get("id", part_id),
        source=reader.get("source", nonempty_text),
        frequency=reader.get("frequency", parse_frequency),
        max_synthesis_error=reader.get("max_synthesis_error", _symmetric_error, Fraction(0)),
        standard=reader.get("standard", nonempty_text, None),
    )
    description = reader.raw("description")
    if isinstance(description, str) and description.strip():
        consumer = dataclasses.replace(consumer, description=description.strip())
    for name in BUDGET_FIELDS:
        reader.raw(name)
    budget = located(reader, lambda: resolve_budget(consumer.standard, reader.table, reader.key))
    return dataclasses.replace(consumer, budget=budget)


def _array_of_tables(doc: dict, name: str, ctx: Locator) -> Iterator[TableReader]:
    value = doc.get(name, [])
    if isinstance(value, dict):
        raise ctx.error(name, f"'{name}' must be an array of tables", hint=f"write each one under [[{name}]], not [{name}]")
    if not isinstance(value, list):
        raise ctx.error(name, f"'{name}' must be an array of tables, got {type_name(value)}", hint=f"write [[{name}]] sections")
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
    doc, ctx = read_document(text, file, _SECTIONS, _section_hint)
    name, temperature, lifetime, margin_warning = read_board_section(doc, ctx)
    policy = read_accuracy_policy(doc, ctx)
    pins: dict[str, dict[str, Any]] = {}
    references = tuple(finish_part(r, read_reference(r)) for r in _array_of_tables(doc, "reference", ctx))
    plls = []
    for reader in _array_of_tables(doc, "pll", ctx):
        pll = _read_pll(reader)
        pins[pll.id] = _read_pll_pins(reader, pll)
        plls.append(finish_part(reader, pll))
    dividers = []
    for reader in _array_of_tables(doc, "divider", ctx):
        divider, divider_pins = _read_divider(reader)
        pins[divider.id] = divider_pins
        dividers.append(finish_part(reader, divider))
    buffers = tuple(finish_part(r, _read_buffer(r)) for r in _array_of_tables(doc, "buffer", ctx))
    consumers = tuple(finish_part(r, read_consumer(r)) for r in _array_of_tables(doc, "consumer", ctx))
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
        unstated=unstated_conditions(doc.get("board")),
        margin_warning=margin_warning,
        accuracy_policy=policy,
    )
    _check_unique_ids(board, ctx)
    from clockplan.graph import build_graph

    from clockplan.spreading import check_spreads

    graph = build_graph(board)  # refuses unknown sources, loops and over-subscribed buffers
    check_spreads(board, graph)  # refuses two spreads stacked on one clock path
    return board


def finish_part(reader: TableReader, part: T) -> T:
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
    return located(reader, lambda: reader.get(name, lambda value: parse(value, reader.path(name)), None))


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


def _line_table(ctx: Locator, doc: dict) -> dict[str, int]:
    lines: dict[str, int] = {}
    board_line = ctx.line_of("board")
    if board_line:
        lines["board"] = board_line
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


def _check_unique_ids(board: Board, ctx: Locator) -> None:
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
    data = read_file_bytes(path, "board file", missing_hint="check the path; 'clockplan new FILE' writes a starter board")
    board = parse_board(decode_text(data, path, "board file"), str(path))
    return dataclasses.replace(board, source_bytes=data)


def _section_hint(section: str) -> str | None:
    """A hint for a section a board file may not have."""
    if section == "synthesis":
        return "this is a consumer list for tree synthesis: run 'clockplan synthesize FILE' (docs/synthesis.md)"
    return None
