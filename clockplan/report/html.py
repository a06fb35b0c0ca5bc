"""A single self-contained HTML report: open it anywhere, no network needed.

Styles are inline, the clock tree is inline SVG (drawn by Graphviz when its
``dot`` program is installed, otherwise an HTML list drawn with CSS), and the
plots are PNG images embedded as base64 when matplotlib is installed and the
budget results offer plot data. Nothing refers to an outside file or address.
Every status is a word in a coloured cell, never a colour alone.
"""

from __future__ import annotations

import base64
import re
from html import escape

from clockplan import __version__
from clockplan.analysis import CAVEAT, Analysis
from clockplan.errors import ClockplanError
from clockplan.report.content import (
    Summary,
    TextTable,
    TreeNode,
    budgets_table,
    clock_tree,
    consumers_table,
    extra_sections,
    findings_table,
    settings_table,
    summarize,
)

__all__ = ["html_table", "html_tree", "clean_svg", "render_html", "build_html"]

_CSS = """
:root { --fail: #b71c1c; --fail-bg: #ffebee; --warn: #e65100; --warn-bg: #fff3e0; --pass: #1b5e20;
        --pass-bg: #e8f5e9; --unchecked: #4a148c; --unchecked-bg: #f3e5f5; --line: #cfd8dc; --muted: #546e7a; }
* { box-sizing: border-box; }
body { font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
       color: #1c2529; margin: 0 auto; padding: 1.5rem 2rem 3rem; max-width: 1600px; background: #fff; }
h1 { font-size: 1.6rem; margin: 0 0 .4rem; }
h2 { font-size: 1.2rem; margin: 2rem 0 .6rem; border-bottom: 1px solid var(--line); padding-bottom: .2rem; }
.verdict { display: inline-block; font-weight: 700; padding: .15rem .7rem; border-radius: .3rem; margin-right: .5rem; }
.verdict.PASS { color: var(--pass); background: var(--pass-bg); border: 1px solid var(--pass); }
.verdict.FAIL { color: var(--fail); background: var(--fail-bg); border: 1px solid var(--fail); }
.verdict.UNCHECKED { color: var(--unchecked); background: var(--unchecked-bg); border: 1px solid var(--unchecked); }
dl.summary { display: grid; grid-template-columns: max-content 1fr; gap: .25rem 1rem; margin: 1rem 0; }
dl.summary dt { font-weight: 600; color: var(--muted); }
dl.summary dd { margin: 0; }
dl.summary ul { margin: 0; padding-left: 1.1rem; }
table { border-collapse: collapse; width: 100%; margin: .3rem 0 1rem; font-size: .92rem; }
th, td { border: 1px solid var(--line); padding: .3rem .55rem; vertical-align: top; text-align: left; }
th { background: #eceff1; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
.table-wrap { overflow-x: auto; }
tbody tr:nth-child(even) { background: #fafbfc; }
td.word { font-weight: 700; white-space: nowrap; }
td.PASS { color: var(--pass); background: var(--pass-bg); }
td.warn, td.warning { color: var(--warn); background: var(--warn-bg); }
td.FAIL, td.error { color: var(--fail); background: var(--fail-bg); }
td.unchecked { color: var(--unchecked); background: var(--unchecked-bg); }
td.info { color: #01579b; background: #e1f5fe; }
code { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, monospace; font-size: .9em; }
.diagram { overflow-x: auto; border: 1px solid var(--line); border-radius: .3rem; padding: .5rem; }
.diagram svg { max-width: 100%; height: auto; }
ul.tree, ul.tree ul { list-style: none; margin: 0; padding-left: 1.4rem; }
ul.tree { padding-left: .2rem; }
ul.tree li { position: relative; padding: .1rem 0 .1rem .9rem; border-left: 1px solid #90a4ae; }
ul.tree li:last-child { border-left-color: transparent; }
ul.tree li::before { content: ""; position: absolute; left: -1px; top: 0; width: .8rem; height: .95rem;
                     border-left: 1px solid #90a4ae; border-bottom: 1px solid #90a4ae; }
ul.tree .badge { font-weight: 700; padding: 0 .35rem; border-radius: .2rem; }
ul.tree .badge.PASS { color: var(--pass); background: var(--pass-bg); }
ul.tree .badge.warn { color: var(--warn); background: var(--warn-bg); }
ul.tree .badge.FAIL { color: var(--fail); background: var(--fail-bg); }
ul.tree .badge.unchecked { color: var(--unchecked); background: var(--unchecked-bg); }
pre.extra { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, monospace; font-size: .82rem;
            background: #f6f8fa; border: 1px solid var(--line); border-radius: .3rem; padding: .6rem; overflow-x: auto; }
figure { margin: 1rem 0; }
figure img { max-width: 100%; border: 1px solid var(--line); border-radius: .3rem; }
figcaption, .note { color: var(--muted); font-size: .9rem; }
footer { margin-top: 2.5rem; color: var(--muted); font-size: .88rem; border-top: 1px solid var(--line); padding-top: .6rem; }
"""

_PLOT_CAPTIONS = {
    "margins.png": "The worst margin of every consumer: the share of its budget left (clipped at -100 %).",
    "phase-noise.png": "Phase noise at each consumer; the shaded span is the integration band of its jitter budget.",
    "ppm-temperature.png": "Frequency error over the operating temperature range; dashed lines are the budget.",
    "monte-carlo.png": "Monte Carlo frequency error against the budget (dashed lines).",
}


def html_table(table: TextTable) -> str:
    """An HTML table from plain cells; status words sit in classed cells for colour.

    Examples
    --------
    >>> html_table(consumers_table(result)).startswith("<table")  # doctest: +SKIP
    True
    """
    numeric = ' class="num"'
    head = "".join(f"<th{numeric if c.align == 'right' else ''}>{escape(c.header)}</th>" for c in table.columns)
    body = []
    for row in table.rows:
        cells = []
        for index, (column, cell) in enumerate(zip(table.columns, row)):
            if index == table.status_column:
                cells.append(f'<td class="word {escape(cell)}">{escape(cell)}</td>')
            else:
                cells.append(f"<td{numeric if column.align == 'right' else ''}>{escape(cell)}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    return (f'<div class="table-wrap"><table aria-label="{escape(table.title)}"><thead><tr>{head}</tr></thead>'
            f'<tbody>{"".join(body)}</tbody></table></div>')


def html_tree(roots: tuple[TreeNode, ...]) -> str:
    """The clock tree as nested lists drawn with CSS branch lines (no SVG needed)."""

    def item(node: TreeNode) -> str:
        badge = f' <span class="badge {escape(node.status)}">{escape(node.status)}</span>' if node.status else ""
        children = "".join(item(child) for child in node.children)
        return f"<li>{escape(node.label)}{badge}{'<ul>' + children + '</ul>' if children else ''}</li>"

    return '<ul class="tree">' + "".join(item(root) for root in roots) + "</ul>"


def clean_svg(svg: str) -> str:
    """Graphviz SVG made fit to inline in HTML: no XML declaration, doctype or comments."""
    svg = re.sub(r"<\?xml[^>]*\?>", "", svg)
    svg = re.sub(r"<!DOCTYPE[^>]*>", "", svg, flags=re.IGNORECASE)
    svg = re.sub(r"<!--.*?-->", "", svg, flags=re.DOTALL)
    return svg.strip()


def _summary(summary: Summary, title: str) -> str:
    lead = "".join(f"<dt>{escape(label)}</dt><dd>{escape(text)}</dd>" for label, text in summary.lead_facts)
    context = "".join(f"<dt>{escape(label)}</dt><dd>{escape(text)}</dd>" for label, text in summary.context_facts)
    context += f"<dt>board file</dt><dd><code>{escape(summary.file)}</code></dd>" if summary.file else ""
    margins = "".join(f"<li>{escape(line)}</li>" for line in summary.margin_lines)
    return (
        f"<h1>clockplan {escape(title)}: {escape(summary.board)}</h1>"
        f'<p><span class="verdict {summary.verdict}">{summary.verdict}</span>{escape(summary.counts)}</p>'
        f'<dl class="summary">{lead}<dt>worst margins</dt><dd><ul>{margins}</ul></dd>{context}</dl>'
    )


def _plots(images: dict[str, bytes] | None) -> str:
    if images is None:
        return '<p class="note">Plots need matplotlib: pip install \'clockplan[plots]\'.</p>'
    if not images:
        return ('<p class="note">No plot data: phase noise, ppm over temperature and the Monte Carlo spread appear '
                "here when the board gives oscillator accuracy and phase-noise data.</p>")
    figures = []
    for name, png in images.items():
        data = base64.b64encode(png).decode("ascii")
        caption = _PLOT_CAPTIONS.get(name, name)
        figures.append(f'<figure><img alt="{escape(caption)}" src="data:image/png;base64,{data}">'
                       f"<figcaption>{escape(caption)}</figcaption></figure>")
    return "".join(figures)


def render_html(analysis: Analysis, title: str = "audit", svg: str | None = None,
                images: dict[str, bytes] | None = None) -> str:
    """The HTML report from what is given: ``svg`` for the tree (else an HTML list), ``images`` for plots.

    ``images`` maps a file name (``phase-noise.png``...) to PNG bytes; ``None``
    means matplotlib is missing, an empty dict that there is no data.

    Examples
    --------
    >>> page = render_html(result)  # doctest: +SKIP
    >>> page.startswith("<!DOCTYPE html>")  # doctest: +SKIP
    True
    """
    summary = summarize(analysis)
    if svg is not None:
        tree = f'<div class="diagram" role="img" aria-label="clock tree diagram">{clean_svg(svg)}</div>'
    else:
        tree = (html_tree(clock_tree(analysis)) + '<p class="note">Install Graphviz (the <code>dot</code> program) '
                "to draw this tree as a diagram.</p>")
    budgets = budgets_table(analysis)
    sections = (f"<h2>Consumers</h2>{html_table(consumers_table(analysis))}"
                f"<h2>{escape(budgets.title)}</h2>{html_table(budgets)}")
    for extra in extra_sections(analysis):
        sections += (f"<h2>{escape(extra.table.title)}</h2>{html_table(extra.table)}" if extra.table
                     else f'<pre class="extra">{escape(extra.text or "")}</pre>')
    for table in (settings_table(analysis), findings_table(analysis)):
        if table is not None:
            sections += f"<h2>{escape(table.title)}</h2>{html_table(table)}"
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>clockplan {escape(title)}: {escape(summary.board)} ({summary.verdict})</title>"
        f"<style>{_CSS}</style></head><body>"
        f"{_summary(summary, title)}"
        f"<h2>Clock tree</h2>{tree}"
        f"{sections}"
        f"<h2>Plots</h2>{_plots(images)}"
        f"<footer><p>{escape(CAVEAT)}</p><p>clockplan {escape(__version__)}</p></footer>"
        "</body></html>\n"
    )


def build_html(analysis: Analysis, title: str = "audit") -> str:
    """The HTML report with whatever this machine can draw: Graphviz SVG and matplotlib plots if present.

    Examples
    --------
    >>> from clockplan.fileio import atomic_write_text  # doctest: +SKIP
    >>> atomic_write_text("report.html", build_html(result))  # doctest: +SKIP
    """
    from clockplan.report import dot, plots

    svg = None
    if dot.dot_available():
        try:
            svg = dot.render_svg(dot.render_dot(analysis))
        except ClockplanError:
            svg = None  # a broken Graphviz must not cost the whole report: the HTML list tree stands in
    images = plots.plot_images(plots.collect_plot_data(analysis)) if plots.matplotlib_available() else None
    return render_html(analysis, title, svg, images)
