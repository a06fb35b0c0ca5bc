"""The parts library: generic part templates described by what a datasheet gives.

A template is a kind of part, not a product: an oscillator grade with its stock
frequencies and phase noise, an integer-N or fractional-N PLL with its ranges,
output count and noise figures, a plain divider, a fanout buffer with its
additive jitter; each with a steady power and a relative cost. The shipped
defaults (``clockplan/data/parts_library.toml``) are typical figures, common
practice; a user library file adds templates or replaces shipped ones of the
same name, and a board may restrict which templates are allowed.

Templates keep the raw TOML values they were read from, so that a synthesized
board is written with the same text (``clockplan.tomlwrite``).
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from functools import cached_property
from importlib import resources
from pathlib import Path
from typing import Any

from clockplan.boardfile import pll_mode, read_denominator
from clockplan.errors import BoardError, did_you_mean
from clockplan.parts import (
    Buffer,
    Denominator,
    Divider,
    FrequencyRange,
    IntChoices,
    Pll,
    PllOutput,
    Reference,
)
from clockplan.tomlread import (
    ID_PATTERN,
    TableReader,
    frequency_range,
    int_choices,
    located,
    min_max_pair,
    nonempty_text,
    read_document,
    read_text_file,
    whole_number,
)
from clockplan.units import parse_dbc, parse_frequency, parse_quantity, parse_ratio

__all__ = [
    "OscillatorTemplate",
    "PllTemplate",
    "DividerTemplate",
    "BufferTemplate",
    "PartsLibrary",
    "TYPICAL_NOTE",
    "load_library",
    "parse_library",
    "default_library",
]

#: Said wherever library figures stand in for a part's own data.
TYPICAL_NOTE = (
    "typical figures of a generic part kind (common practice, from memory), not any maker's data: "
    "choose real parts and audit again with their datasheet figures"
)

_SECTIONS = ("oscillator", "pll", "divider", "buffer")
_ACCURACY_KEYS = (
    "kind", "tolerance", "stability", "stability_range", "temperature_curve", "aging", "load",
    "supply_sensitivity", "load_sensitivity", "distribution", "trim", "power",
)
#: Keys of a PLL template that are the board file's own [[pll]] keys, written as they are.
_PLL_PART_KEYS = ("mode", "vco", "pfd", "r", "n", "denominator", "max_denominator", "input_range", "loop", "noise")


# --------------------------------------------------------------------------- templates


@dataclass(frozen=True, eq=False)
class OscillatorTemplate:
    """A kind of oscillator: accuracy figures, stock frequencies, phase noise, power and cost.

    ``accuracy`` holds the board file's reference keys (``kind``, ``tolerance``,
    ``stability``, ``aging``, ``power``...) as raw TOML values; ``spec`` is
    what they parse to. ``phase_noise`` (raw points) is given at
    ``phase_noise_at`` and scaled by ``20 log10(f / f_at)`` to other frequencies.
    """

    name: str
    label: str
    kind: str
    frequencies: tuple[Fraction, ...]
    accuracy: Mapping[str, Any]
    spec: Any
    outputs: int
    power_w: Fraction
    cost: Fraction
    phase_noise: tuple[tuple[Any, float], ...] | None = None
    phase_noise_at: Fraction | None = None
    grade: str | None = None

    def offers(self, hz: Fraction) -> bool:
        """True if ``hz`` is one of the stock frequencies."""
        return hz in self.frequencies

    def phase_noise_points(self, hz: Fraction) -> list[list[Any]] | None:
        """The phase-noise points at ``hz`` (raw offsets, levels scaled and rounded to 0.01 dB).

        Examples
        --------
        >>> xo = default_library().oscillator("xo")
        >>> xo.phase_noise_points(Fraction(50_000_000))[0]
        ['10 Hz', -78.98]
        """
        if self.phase_noise is None:
            return None
        shift = 20 * math.log10(float(hz / self.phase_noise_at)) if self.phase_noise_at else 0.0
        return [[offset, round(level + shift, 2)] for offset, level in self.phase_noise]

    def reference(self, part_id: str, hz: Fraction) -> Reference:
        """The board part: a reference at ``hz`` with this template's accuracy and phase noise."""
        from clockplan.jitter.parse import parse_phase_noise

        points = self.phase_noise_points(hz)
        profile = parse_phase_noise(points, f"{part_id}.phase_noise") if points else None
        return Reference(part_id, hz, self.kind, oscillator=self.spec, phase_noise=profile)


@dataclass(frozen=True, eq=False)
class PllTemplate:
    """A kind of PLL: the board file's [[pll]] constraints, an output count and divider set, power and cost."""

    name: str
    label: str
    mode: str
    vco: FrequencyRange
    pfd: FrequencyRange
    ref_divider: IntChoices
    feedback_min: Fraction
    feedback_max: Fraction
    denominator: Denominator | None
    input_range: FrequencyRange | None
    outputs: int
    output_divider: IntChoices
    loop: Any
    noise: Any
    power_w: Fraction
    cost: Fraction
    raw: Mapping[str, Any] = field(default_factory=dict)

    def part(self, part_id: str, input_id: str, output_names: Iterable[str]) -> Pll:
        """The board part: this template with an id, an input and named outputs.

        Examples
        --------
        >>> t = default_library().pll("int-synth-4")
        >>> t.part("pll1", "ref", ["out1", "out2"]).outputs[1].name
        'out2'
        """
        return Pll(
            id=part_id,
            input=input_id,
            vco=self.vco,
            pfd=self.pfd,
            ref_divider=self.ref_divider,
            feedback_min=self.feedback_min,
            feedback_max=self.feedback_max,
            mode=self.mode,  # type: ignore[arg-type]
            outputs=tuple(PllOutput(name, self.output_divider) for name in output_names),
            denominator=self.denominator,
            input_range=self.input_range,
            loop=self.loop,
            noise=self.noise,
        )

    def accepts_input(self, hz: Fraction) -> bool:
        """True if a reference at ``hz`` can drive this PLL (input range, and some R puts it in the PFD range)."""
        hz = Fraction(hz)
        if self.input_range is not None and hz not in self.input_range:
            return False
        return any(hz / r in self.pfd for r in _r_probe(self.ref_divider, hz, self.pfd))


def _r_probe(choices: IntChoices, hz: Fraction, pfd: FrequencyRange) -> list[int]:
    from clockplan.plan.choices import at_or_above, at_or_below
    from clockplan.plan.rational import ceil_fraction, floor_fraction

    return [r for r in (at_or_above(choices, max(1, ceil_fraction(hz / pfd.hi))), at_or_below(choices, floor_fraction(hz / pfd.lo))) if r]


@dataclass(frozen=True, eq=False)
class DividerTemplate:
    """A plain integer divider: its ratio choices, additive noise floor, power and cost."""

    name: str
    label: str
    ratio: IntChoices
    additive_noise: float | None
    power_w: Fraction
    cost: Fraction
    raw: Mapping[str, Any] = field(default_factory=dict)

    def part(self, part_id: str, input_id: str) -> Divider:
        """The board part."""
        return Divider(part_id, input_id, self.ratio, self.additive_noise)


@dataclass(frozen=True, eq=False)
class BufferTemplate:
    """A fanout buffer: how many loads it drives, its additive jitter, power and cost."""

    name: str
    label: str
    outputs: int
    additive_jitter: Any
    power_w: Fraction
    cost: Fraction
    raw: Mapping[str, Any] = field(default_factory=dict)

    def part(self, part_id: str, input_id: str) -> Buffer:
        """The board part."""
        return Buffer(part_id, input_id, self.outputs, self.additive_jitter)


@dataclass(frozen=True)
class PartsLibrary:
    """The templates synthesis may use, and the files they came from.

    Examples
    --------
    >>> lib = default_library()
    >>> [t.name for t in lib.plls][:2]
    ['int-synth-2', 'int-synth-4']
    >>> lib.restricted(["xo", "int-synth-4", "fanout-4", "divider"]).names()
    ['xo', 'int-synth-4', 'divider', 'fanout-4']
    """

    oscillators: tuple[OscillatorTemplate, ...] = ()
    plls: tuple[PllTemplate, ...] = ()
    dividers: tuple[DividerTemplate, ...] = ()
    buffers: tuple[BufferTemplate, ...] = ()
    sources: tuple[str, ...] = ()

    def names(self) -> list[str]:
        """Every template name, oscillators first."""
        return [t.name for group in self._groups() for t in group]

    def _groups(self) -> tuple[tuple[Any, ...], ...]:
        return (self.oscillators, self.plls, self.dividers, self.buffers)

    def _find(self, group: tuple[Any, ...], name: str) -> Any:
        for template in group:
            if template.name == name:
                return template
        raise KeyError(name)

    def oscillator(self, name: str) -> OscillatorTemplate:
        """The oscillator template called ``name``."""
        return self._find(self.oscillators, name)

    def pll(self, name: str) -> PllTemplate:
        """The PLL template called ``name``."""
        return self._find(self.plls, name)

    @cached_property
    def divider(self) -> DividerTemplate | None:
        """The divider template synthesis uses: the cheapest by (power, cost), then the widest range."""
        if not self.dividers:
            return None
        return min(self.dividers, key=lambda d: (d.power_w, d.cost, -(d.ratio.hi - d.ratio.lo), d.name))

    def merged(self, other: "PartsLibrary") -> "PartsLibrary":
        """This library with ``other``'s templates added; a template of the same name is replaced."""
        groups = []
        for mine, theirs in zip(self._groups(), other._groups()):
            names = {t.name for t in theirs}
            groups.append(tuple(t for t in mine if t.name not in names) + tuple(theirs))
        merged = PartsLibrary(*groups, sources=self.sources + other.sources)
        _check_unique_names(merged, other.sources[-1] if other.sources else None)
        return merged

    def restricted(self, allowed: Iterable[str], key: str = "synthesis.allow", file: str | None = None) -> "PartsLibrary":
        """Only the templates named in ``allowed``.

        Raises
        ------
        BoardError
            A name that is not in the library (with the closest names).
        """
        allowed = list(allowed)
        known = self.names()
        for name in allowed:
            if name not in known:
                raise BoardError(
                    f"no part template called {name!r}",
                    file=file,
                    key=key,
                    hint=did_you_mean(name, known) or "templates: " + ", ".join(known),
                )
        keep = set(allowed)
        groups = [tuple(t for t in group if t.name in keep) for group in self._groups()]
        return PartsLibrary(*groups, sources=self.sources)


# --------------------------------------------------------------------------- reading


def _cost(value: Any) -> Fraction:
    cost = parse_ratio(value)
    if cost < 0:
        raise BoardError(f"cost {value!r} is negative", hint="cost is a relative figure of 0 or more")
    return cost


def _power(value: Any) -> Fraction:
    watts = parse_quantity(value, "W")
    if watts < 0:
        raise BoardError(f"power {value!r} is negative", hint='write the steady supply power, e.g. "0.35 W"')
    return watts


def _name(value: Any) -> str:
    text = nonempty_text(value)
    if not ID_PATTERN.match(text):
        raise BoardError(f"invalid template name {text!r}", hint="start with a letter; use letters, digits, '_' or '-'")
    return text


def _frequencies(value: Any) -> tuple[Fraction, ...]:
    if not isinstance(value, list) or not value:
        raise BoardError("expected a non-empty array of frequencies", hint='write frequencies = ["25 MHz", "50 MHz"]')
    return tuple(dict.fromkeys(parse_frequency(v) for v in value))


def _common(reader: TableReader) -> tuple[str, str]:
    name = reader.get("name", _name)
    label = reader.get("label", nonempty_text, name)
    reader.raw("description")
    return name, label


def _grades() -> dict[str, dict[str, Any]]:
    text = resources.files("clockplan").joinpath("data/oscillator_grades.toml").read_text(encoding="utf-8")
    return {entry["name"]: entry for entry in tomllib.loads(text).get("grade", [])}


def _read_oscillator(reader: TableReader) -> OscillatorTemplate:
    from clockplan.jitter.parse import parse_phase_noise
    from clockplan.ppm.parse import parse_oscillator_spec

    name, label = _common(reader)
    grade = reader.get("grade", nonempty_text, None)
    given = [k for k in _ACCURACY_KEYS if reader.has(k)]
    if grade is not None and given:
        raise reader.error(given[0], f"'{given[0]}' and 'grade' are both given", "take the grade's typical figures, or write them all here")
    if grade is not None:
        grades = _grades()
        if grade not in grades:
            raise reader.error("grade", f"unknown grade {grade!r}", did_you_mean(grade, grades) or "grades: " + ", ".join(grades))
        accuracy = {k: v for k, v in grades[grade].items() if k not in ("name", "label", "note")}
    else:
        accuracy = {k: reader.raw(k) for k in given}
    for key in _ACCURACY_KEYS:
        reader.raw(key)
    spec = located(reader, lambda: parse_oscillator_spec(accuracy, reader.key))
    if spec.power is None:
        raise reader.error(None, "an oscillator template needs its power", 'add power = { warmup = "20 mW", steady = "20 mW", warmup_time = "10 ms" }')
    phase_noise = reader.raw("phase_noise")
    points = None
    if phase_noise is not None:
        located(reader, lambda: parse_phase_noise(phase_noise, reader.path("phase_noise")))
        if not isinstance(phase_noise, list):
            raise reader.error("phase_noise", "a template's phase noise is a list of [offset, level] points", 'write phase_noise = [["1 kHz", -135], ...]')
        points = tuple((p[0], parse_dbc(p[1])) for p in phase_noise)
    at = reader.get("phase_noise_at", parse_frequency, None)
    if points is not None and at is None:
        raise reader.error("phase_noise_at", "missing key 'phase_noise_at'", 'say at which frequency the phase noise is given, e.g. phase_noise_at = "25 MHz"')
    return OscillatorTemplate(
        name=name,
        label=label,
        kind=spec.kind,
        frequencies=reader.get("frequencies", _frequencies),
        accuracy=accuracy,
        spec=spec,
        outputs=reader.get("outputs", whole_number, 1),
        power_w=Fraction(spec.power.steady_w),
        cost=reader.get("cost", _cost),
        phase_noise=points,
        phase_noise_at=at,
        grade=grade,
    )


def _read_pll(reader: TableReader) -> PllTemplate:
    from clockplan.jitter.parse import parse_loop, parse_pll_noise

    name, label = _common(reader)
    mode = reader.get("mode", pll_mode, "integer")
    n_lo, n_hi = reader.get("n", lambda v: tuple(parse_ratio(x) for x in min_max_pair(v, "[16, 4095]")))
    if not 0 < n_lo <= n_hi:
        raise reader.error("n", f"N range {n_lo}..{n_hi} must be positive and ascending")
    loop = reader.raw("loop")
    noise = reader.raw("noise")
    template = PllTemplate(
        name=name,
        label=label,
        mode=mode,
        vco=reader.get("vco", frequency_range),
        pfd=reader.get("pfd", frequency_range),
        ref_divider=reader.get("r", int_choices, IntChoices(1, 1)),
        feedback_min=n_lo,
        feedback_max=n_hi,
        denominator=read_denominator(reader, mode),
        input_range=reader.get("input_range", frequency_range, None),
        outputs=reader.get("outputs", whole_number),
        output_divider=reader.get("output_divider", int_choices),
        loop=located(reader, lambda: parse_loop(loop, reader.path("loop"))) if loop is not None else None,
        noise=located(reader, lambda: parse_pll_noise(noise, reader.path("noise"))) if noise is not None else None,
        power_w=reader.get("power", _power),
        cost=reader.get("cost", _cost),
        raw={k: reader.table[k] for k in _PLL_PART_KEYS if k in reader.table},
    )
    return template


def _read_divider(reader: TableReader) -> DividerTemplate:
    from clockplan.jitter.parse import parse_additive_noise

    name, label = _common(reader)
    noise = reader.raw("additive_noise")
    return DividerTemplate(
        name=name,
        label=label,
        ratio=reader.get("ratio", int_choices),
        additive_noise=located(reader, lambda: parse_additive_noise(noise, reader.path("additive_noise"))) if noise is not None else None,
        power_w=reader.get("power", _power),
        cost=reader.get("cost", _cost),
        raw={k: reader.table[k] for k in ("additive_noise",) if k in reader.table},
    )


def _read_buffer(reader: TableReader) -> BufferTemplate:
    from clockplan.jitter.parse import parse_additive_jitter

    name, label = _common(reader)
    jitter = reader.raw("additive_jitter")
    band = reader.raw("additive_jitter_band")
    additive = None
    if jitter is not None:
        additive = located(reader, lambda: parse_additive_jitter(jitter, reader.path("additive_jitter"), band, reader.path("additive_jitter_band")))
    outputs = reader.get("outputs", lambda v: whole_number(v, 2))
    return BufferTemplate(
        name=name,
        label=label,
        outputs=outputs,
        additive_jitter=additive,
        power_w=reader.get("power", _power),
        cost=reader.get("cost", _cost),
        raw={k: reader.table[k] for k in ("additive_jitter", "additive_jitter_band") if k in reader.table},
    )


_READERS = {"oscillator": _read_oscillator, "pll": _read_pll, "divider": _read_divider, "buffer": _read_buffer}


def parse_library(text: str, file: str | None = None) -> PartsLibrary:
    """Read a parts library from TOML text.

    Raises
    ------
    BoardError
        Invalid TOML, an unknown section or key, a bad value, or two templates
        with one name; located by file, key path and line.

    Examples
    --------
    >>> lib = parse_library('[[buffer]]\\nname = "fan"\\noutputs = 4\\npower = "0.1 W"\\ncost = 1\\n')
    >>> lib.buffers[0].outputs
    4
    """
    doc, ctx = read_document(text, file, _SECTIONS)
    groups = []
    for section in _SECTIONS:
        entries = doc.get(section, [])
        if not isinstance(entries, list):
            raise ctx.error(section, f"'{section}' must be an array of tables", f"write each one under [[{section}]]")
        templates = []
        for index, table in enumerate(entries):
            reader = TableReader(table, f"{section}[{index}]", ctx)
            templates.append(_READERS[section](reader))
            reader.finish()
        groups.append(tuple(templates))
    library = PartsLibrary(*groups, sources=(file or "<text>",))
    _check_unique_names(library, file)
    return library


def _check_unique_names(library: PartsLibrary, file: str | None) -> None:
    seen: set[str] = set()
    for name in library.names():
        if name in seen:
            raise BoardError(f"two part templates are called {name!r}", file=file, hint="give every template its own name")
        seen.add(name)


def load_library(path: str | Path) -> PartsLibrary:
    """Read a user library file.

    Examples
    --------
    >>> default_library().merged(load_library("my-parts.toml"))  # doctest: +SKIP
    """
    text = read_text_file(path, "library file")
    return parse_library(text, str(path))


_DEFAULT: list[PartsLibrary] = []


def default_library() -> PartsLibrary:
    """The shipped templates (typical figures, common practice), read once."""
    if not _DEFAULT:
        text = resources.files("clockplan").joinpath("data/parts_library.toml").read_text(encoding="utf-8")
        _DEFAULT.append(parse_library(text, "clockplan/data/parts_library.toml"))
    return _DEFAULT[0]
