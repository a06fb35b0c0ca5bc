"""One entry point for every report format, so the CLI stays a thin shell.

``table`` is the terminal report as plain text (no colour), ``json`` the
contract of ``docs/json-output.md``, ``markdown`` GitHub-flavoured Markdown,
``csv`` the consumer table, ``html`` one self-contained page.
"""

from __future__ import annotations

from clockplan.analysis import Analysis
from clockplan.errors import ClockplanError

__all__ = ["FORMATS", "render_report", "format_for_path"]

#: The values of ``--format``.
FORMATS = ("table", "json", "markdown", "csv", "html")

_SUFFIXES = {".json": "json", ".md": "markdown", ".markdown": "markdown", ".csv": "csv", ".html": "html",
             ".htm": "html", ".txt": "table"}


def format_for_path(path: str) -> str | None:
    """The format a file name implies by its suffix (``report.md`` -> ``markdown``), or None.

    Examples
    --------
    >>> format_for_path("out/report.html")
    'html'
    """
    for suffix, name in _SUFFIXES.items():
        if path.lower().endswith(suffix):
            return name
    return None


def render_report(analysis: Analysis, fmt: str, command: str = "audit", width: int = 100) -> str:
    """The report for ``analysis`` in format ``fmt`` as text.

    Examples
    --------
    >>> render_report(result, "markdown").startswith("# clockplan audit")  # doctest: +SKIP
    True
    """
    if fmt == "table":
        from clockplan.report.terminal import render_text

        return render_text(analysis, command, width)
    if fmt == "json":
        from clockplan.report.json import analysis_document, dumps

        return dumps(analysis_document(analysis, command))
    if fmt == "markdown":
        from clockplan.report.markdown import render_markdown

        return render_markdown(analysis, command)
    if fmt == "csv":
        from clockplan.report.csv import render_csv

        return render_csv(analysis)
    if fmt == "html":
        from clockplan.report.html import build_html

        return build_html(analysis, command)
    raise ClockplanError(f"unknown report format {fmt!r}", hint="use one of: " + ", ".join(FORMATS))
