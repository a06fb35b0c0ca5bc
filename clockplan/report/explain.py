"""``clockplan explain``: why one consumer passes or fails, stage by stage.

Three waterfalls, each in the order the signal travels:

* **frequency** -- every stage of the exact chain (``graph.chain_to``) with
  what it does (÷R, ×N, ÷D...) and the exact frequency after it, ending with
  the target and the exact synthesis error;
* **frequency error** -- the terms of the consumer's worst case as the accuracy
  result lists them (reference terms, the synthesis error, cross terms of the
  cascade), with a running total: numbers add, ranges add end to end (a
  worst-case stack-up, common practice); without accuracy data, the exact
  synthesis error alone;
* **jitter** -- each contributor's RMS jitter with a running root-sum-square
  (uncorrelated noise sources add in power, common practice) and its share of
  the total variance.

The error and jitter rows come from the budget results through their
``contributions`` hook (documented in ``DEVELOPERS.md``): a sequence, or a
method returning one, of ``(stage, amount)`` rows. ``amount`` is SI (a
fractional error, or seconds of RMS jitter), a ``(low, high)`` range, or text;
an object with ``name``, ``low`` and ``high`` counts as a range row. The
budget results' own ``table_cells()`` give the authoritative totals.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from clockplan.analysis import CAVEAT, Analysis, ConsumerResult
from clockplan.errors import ClockplanError, did_you_mean
from clockplan.findings import Finding, Severity
from clockplan.report.content import Column, TextTable, consumer_margins, consumer_status, extra_cells
from clockplan.units import format_exact, format_frequency, format_ppm, format_time

if TYPE_CHECKING:
    from rich.console import Console

__all__ = [
    "ChainStage",
    "WaterfallRow",
    "Explanation",
    "contribution_rows",
    "explain",
    "chain_table",
    "accuracy_table",
    "jitter_table",
    "explanation_findings_table",
    "explanation_facts",
    "render_explanation",
    "explanation_markdown",
    "explanation_document",
    "explanation_fails",
]


@dataclass(frozen=True)
class ChainStage:
    """One step of the exact frequency chain: what it does and the frequency after it."""

    node: str
    role: str
    operation: str
    frequency_hz: Fraction | None


@dataclass(frozen=True)
class WaterfallRow:
    """One contribution: the stage, what it adds, the running total after it, and its share.

    The text columns are for people; ``amount`` and ``total`` keep the SI values
    (a number, or a ``(low, high)`` range) for the JSON document.
    """

    stage: str
    adds: str
    running: str
    share: str = ""
    amount: Any = None
    total: Any = None


@dataclass(frozen=True)
class Explanation:
    """Everything ``explain`` shows for one consumer."""

    analysis: Analysis
    consumer: ConsumerResult
    status: str
    stages: tuple[ChainStage, ...]
    accuracy_rows: tuple[WaterfallRow, ...]
    jitter_rows: tuple[WaterfallRow, ...]
    findings: tuple[Finding, ...]
    notes: tuple[str, ...]

    @property
    def budget_cells(self) -> dict[str, str]:
        """The consumer's budget columns as the budget results give them (their totals)."""
        return extra_cells(self.consumer)


# --------------------------------------------------------------------------- the chain


def _pll_stages(analysis: Analysis, node: str) -> list[ChainStage]:
    point = analysis.frequencies.plls.get(node)
    if point is None:
        return [ChainStage(node, "PLL", "unset: no R/N given", None)]
    setting = point.setting
    return [
        ChainStage(node, "PLL input divider", f"÷ R = {setting.r}  (PFD)", point.pfd_hz),
        ChainStage(node, "PLL feedback", f"× N = {format_exact(setting.n)}  (VCO)", point.vco_hz),
    ]


def _stage(analysis: Analysis, node: str, role: str) -> ChainStage:
    hz = analysis.frequencies.nodes.get(node)
    if role == "reference":
        return ChainStage(node, "reference", f"source ({analysis.board.part(node).kind})", hz)
    if role == "pll_output":
        pll, output = node.split(".", 1)
        setting = analysis.settings.plls.get(pll)
        divider = setting.dividers.get(output) if setting else None
        return ChainStage(node, "PLL output", f"÷ D = {divider}" if divider else "unset divider", hz)
    if role == "divider":
        ratio = analysis.settings.dividers.get(node)
        return ChainStage(node, "divider", f"÷ {ratio}" if ratio else "unset ratio", hz)
    if role == "buffer":
        return ChainStage(node, "fanout buffer", "× 1 (copy)", hz)
    return ChainStage(node, "consumer", "receives", hz)


def _chain_stages(analysis: Analysis, consumer: ConsumerResult) -> list[ChainStage]:
    graph = analysis.graph
    stages: list[ChainStage] = []
    for node in (*consumer.chain, consumer.id):
        role = graph.nodes[node]["role"]
        stages += _pll_stages(analysis, node) if role == "pll" else [_stage(analysis, node, role)]
    return stages


# --------------------------------------------------------------------------- contributions


def contribution_rows(budget: Any) -> list[tuple[str, Any]]:
    """The ``(stage, amount)`` rows a budget result offers through its ``contributions`` hook.

    Examples
    --------
    >>> class Jitter:
    ...     contributions = (("reference", 2e-13), ("PLL", 1e-13))
    >>> contribution_rows(Jitter())
    [('reference', 2e-13), ('PLL', 1e-13)]
    """
    source = getattr(budget, "contributions", None) if budget is not None else None
    if source is None:
        return []
    if callable(source):
        source = source()
    rows: list[tuple[str, Any]] = []
    for item in source:
        if isinstance(item, (tuple, list)) and len(item) >= 2:
            rows.append((str(item[0]), item[1]))
        elif hasattr(item, "name") and hasattr(item, "low") and hasattr(item, "high"):
            rows.append((str(item.name), (item.low, item.high)))
        else:
            rows.append((str(item), "-"))
    return rows


def _as_range(amount: Any) -> tuple[Any, Any] | None:
    if isinstance(amount, (tuple, list)) and len(amount) == 2:
        return amount[0], amount[1]
    if isinstance(amount, (int, float, Fraction)) and not isinstance(amount, bool):
        return amount, amount
    return None


def _ppm_range(low: Any, high: Any) -> str:
    if low == high:
        return format_ppm(low)
    if low == -high:
        return f"±{format_ppm(high).lstrip('+')}"
    return f"{format_ppm(low)} .. {format_ppm(high)}"


def _accuracy_rows(consumer: ConsumerResult) -> list[WaterfallRow]:
    """The budget result's own rows (they include the synthesis error), or the synthesis error alone."""
    offered = contribution_rows(consumer.accuracy)
    if not offered and consumer.synthesis_error is not None:
        error = consumer.synthesis_error
        stage = "synthesis: PLLs and dividers" + (f" (exact {format_exact(error)})" if error else " (exact)")
        offered = [(stage, error)]
    rows = []
    low: Any = Fraction(0)
    high: Any = Fraction(0)
    for stage, amount in offered:
        span = _as_range(amount)
        if span is None:
            rows.append(WaterfallRow(stage, str(amount), "-"))
            continue
        low, high = low + span[0], high + span[1]
        rows.append(WaterfallRow(stage, _ppm_range(*span), _ppm_range(low, high), amount=span, total=(low, high)))
    return rows


def _jitter_rows(consumer: ConsumerResult) -> list[WaterfallRow]:
    numeric = [(stage, amount) for stage, amount in contribution_rows(consumer.jitter)]
    total_power = sum(float(a) ** 2 for _, a in numeric if isinstance(a, (int, float)))
    rows, power = [], 0.0
    for stage, amount in numeric:
        if not isinstance(amount, (int, float)) or isinstance(amount, bool):
            rows.append(WaterfallRow(stage, str(amount), "-"))
            continue
        power += float(amount) ** 2
        share = f"{float(amount) ** 2 / total_power * 100:.3g} %" if total_power > 0 else "-"
        rows.append(WaterfallRow(stage, format_time(float(amount)), format_time(math.sqrt(power)), share,
                                 amount=float(amount), total=math.sqrt(power)))
    return rows


def _chain_findings(analysis: Analysis, consumer: ConsumerResult) -> tuple[Finding, ...]:
    # With the board-wide ones (node: the board's name), e.g. a Monte Carlo stopped at its time limit.
    nodes = {*consumer.chain, consumer.id, analysis.board.name}
    return tuple(sorted((f for f in analysis.findings if f.node in nodes), key=lambda f: -f.severity.rank))


def _notes(consumer: ConsumerResult) -> list[str]:
    notes = []
    if consumer.accuracy is None:
        notes.append("No reference accuracy data on this chain: only the exact synthesis error is counted. "
                     "Give the reference's tolerance, temperature and aging (docs/frequency-accuracy.md).")
    if consumer.jitter is None:
        notes.append("No jitter data on this chain: give phase noise for the reference and PLLs and a "
                     "jitter budget for the consumer (docs/jitter.md).")
    for budget in (consumer.accuracy, consumer.jitter):
        for attribute in ("notes", "note"):
            value = getattr(budget, attribute, None) if budget is not None else None
            for text in ([value] if isinstance(value, str) else value or ()):
                # The general caveat closes every report already; repeat only what is specific.
                if text and text not in notes and not str(text).startswith("Budgets are planning estimates"):
                    notes.append(str(text))
    return notes


def explain(analysis: Analysis, consumer_id: str) -> Explanation:
    """The full explanation of one consumer's result.

    Raises
    ------
    ClockplanError
        ``consumer_id`` is not a consumer of the board (the hint suggests the nearest).

    Examples
    --------
    >>> e = explain(analyze(load_board("boards/video-converter.toml")), "audio_codec")  # doctest: +SKIP
    >>> e.status, e.stages[-1].frequency_hz  # doctest: +SKIP
    ('FAIL', Fraction(12285000, 1))
    """
    ids = [c.id for c in analysis.consumers]
    if consumer_id not in ids:
        hint = did_you_mean(consumer_id, ids) or "consumers: " + ", ".join(ids)
        raise ClockplanError(f"no consumer {consumer_id!r} on board {analysis.board.name!r}", hint=hint)
    consumer = analysis.consumer(consumer_id)
    return Explanation(
        analysis=analysis,
        consumer=consumer,
        status=consumer_status(analysis, consumer_id),
        stages=tuple(_chain_stages(analysis, consumer)),
        accuracy_rows=tuple(_accuracy_rows(consumer)),
        jitter_rows=tuple(_jitter_rows(consumer)),
        findings=_chain_findings(analysis, consumer),
        notes=tuple(_notes(consumer)),
    )


# --------------------------------------------------------------------------- tables


def _headline(explanation: Explanation) -> str:
    consumer = explanation.consumer
    if consumer.actual_hz is None:
        return f"{explanation.status}: the chain is not fully set, so no frequency reaches it"
    text = f"{explanation.status}: {format_frequency(consumer.actual_hz)} for a {format_frequency(consumer.target_hz)} target"
    if consumer.synthesis_error is not None:
        text += f", synthesis error {format_ppm(consumer.synthesis_error)}"
    margins = consumer_margins(explanation.analysis, consumer)
    if margins:
        text += "; " + "; ".join(f"{m.kind}: {m.describe}" for m in margins)
    return text


def chain_table(explanation: Explanation) -> TextTable:
    """The exact frequency waterfall: each stage, its operation, the frequency after it."""
    rows = [(str(i), s.node, s.role, s.operation, format_frequency(s.frequency_hz) if s.frequency_hz else "unset")
            for i, s in enumerate(explanation.stages, 1)]
    consumer = explanation.consumer
    reference_hz = explanation.stages[0].frequency_hz
    if consumer.actual_hz is not None and reference_hz:
        ratio = consumer.actual_hz / reference_hz
        rows.append(("", "overall", "", f"× {format_exact(ratio)} from the reference", format_frequency(consumer.actual_hz)))
    rows.append(("", "target", "", "asked for", format_frequency(consumer.target_hz)))
    if consumer.synthesis_error is not None:
        rows.append(("", "synthesis error", "", f"exact {format_exact(consumer.synthesis_error)}",
                     format_ppm(consumer.synthesis_error)))
    columns = (Column("#", "right"), Column("stage"), Column("role"), Column("operation"), Column("frequency", "right"))
    return TextTable("Frequency chain (exact)", columns, tuple(rows))


def _waterfall_table(title: str, rows: tuple[WaterfallRow, ...], with_share: bool) -> TextTable:
    columns = [Column("#", "right"), Column("stage"), Column("adds", "right"), Column("running total", "right")]
    if with_share:
        columns.append(Column("share of variance", "right"))
    body = tuple((str(i), r.stage, r.adds, r.running, *([r.share] if with_share else []))
                 for i, r in enumerate(rows, 1))
    return TextTable(title, tuple(columns), body)


def accuracy_table(explanation: Explanation) -> TextTable:
    """The frequency-error waterfall: reference terms, then synthesis, running worst case."""
    return _waterfall_table("Frequency error, worst case (what adds how much, in order)", explanation.accuracy_rows, False)


def jitter_table(explanation: Explanation) -> TextTable | None:
    """The jitter waterfall (running root-sum-square), or None without jitter data."""
    if not explanation.jitter_rows:
        return None
    return _waterfall_table("Jitter, RMS (adds as root-sum-square)", explanation.jitter_rows, True)


def _budget_table(explanation: Explanation) -> TextTable | None:
    cells = explanation.budget_cells
    if not cells:
        return None
    return TextTable("Budget results", (Column("quantity"), Column("value", "right")), tuple(cells.items()))


def explanation_findings_table(explanation: Explanation) -> TextTable | None:
    """The findings on the consumer, every part of its chain and the board as a whole, most serious first."""
    if not explanation.findings:
        return None
    rows = tuple((f.severity.value, f.code, f.node, f.message) for f in explanation.findings)
    columns = (Column("severity"), Column("code"), Column("part"), Column("message"))
    return TextTable("Findings on this chain", columns, rows, status_column=0)


def _tables(explanation: Explanation) -> list[TextTable]:
    tables = [chain_table(explanation), accuracy_table(explanation), jitter_table(explanation),
              _budget_table(explanation), explanation_findings_table(explanation)]
    return [t for t in tables if t is not None]


# --------------------------------------------------------------------------- renderers


def explanation_facts(explanation: Explanation) -> list[tuple[str, str]]:
    """The consumer's description from the board file (if any) and where its budget comes from."""
    from clockplan.report.content import budget_origin

    part = explanation.analysis.board.part(explanation.consumer.id)
    facts = []
    if getattr(part, "description", None):
        facts.append(("description", part.description))
    facts.append(("budget from", budget_origin(part)))
    return facts


def render_explanation(explanation: Explanation, console: "Console") -> None:
    """Print the explanation to a terminal (plain words; colour only on status words)."""
    from rich.markup import escape

    from clockplan.report.terminal import rich_table

    analysis = explanation.analysis
    source = f" ({analysis.board.source_file})" if analysis.board.source_file else ""
    console.print(f"[bold]clockplan explain[/]: {escape(explanation.consumer.id)} on {escape(analysis.board.name)}{source}")
    console.print(escape(_headline(explanation)))
    for label, text in explanation_facts(explanation):
        console.print(f"{label}: {escape(text)}")
    for table in _tables(explanation):
        console.print(rich_table(table))
    for note in explanation.notes:
        console.print(f"note: {escape(note)}")
    console.print(f"[dim]{CAVEAT}[/]")


def explanation_markdown(explanation: Explanation) -> str:
    """The explanation as Markdown (GFM tables), for a review comment."""
    from clockplan.report.markdown import escape_cell, markdown_table

    analysis = explanation.analysis
    parts = [f"# clockplan explain: `{explanation.consumer.id}` on {escape_cell(analysis.board.name)}\n",
             f"**{escape_cell(_headline(explanation))}**\n"]
    facts = explanation_facts(explanation)
    if facts:
        parts.append("".join(f"- **{label[0].upper() + label[1:]}:** {escape_cell(text)}\n" for label, text in facts))
    parts += [markdown_table(t) for t in _tables(explanation)]
    parts += [f"> note: {escape_cell(n)}\n" for n in explanation.notes]
    parts.append(f"> {CAVEAT}\n")
    return "\n".join(parts)


def _range_json(span: Any) -> list[Any] | None:
    from clockplan.report.json import number

    return None if span is None else [number(span[0]), number(span[1])]


def explanation_document(explanation: Explanation) -> dict[str, Any]:
    """The explanation as a JSON-ready document (keys in ``docs/reports.md``)."""
    from clockplan.report.json import SCHEMA_VERSION, analysis_document, number

    analysis = explanation.analysis
    consumer_doc = next(c for c in analysis_document(analysis)["consumers"] if c["id"] == explanation.consumer.id)
    return {
        "schema": SCHEMA_VERSION,
        "command": "explain",
        "board": {"name": analysis.board.name, "file": analysis.board.source_file},
        "consumer": consumer_doc,
        "status": consumer_doc["chain_status"],
        "chain": [
            {"node": s.node, "role": s.role, "operation": s.operation, "frequency_hz": number(s.frequency_hz),
             "frequency_hz_exact": format_exact(s.frequency_hz) if s.frequency_hz is not None else None}
            for s in explanation.stages
        ],
        "accuracy_waterfall": [
            {"stage": r.stage, "adds": r.adds, "running": r.running,
             "adds_range": _range_json(r.amount), "running_range": _range_json(r.total)}
            for r in explanation.accuracy_rows
        ],
        "jitter_waterfall": [
            {"stage": r.stage, "adds": r.adds, "running": r.running, "share": r.share,
             "adds_seconds": r.amount, "running_seconds": r.total}
            for r in explanation.jitter_rows
        ],
        "findings": [{"severity": f.severity.value, "code": f.code, "node": f.node, "message": f.message}
                     for f in explanation.findings],
        "notes": list(explanation.notes),
        "caveat": CAVEAT,
    }


def explanation_fails(explanation: Explanation) -> bool:
    """True if an error finding sits on the consumer or anywhere on its chain."""
    return any(f.severity is Severity.ERROR for f in explanation.findings)
