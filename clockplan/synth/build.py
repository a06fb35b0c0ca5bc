"""Turning a tree into parts: ids, connections, buffers and dividers; then a Board or board-file text.

:func:`tree_parts` lays the tree out once (every part with its id, template
and input; every consumer with its source). From that one description
:func:`parts_board` builds the domain model for the planner and the analysis,
and :func:`parts_text` writes a complete board file with every section (the
PLL settings are filled in afterwards by the planner,
``clockplan.plan.boardwrite.write_settings``). The written file is what
``plan`` and ``audit`` read; verification parses it back, so the two can
never drift apart unnoticed.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Hashable, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

from clockplan.boardfile import unstated_conditions
from clockplan.parts import Board
from clockplan.synth.layout import Fan
from clockplan.synth.library import TYPICAL_NOTE, BufferTemplate, DividerTemplate, OscillatorTemplate, PllTemplate
from clockplan.tomlwrite import toml_table, toml_value
from clockplan.synth.tree import Block, MainReference, Problem, Tree, short_frequency
from clockplan.units import format_frequency

__all__ = ["PartSpec", "TreeParts", "tree_parts", "parts_board", "parts_text", "frequency_text"]


@dataclass(frozen=True)
class PartSpec:
    """One part of a laid-out tree.

    ``role`` is ``reference``, ``pll``, ``divider`` or ``buffer``; ``template``
    the library template (or a :class:`MainReference` for the main reference);
    ``hz`` a reference's frequency; ``outputs`` a PLL's output names;
    ``ratio`` a divider's pinned ratio (None: the planner chooses it);
    ``note`` the description written to the file.
    """

    role: str
    id: str
    input: str | None
    template: Any
    hz: Fraction | None = None
    outputs: tuple[str, ...] = ()
    ratio: int | None = None
    note: str = ""


@dataclass
class TreeParts:
    """Every part of a tree with its id and input, and the source of every consumer."""

    parts: list[PartSpec] = field(default_factory=list)
    sources: dict[str, str] = field(default_factory=dict)

    def of_role(self, role: str) -> list[PartSpec]:
        """The parts of one role, in the order they were made."""
        return [p for p in self.parts if p.role == role]


class _Ids:
    """Fresh part ids that never collide with the consumers' own."""

    def __init__(self, taken: Sequence[str]) -> None:
        self.taken = set(taken)
        self.counters: dict[str, int] = {}

    def fixed(self, name: str) -> str:
        self.taken.add(name)
        return name

    def new(self, prefix: str, numbered: bool = True) -> str:
        while True:
            if numbered:
                self.counters[prefix] = self.counters.get(prefix, 0) + 1
                name = f"{prefix}{self.counters[prefix]}"
            else:
                name, numbered = prefix, True
            if name not in self.taken:
                self.taken.add(name)
                return name


class _Builder:
    def __init__(self, problem: Problem, tree: Tree) -> None:
        self.problem = problem
        self.tree = tree
        taken = [c.id for c in problem.spec.consumers]
        self.ids = _Ids(taken)
        self.out = TreeParts()
        self.divider: DividerTemplate | None = problem.library.divider

    # ----------------------------------------------------------------- fan-out

    def connect(self, source: str, loads: Sequence[Hashable], fan: Fan) -> dict[Hashable, str]:
        """Give each load a node to take its clock from, inserting ``fan``'s chain of buffers."""
        if len(loads) <= 1 or fan.buffer is None:
            return {load: source for load in loads}
        buffer: BufferTemplate = fan.buffer
        where: dict[Hashable, str] = {}
        rest = list(loads)
        current = source
        for index in range(fan.count):
            bid = self.ids.new("fan")
            self.out.parts.append(PartSpec("buffer", bid, current, buffer, note=f"{buffer.name}: {buffer.label}"))
            last = index == fan.count - 1
            take = len(rest) if last else buffer.outputs - 1
            for load in rest[:take]:
                where[load] = bid
            rest = rest[take:]
            current = bid
        return where

    def place(self, node: str, load: Hashable) -> None:
        """Connect one load (a consumer or a pending part) to ``node``."""
        kind, key = load  # type: ignore[misc]
        if kind == "consumer":
            self.out.sources[key] = node
        else:
            self.pending[load] = node

    def new_divider(self, node: str, ratio: int | None, why: str) -> str:
        assert self.divider is not None
        did = self.ids.new("div")
        self.out.parts.append(PartSpec("divider", did, node, self.divider, ratio=ratio, note=f"{self.divider.name}: {why}"))
        return did

    # ----------------------------------------------------------------- the tree

    def build(self) -> TreeParts:
        self.pending: dict[Hashable, str] = {}
        tree = self.tree
        if tree.uses_reference:
            assert tree.reference is not None
            self.main_reference(tree.reference)
        for index, block in enumerate(tree.blocks):
            if block.is_pll:
                self.pll_block(index, block)
            else:
                self.oscillator_block(block)
        for direct in tree.direct:
            self.direct_class(direct.cls, direct.ratio)
        return self.out

    def main_reference(self, reference: MainReference) -> None:
        tree, problem = self.tree, self.problem
        if reference.fixed is not None:
            rid = self.ids.fixed(reference.fixed.id)
            note = "the board's fixed reference"
        else:
            rid = self.ids.new(f"ref_{short_frequency(reference.hz)}", numbered=False)
            note = f"{reference.template.name}: {reference.template.label}"
        self.out.parts.append(PartSpec("reference", rid, None, reference, hz=reference.hz, note=note))
        loads: list[Hashable] = [("pll", i) for i, b in enumerate(tree.blocks) if b.is_pll]
        for direct in tree.direct:
            consumers = problem.classes[direct.cls].consumers
            loads += [("consumer", c) for c in consumers] if direct.ratio == 1 else [("direct", direct.cls)]
        direct_outputs = min(len(loads), reference.outputs) - (1 if len(loads) > reference.outputs else 0)
        for load in loads[:direct_outputs]:
            self.place(rid, load)
        fan = problem.reference_fan(len(loads), reference.outputs)
        assert fan is not None
        for load, node in self.connect(rid, loads[direct_outputs:], fan).items():
            self.place(node, load)

    def _own_loads(self, block: Block, cls: int) -> list[Hashable]:
        consumers = [("consumer", c) for c in self.problem.classes[cls].consumers]
        return consumers + [("attached", child) for child, parent, _ in block.attached if parent == cls]

    def _serve_block(self, block: Block, output_node) -> None:
        """Connect each own class's loads to its outputs, then the attached dividers."""
        layout = self.problem.layout(block.kind, block.own, block.attached)
        assert layout is not None
        for plan in layout.own:
            loads = self._own_loads(block, plan.cls)
            nodes = [output_node(plan.cls) for _ in range(plan.outputs)]
            extra = plan.outputs - 1
            for node, load in zip(nodes[1:], loads[:extra]):
                self.place(node, load)
            primary = nodes[0]
            if plan.low:
                hz = format_frequency(self.problem.classes[plan.cls].frequency)
                ratio = self.problem.compat.low_ratio(block.kind, plan.cls)
                primary = self.new_divider(primary, ratio, f"divides an output down to {hz}")
            for load, node in self.connect(primary, loads[extra:], plan.fan).items():
                self.place(node, load)
        for attach in layout.attached:
            hz = format_frequency(self.problem.classes[attach.cls].frequency)
            did = self.new_divider(self.pending.pop(("attached", attach.cls)), attach.ratio, f"{hz} divided down from {format_frequency(self.problem.classes[attach.parent].frequency)}")
            consumers = [("consumer", c) for c in self.problem.classes[attach.cls].consumers]
            for load, node in self.connect(did, consumers, attach.fan).items():
                self.place(node, load)

    def pll_block(self, index: int, block: Block) -> None:
        template: PllTemplate = block.kind
        pid = self.ids.new("pll")
        names: list[str] = []

        def output_node(cls: int) -> str:
            names.append(f"out{len(names) + 1}")
            return f"{pid}.{names[-1]}"

        spec_index = len(self.out.parts)
        self._serve_block(block, output_node)
        used = f"{len(names)} of {template.outputs} outputs used"
        self.out.parts.insert(
            spec_index,
            PartSpec("pll", pid, self.pending.pop(("pll", index)), template, outputs=tuple(names), note=f"{template.name}: {template.label}; {used}"),
        )

    def oscillator_block(self, block: Block) -> None:
        template: OscillatorTemplate = block.kind
        hz = self.problem.classes[block.own[0]].frequency
        oid = self.ids.new(f"osc_{short_frequency(hz)}", numbered=False)
        self.out.parts.append(PartSpec("reference", oid, None, template, hz=hz, note=f"{template.name}: {template.label}"))
        self._serve_block(block, lambda cls: oid)

    def direct_class(self, cls: int, ratio: int) -> None:
        if ratio == 1:
            return
        hz = format_frequency(self.problem.classes[cls].frequency)
        did = self.new_divider(self.pending.pop(("direct", cls)), ratio, f"{hz} divided down from the reference")
        consumers = [("consumer", c) for c in self.problem.classes[cls].consumers]
        fan = self.problem.reference_fan(len(consumers))
        assert fan is not None
        for load, node in self.connect(did, consumers, fan).items():
            self.place(node, load)


def tree_parts(problem: Problem, tree: Tree) -> TreeParts:
    """Lay a tree out as parts with ids and inputs, and a source for every consumer of the tree.

    Examples
    --------
    >>> parts = tree_parts(problem, tree)  # doctest: +SKIP
    >>> [p.id for p in parts.of_role("pll")]  # doctest: +SKIP
    ['pll1', 'pll2']
    """
    return _Builder(problem, tree).build()


# --------------------------------------------------------------------------- the domain model


def parts_board(problem: Problem, parts: TreeParts, name: str | None = None) -> Board:
    """The :class:`~clockplan.parts.Board` of laid-out parts (only the consumers they serve)."""
    references, plls, dividers, buffers = [], [], [], []
    pins: dict[str, dict[str, Any]] = {}
    for part in parts.parts:
        if part.role == "reference":
            template = part.template
            if isinstance(template, MainReference):
                references.append(template.fixed if template.fixed is not None else template.template.reference(part.id, part.hz))
            else:
                references.append(template.reference(part.id, part.hz))
        elif part.role == "pll":
            plls.append(part.template.part(part.id, part.input, part.outputs))
            pins[part.id] = {}
        elif part.role == "divider":
            dividers.append(part.template.part(part.id, part.input))
            pins[part.id] = {"ratio": part.ratio} if part.ratio is not None else {}
        else:
            buffers.append(part.template.part(part.id, part.input))
    consumers = tuple(dataclasses.replace(c, source=parts.sources[c.id]) for c in problem.spec.consumers if c.id in parts.sources)
    spec = problem.spec
    return Board(
        name=name or spec.name,
        temperature_c=spec.temperature_c,
        lifetime_s=spec.lifetime_s,
        unstated=unstated_conditions(spec.raw_board),
        references=tuple(references),
        plls=tuple(plls),
        dividers=tuple(dividers),
        buffers=tuple(buffers),
        consumers=consumers,
        pins=pins,
    )


# --------------------------------------------------------------------------- board-file text


def frequency_text(hz: Fraction) -> str:
    """An exact frequency as board-file text: ``"25 MHz"``, ``"32.768 kHz"``, or ``"p/q Hz"``.

    Examples
    --------
    >>> frequency_text(Fraction(24_576_000)), frequency_text(Fraction(32768)), frequency_text(Fraction(1, 3))
    ('24.576 MHz', '32.768 kHz', '1/3 Hz')
    """
    for scale, unit in ((10**9, "GHz"), (10**6, "MHz"), (10**3, "kHz"), (1, "Hz")):
        if hz >= scale or scale == 1:
            value = hz / scale
            for digits in range(0, 10):
                scaled = value * 10**digits
                if scaled.denominator == 1:
                    whole, part = divmod(scaled.numerator, 10**digits)
                    return f"{whole}.{str(part).rjust(digits, '0')} {unit}" if digits else f"{whole} {unit}"
            break
    return f"{hz.numerator}/{hz.denominator} Hz"


def _reference_items(part: PartSpec) -> list[tuple[str, Any]]:
    template = part.template
    if isinstance(template, MainReference) and template.fixed is not None:
        raw = dict(template.raw or {})
        raw.pop("id", None)
        return [("id", part.id)] + list(raw.items())
    osc: OscillatorTemplate = template.template if isinstance(template, MainReference) else template
    items: list[tuple[str, Any]] = [
        ("id", part.id),
        ("description", f"{part.note}; {TYPICAL_NOTE}"),
        ("frequency", frequency_text(part.hz)),
        ("kind", osc.kind),
    ]
    items += [(k, v) for k, v in osc.accuracy.items() if k != "kind"]
    items.append(("phase_noise", osc.phase_noise_points(part.hz)))
    return items


def parts_text(problem: Problem, parts: TreeParts, header: Sequence[str] = ()) -> str:
    """A complete board file for laid-out parts (PLL settings left for the planner).

    Examples
    --------
    >>> print(parts_text(problem, tree_parts(problem, tree)))  # doctest: +SKIP
    """
    spec = problem.spec
    lines = [f"# {line}" if line else "#" for line in header]
    board_items = [("name", spec.name)] + [(k, v) for k, v in spec.raw_board.items() if k != "name"]
    lines += ["", *toml_table("board", board_items, array=False)]
    for role in ("reference", "pll", "divider", "buffer"):
        for part in parts.of_role(role):
            lines.append("")
            if role == "reference":
                lines += toml_table("reference", _reference_items(part))
            elif role == "pll":
                lines += _pll_lines(part)
            elif role == "divider":
                lines += _divider_lines(part)
            else:
                lines += _buffer_lines(part)
    for consumer, raw in zip(spec.consumers, spec.raw_consumers):
        if consumer.id not in parts.sources:
            continue
        items = [("id", consumer.id), ("source", parts.sources[consumer.id])] + [(k, v) for k, v in raw.items() if k != "id"]
        lines += ["", *toml_table("consumer", items)]
    return "\n".join(lines).lstrip("\n") + "\n"


def _pll_lines(part: PartSpec) -> list[str]:
    template: PllTemplate = part.template
    head = [("id", part.id), ("description", f"{part.note}; {TYPICAL_NOTE}"), ("input", part.input)]
    head += [(k, v) for k, v in template.raw.items() if k not in ("loop", "noise")]
    lines = toml_table("pll", head)
    divider = _choices_value(template.output_divider)
    lines += [f"outputs.{name} = {toml_value({'divider': divider})}" for name in part.outputs]
    for key in ("loop", "noise"):
        if key in template.raw:
            lines.append(f"{key} = {toml_value(template.raw[key])}")
    return lines


def _choices_value(choices) -> Any:
    if choices.values is not None:
        return {"values": list(choices.values)}
    if choices.step != 1:
        return {"min": choices.lo, "max": choices.hi, "step": choices.step}
    return [choices.lo, choices.hi]


def _divider_lines(part: PartSpec) -> list[str]:
    template: DividerTemplate = part.template
    items = [
        ("id", part.id),
        ("description", f"{part.note}; {TYPICAL_NOTE}"),
        ("input", part.input),
        ("ratio", _choices_value(template.ratio)),
        ("settings", {"ratio": part.ratio} if part.ratio is not None else None),
    ]
    return toml_table("divider", items + list(template.raw.items()))


def _buffer_lines(part: PartSpec) -> list[str]:
    template: BufferTemplate = part.template
    items = [("id", part.id), ("description", f"{part.note}; {TYPICAL_NOTE}"), ("input", part.input), ("outputs", template.outputs)]
    return toml_table("buffer", items + list(template.raw.items()))
