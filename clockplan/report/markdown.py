"""Markdown report for reviews and pull requests (GitHub-flavoured tables).

Every cell is escaped so that ids, messages and ``|`` in free text cannot break
a table; status words stay words (an emoji sits beside them for scanning, never
instead of them). The clock tree is a fenced ``text`` block, which every
code-hosting site shows as drawn.
"""

from __future__ import annotations

import re

from clockplan.analysis import CAVEAT, Analysis
from clockplan.report.content import (
    Summary,
    TextTable,
    budgets_table,
    consumers_table,
    extra_sections,
    findings_table,
    settings_table,
    summarize,
    tree_text,
)

__all__ = ["escape_cell", "markdown_table", "markdown_summary", "render_markdown"]

_MARK = {"PASS": "✅ PASS", "warn": "⚠️ warn", "unchecked": "❔ **unchecked**", "UNCHECKED": "❔ **UNCHECKED**",
         "FAIL": "❌ **FAIL**", "error": "❌ **error**", "warning": "⚠️ warning",
         "info": "ℹ️ info"}
# Characters that start Markdown syntax inside a table cell (GFM spec: tables and inlines).
# An underscore inside a word cannot open or close emphasis (GFM spec, emphasis rules), so
# ids such as ref_27m stay unescaped and readable in the raw text.
_SPECIAL = re.compile(r"([\\`*\[\]<>|#~]|(?<![0-9A-Za-z])_|_(?![0-9A-Za-z]))")


def escape_cell(text: str) -> str:
    """Escape ``text`` for one GitHub-flavoured table cell (one line, no live syntax).

    Examples
    --------
    >>> escape_cell("a|b *c*")
    'a\\\\|b \\\\*c\\\\*'
    """
    return _SPECIAL.sub(r"\\\1", text).replace("\r", " ").replace("\n", "<br>")


def markdown_table(table: TextTable, heading_level: int = 2) -> str:
    """A titled GFM pipe table; numeric columns align right.

    Examples
    --------
    >>> print(markdown_table(consumers_table(result)))  # doctest: +SKIP
    """
    lines = [f"{'#' * heading_level} {table.title}", ""]
    lines.append("| " + " | ".join(escape_cell(h) for h in table.headers) + " |")
    lines.append("|" + "|".join("---:" if c.align == "right" else "---" for c in table.columns) + "|")
    for row in table.rows:
        cells = [_MARK.get(cell, escape_cell(cell)) if i == table.status_column else escape_cell(cell)
                 for i, cell in enumerate(row)]
        lines.append("| " + " | ".join(cells) + " |")
    return "\n".join(lines) + "\n"


def markdown_summary(summary: Summary, title: str = "audit") -> str:
    """The head of the report: title, verdict line, then the facts as a list."""
    verdict = _MARK[summary.verdict]
    lines = [f"# clockplan {title}: {escape_cell(summary.board)}", "", f"**Verdict:** {verdict} — {summary.counts}", ""]
    lines += [f"- **{label[0].upper() + label[1:]}:** {escape_cell(text)}" for label, text in summary.lead_facts]
    lines.append("- **Worst margins:**")
    lines += [f"  - {escape_cell(line)}" for line in summary.margin_lines]
    lines += [f"- **{label[0].upper() + label[1:]}:** {escape_cell(text)}" for label, text in summary.context_facts]
    lines += [f"- **Board file:** `{summary.file}`"] if summary.file else []
    return "\n".join(lines) + "\n"


def render_markdown(analysis: Analysis, title: str = "audit") -> str:
    """The whole report as Markdown: summary, consumers, settings, findings, tree, caveat.

    Examples
    --------
    >>> text = render_markdown(result)  # doctest: +SKIP
    >>> text.splitlines()[0]  # doctest: +SKIP
    '# clockplan audit: Industrial gateway'
    """
    parts = [markdown_summary(summarize(analysis), title), markdown_table(consumers_table(analysis)),
             markdown_table(budgets_table(analysis))]
    for section in extra_sections(analysis):
        parts.append(markdown_table(section.table) if section.table else f"```text\n{section.text}\n```\n")
    for table in (settings_table(analysis), findings_table(analysis)):
        if table is not None:
            parts.append(markdown_table(table))
    parts.append("## Clock tree\n\n```text\n" + tree_text(analysis) + "\n```\n")
    parts.append(f"> {CAVEAT}\n")
    return "\n".join(parts)
