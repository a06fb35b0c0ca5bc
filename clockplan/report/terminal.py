"""Terminal report: rich tables and the clock tree.

Meaning never rests on colour alone: every status is also a word (``PASS``,
``FAIL``, ``warn``), so the text reads right with ``NO_COLOR`` or when piped.
Budget results may add columns by providing ``table_cells() -> dict[str, str]``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from clockplan.analysis import CAVEAT, Analysis, ConsumerResult
from clockplan.findings import Severity
from clockplan.units import format_exact, format_frequency, format_ppm

if TYPE_CHECKING:
    from rich.console import Console, RenderableType

__all__ = ["make_console", "render_analysis", "consumer_table", "pll_table", "findings_table", "tree_view"]

_STATUS_STYLE = {"PASS": "green", "warn": "yellow", "FAIL": "bold red"}
_SEVERITY_STYLE = {Severity.ERROR: "bold red", Severity.WARNING: "yellow", Severity.INFO: "cyan"}


def make_console(width: int | None = None, color: bool | None = None, file=None) -> "Console":
    """A console; ``color=False`` (or ``NO_COLOR``) gives plain text."""
    from rich.console import Console

    return Console(width=width, no_color=(color is False) or None, file=file, highlight=False, soft_wrap=False,
                   force_terminal=False if color is False else None)


def _status(analysis: Analysis, node: str) -> str:
    severities = {f.severity for f in analysis.findings if f.node == node}
    return "FAIL" if Severity.ERROR in severities else "warn" if Severity.WARNING in severities else "PASS"


def _styled(text: str) -> str:
    style = _STATUS_STYLE.get(text)
    return f"[{style}]{text}[/]" if style else text


def consumer_table(analysis: Analysis) -> "RenderableType":
    """One row per consumer: target, achieved, synthesis error, budget cells, status."""
    from rich.table import Table

    table = Table(title="Consumers", title_justify="left", header_style="bold")
    table.add_column("consumer")
    table.add_column("source")
    table.add_column("target", justify="right")
    table.add_column("achieved", justify="right")
    table.add_column("synthesis error", justify="right")
    extra_headers: list[str] = []
    for result in analysis.consumers:
        for header in _extra_cells(result):
            if header not in extra_headers:
                extra_headers.append(header)
    for header in extra_headers:
        table.add_column(header, justify="right")
    table.add_column("status")
    for result in analysis.consumers:
        consumer = analysis.board.part(result.id)
        achieved = format_frequency(result.actual_hz) if result.actual_hz is not None else "unset"
        error = format_ppm(result.synthesis_error) if result.synthesis_error is not None else "-"
        cells = _extra_cells(result)
        table.add_row(
            result.id,
            consumer.source,
            format_frequency(result.target_hz),
            achieved,
            error,
            *[cells.get(h, "-") for h in extra_headers],
            _styled(_status(analysis, result.id)),
        )
    return table


def _extra_cells(result: ConsumerResult) -> dict[str, str]:
    cells: dict[str, str] = {}
    for extra in (result.accuracy, result.jitter):
        if extra is not None and hasattr(extra, "table_cells"):
            cells.update(extra.table_cells())
    return cells


def pll_table(analysis: Analysis) -> "RenderableType | None":
    """The settings of every PLL and plain divider."""
    from rich.table import Table

    if not analysis.board.plls and not analysis.board.dividers:
        return None
    from clockplan.plan.spurs import boundary_spur_offset

    table = Table(title="Settings", title_justify="left", header_style="bold")
    for header in ("part", "mode", "R", "N", "PFD", "VCO", "spur offset", "output dividers"):
        table.add_column(header, justify="left" if header in ("part", "mode", "output dividers") else "right")
    for pll in analysis.board.plls:
        setting = analysis.settings.plls.get(pll.id)
        point = analysis.frequencies.plls.get(pll.id)
        outputs = ", ".join(f"{name}=/{d}" for name, d in setting.dividers.items()) if setting else "unset"
        table.add_row(
            pll.id,
            "frac-N" if pll.mode == "fractional" else "int-N",
            str(setting.r) if setting else "-",
            format_exact(setting.n) if setting else "-",
            format_frequency(point.pfd_hz) if point else "-",
            format_frequency(point.vco_hz) if point else "-",
            _spur_text(boundary_spur_offset(point.pfd_hz, point.setting.n) if point else None),
            outputs,
        )
    for divider in analysis.board.dividers:
        ratio = analysis.settings.dividers.get(divider.id)
        table.add_row(divider.id, "divider", "-", "-", "-", "-", "-", f"/{ratio}" if ratio else "unset")
    return table


def _spur_text(offset) -> str:
    """The integer-boundary spur offset of a fractional-N setting ("-" for integer N)."""
    return format_frequency(offset) if offset is not None else "-"


def findings_table(analysis: Analysis) -> "RenderableType | None":
    """Every finding, most serious first."""
    from rich.table import Table

    if not analysis.findings:
        return None
    table = Table(title="Findings", title_justify="left", header_style="bold")
    for header in ("severity", "code", "part", "message"):
        table.add_column(header, overflow="fold")
    for finding in sorted(analysis.findings, key=lambda f: -f.severity.rank):
        style = _SEVERITY_STYLE[finding.severity]
        table.add_row(f"[{style}]{finding.severity.value}[/]", finding.code, finding.node, finding.message)
    return table


def tree_view(analysis: Analysis) -> "RenderableType":
    """The clock tree from each reference down to its consumers, with frequencies."""
    from rich.tree import Tree

    graph = analysis.graph
    root = Tree(f"[bold]{analysis.board.name}[/]")

    def label(node: str) -> str:
        hz = analysis.frequencies.nodes.get(node)
        role = graph.nodes[node]["role"]
        text = f"{node} ({role.replace('_', ' ')})"
        if role == "pll" and hz is not None:
            text += f" VCO {format_frequency(hz)}"
        elif hz is not None:
            text += f" {format_frequency(hz)}"
        if role == "consumer":
            text += f" {_styled(_status(analysis, node))}"
        return text

    def grow(branch, node: str) -> None:
        for child in sorted(graph.successors(node)):
            grow(branch.add(label(child)), child)

    for ref in analysis.board.references:
        grow(root.add(label(ref.id)), ref.id)
    return root


def render_analysis(analysis: Analysis, console: "Console", title: str = "audit") -> None:
    """Print the full terminal report: summary, tree, consumers, settings, findings."""
    errors = sum(f.severity is Severity.ERROR for f in analysis.findings)
    warnings = sum(f.severity is Severity.WARNING for f in analysis.findings)
    verdict = "[bold red]FAIL[/]" if errors else "[green]PASS[/]"
    source = f" ({analysis.board.source_file})" if analysis.board.source_file else ""
    console.print(f"[bold]clockplan {title}[/]: {analysis.board.name}{source}")
    console.print(f"verdict: {verdict} - {errors} error(s), {warnings} warning(s), {len(analysis.consumers)} consumer(s)")
    console.print(tree_view(analysis))
    console.print(consumer_table(analysis))
    for extra in analysis.extras.values():
        if hasattr(extra, "rich_renderable"):
            console.print(extra.rich_renderable())
    for renderable in (pll_table(analysis), findings_table(analysis)):
        if renderable is not None:
            console.print(renderable)
    console.print(f"[dim]{CAVEAT}[/]")
