"""Terminal report: rich tables and the clock tree.

Meaning never rests on colour alone: every status is also a word (``PASS``,
``FAIL``, ``warn``, ``unchecked``), so the text reads right with ``NO_COLOR`` or when piped.
The content comes from :mod:`clockplan.report.content`; this module only
lays it out and colours the status words.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from clockplan.analysis import CAVEAT, Analysis
from clockplan.report import content
from clockplan.report.content import (
    WIDE_COLUMNS,
    Column,
    Summary,
    TextTable,
    clock_tree,
    compact_consumers_table,
    consumers_table,
    settings_table,
    summarize,
)

if TYPE_CHECKING:
    from rich.console import Console, RenderableType

__all__ = [
    "make_console",
    "render_analysis",
    "render_text",
    "rich_table",
    "print_summary",
    "consumer_table",
    "pll_table",
    "findings_table",
    "tree_view",
]

_WORD_STYLE = {
    "PASS": "green",
    "warn": "yellow",
    "unchecked": "bold magenta",
    "UNCHECKED": "bold magenta",
    "FAIL": "bold red",
    "error": "bold red",
    "warning": "yellow",
    "info": "cyan",
}


def make_console(width: int | None = None, color: bool | None = None, file=None) -> "Console":
    """A console; ``color=False`` (or ``NO_COLOR``) gives plain text."""
    from rich.console import Console

    return Console(width=width, no_color=(color is False) or None, file=file, highlight=False, soft_wrap=False,
                   force_terminal=False if color is False else None)


def _styled(word: str) -> str:
    from rich.markup import escape

    style = _WORD_STYLE.get(word)
    return f"[{style}]{escape(word)}[/]" if style else escape(word)


def _grid(table: TextTable, widths: list[int] | None = None) -> "RenderableType":
    from rich.markup import escape
    from rich.table import Table

    out = Table(title=table.title, title_justify="left", header_style="bold")
    for index, column in enumerate(table.columns):
        # Fold rather than crop: if a cell must wrap, no character is lost.
        out.add_column(column.header, justify="right" if column.align == "right" else "left", overflow="fold",
                       width=widths[index] if widths else None)
    for row in table.rows:
        out.add_row(*[_styled(cell) if i == table.status_column else escape(cell) for i, cell in enumerate(row)])
    return out


def _records(table: TextTable) -> "list[RenderableType]":
    from rich.markup import escape

    lines = [f"[bold]{escape(table.title)}[/]"]
    for row in table.rows:
        lines.append(f"[bold]{escape(row[0])}[/]")
        for index, (header, cell) in enumerate(zip(table.headers[1:], row[1:]), 1):
            value = _styled(cell) if index == table.status_column else escape(cell)
            lines.append(f"  {escape(header)}: {value}")
    return lines


def _column_texts(table: TextTable, index: int) -> list[str]:
    return [table.columns[index].header, *(row[index] for row in table.rows)]


def _longest_word(table: TextTable, index: int) -> int:
    return max((len(w) for text in _column_texts(table, index) for w in text.split()), default=1)


def _fitted_widths(table: TextTable, max_width: int) -> list[int] | None:
    """Column widths that never break a word, or None if even that does not fit.

    Each column gets its longest word; then, one row at a time (the cheapest
    first, the header counting as a row), columns widen so the whole row fits
    on one line, while the table still fits: as few rows as possible wrap.
    """
    rules = 1 + 3 * len(table.columns)  # borders and one space of padding each side
    widths = [_longest_word(table, i) for i in range(len(table.columns))]
    if rules + sum(widths) > max_width:
        return None
    pending = [tuple(len(cell) for cell in row) for row in (table.headers, *table.rows)]
    while pending:
        grown = [[max(w, n) for w, n in zip(widths, lengths)] for lengths in pending]
        cheapest = min(range(len(pending)), key=lambda k: sum(grown[k]))
        if rules + sum(grown[cheapest]) > max_width:
            break
        widths = grown[cheapest]
        pending = [lengths for lengths in pending if any(n > w for w, n in zip(widths, lengths))]
    room = max_width - rules - sum(widths)
    for index in range(len(widths)):  # what is left shortens the wrapped cells that remain
        longest = max((lengths[index] for lengths in pending), default=0)
        grant = min(max(longest - widths[index], 0), room)
        widths[index] += grant
        room -= grant
    return widths


class _FittedTable:
    """A grid whose words stay whole, else one block of ``header: value`` lines per row."""

    def __init__(self, table: TextTable) -> None:
        self.table = table

    def __rich_console__(self, console, options):
        widths = _fitted_widths(self.table, options.max_width)
        if widths is None:
            yield from _records(self.table)
        else:
            yield _grid(self.table, widths)


def rich_table(table: TextTable) -> "RenderableType":
    """A rich table from plain cells; the status column's words are coloured, never replaced.

    On a terminal too narrow for the grid without breaking words, each row is
    printed as its own block of ``header: value`` lines instead, so that no
    value is cut or split.

    Examples
    --------
    >>> make_console(width=80, color=False).print(rich_table(consumers_table(result)))  # doctest: +SKIP
    """
    return _FittedTable(table)


def consumer_table(analysis: Analysis, wide: bool = True) -> "RenderableType":
    """One row per consumer: every column (``wide``), or id, frequency, status and worst margin."""
    return rich_table(consumers_table(analysis) if wide else compact_consumers_table(analysis))


def pll_table(analysis: Analysis) -> "RenderableType | None":
    """The settings of every PLL and plain divider."""
    table = settings_table(analysis)
    return rich_table(table) if table else None


def findings_table(analysis: Analysis) -> "RenderableType | None":
    """Every finding, most serious first."""
    table = content.findings_table(analysis)
    return rich_table(table) if table else None


def tree_view(analysis: Analysis) -> "RenderableType":
    """The clock tree from each reference down to its consumers, with frequencies."""
    from rich.markup import escape
    from rich.tree import Tree

    root = Tree(f"[bold]{escape(analysis.board.name)}[/]")

    def grow(branch, node) -> None:
        label = escape(node.label) + (f" {_styled(node.status)}" if node.status else "")
        twig = branch.add(label)
        for child in node.children:
            grow(twig, child)

    for node in clock_tree(analysis):
        grow(root, node)
    return root


def print_summary(summary: Summary, console: "Console", title: str = "audit") -> None:
    """The head of the report: board, references, conditions, worst margins, verdict."""
    from rich.markup import escape

    source = f" ({escape(summary.file)})" if summary.file else ""
    console.print(f"[bold]clockplan {escape(title)}[/]: {escape(summary.board)}{source}")
    console.print(f"verdict: {_styled(summary.verdict)} - {summary.counts}")
    for label, text in summary.lead_facts:
        console.print(f"{label}: {escape(text)}")
    if summary.margins:
        console.print("worst margins:")
        for line in summary.margin_lines:
            console.print(f"  {escape(line)}")
    else:
        console.print(f"worst margins: {escape(summary.margin_lines[0])}")
    for label, text in summary.context_facts:
        console.print(f"{label}: {escape(text)}")


def render_analysis(analysis: Analysis, console: "Console", title: str = "audit", wide: bool | None = None) -> None:
    """Print the full terminal report: summary, tree, consumers, settings, findings.

    The consumer table has every column when ``wide`` is true, or (``None``)
    when the console is at least :data:`~clockplan.report.content.WIDE_COLUMNS`
    wide; otherwise one line per consumer (id, frequency, status, worst margin).
    """
    if wide is None:
        wide = console.width >= WIDE_COLUMNS
    print_summary(summarize(analysis), console, title)
    console.print(tree_view(analysis))
    console.print(consumer_table(analysis, wide))
    if not wide:
        console.print(f"[dim](--wide, {WIDE_COLUMNS}+ columns, Markdown and HTML show every column)[/]")
    for extra in analysis.extras.values():
        if hasattr(extra, "rich_renderable"):
            console.print(extra.rich_renderable())
        elif hasattr(extra, "report_table"):
            title, headers, rows = extra.report_table()
            columns = tuple(Column(str(h)) for h in headers)
            console.print(rich_table(TextTable(str(title), columns, tuple(tuple(map(str, r)) for r in rows))))
    for renderable in (pll_table(analysis), findings_table(analysis)):
        if renderable is not None:
            console.print(renderable)
    console.print(f"[dim]{CAVEAT}[/]")


def render_text(analysis: Analysis, title: str = "audit", width: int = 100, wide: bool | None = None) -> str:
    """The terminal report as plain text (no colour), e.g. for ``--output report.txt``.

    Examples
    --------
    >>> print(render_text(result, width=100))  # doctest: +SKIP
    """
    import io

    buffer = io.StringIO()
    render_analysis(analysis, make_console(width=width, color=False, file=buffer), title, wide)
    return buffer.getvalue()
