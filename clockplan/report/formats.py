"""One entry point for every report format, so the CLI stays a thin shell.

``table`` is the terminal report as plain text (no colour), ``json`` the
contract of ``docs/json-output.md``, ``markdown`` GitHub-flavoured Markdown,
``csv`` the consumer table, ``html`` one self-contained page.
"""

from __future__ import annotations

from clockplan.analysis import Analysis
from clockplan.errors import ClockplanError

__all__ = ["FORMATS", "DIAGRAM_FORMATS", "render_report", "format_for_path", "output_format"]

#: The values of ``--format``.
FORMATS = ("table", "json", "markdown", "csv", "html")
#: The formats an ``--output`` suffix may ask for besides the reports: the tree diagram.
DIAGRAM_FORMATS = ("dot", "svg")

_SUFFIXES = {".json": "json", ".md": "markdown", ".markdown": "markdown", ".csv": "csv", ".html": "html",
             ".htm": "html", ".txt": "table", ".dot": "dot", ".gv": "dot", ".svg": "svg"}


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


def output_format(path: str) -> str:
    """The format a report's ``--output`` file name asks for; an unknown or missing suffix is an error.

    A report written under a name that says something else (``review.svg`` holding text) would
    mislead whoever opens it, so only the suffixes of :data:`FORMATS` and :data:`DIAGRAM_FORMATS`
    are accepted without ``--format``.

    Raises
    ------
    ClockplanError
        The suffix names no format clockplan writes.

    Examples
    --------
    >>> output_format("review.svg")
    'svg'
    """
    fmt = format_for_path(path)
    if fmt is not None:
        return fmt
    name = path.replace("\\", "/").rsplit("/", 1)[-1]
    suffix = "." + name.rsplit(".", 1)[1] if "." in name.strip(".") else ""
    what = f"clockplan writes no {suffix!r} file" if suffix else "the file name has no suffix to tell the format"
    raise ClockplanError(
        f"--output {path}: {what}",
        hint="name it .txt .md .csv .html or .json for a report, .dot or .svg for the tree diagram, "
        "or give --format (table, json, markdown, csv, html)",
    )


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
