"""Every report format on every demo board, read back with standard tools.

The references are readers outside the project: ``json`` (RFC 8259), Python's
``csv`` module (RFC 4180), markdown-it-py's GFM table parser (the GitHub
Flavored Markdown spec, "Tables" extension), and ``html.parser``. Exact values
are compared as ``Fraction`` against the analysis, never with a tolerance.
"""

import csv
import io
import json
import re
from fractions import Fraction
from html.parser import HTMLParser
from pathlib import Path

import pytest
from markdown_it import MarkdownIt

from clockplan.analysis import analyze
from clockplan.boardfile import load_board
from clockplan.cli import _REPORT_FORMATS, main
from clockplan.report.csv import CHAIN_SEPARATOR, render_csv
from clockplan.report.formats import FORMATS, format_for_path, render_report
from clockplan.report.html import render_html
from clockplan.report.markdown import escape_cell, render_markdown

BOARDS = sorted(str(p) for p in Path("boards").glob("*.toml"))
ANSI = re.compile(r"\x1b\[")


@pytest.fixture(scope="module", params=BOARDS)
def analysis(request):
    return analyze(load_board(request.param))


def markdown_tables(text: str) -> list[list[list[str]]]:
    """Each GFM table as rows of cell texts (header row first), via markdown-it-py."""
    tables, rows, row = [], None, None
    for token in MarkdownIt("commonmark").enable("table").parse(text):
        if token.type == "table_open":
            rows = []
        elif token.type == "tr_open":
            row = []
        elif token.type == "inline" and row is not None:
            row.append(token.content)
        elif token.type == "tr_close":
            rows.append(row)
            row = None
        elif token.type == "table_close":
            tables.append(rows)
    return tables


# --------------------------------------------------------------------------- JSON


def test_json_matches_the_contract(analysis, capsys):
    assert main(["audit", analysis.board.source_file, "--format", "json"]) == (1 if analysis.has_errors else 0)
    doc = json.loads(capsys.readouterr().out)
    assert doc["schema"] == 1 and doc["command"] == "audit"
    assert doc["verdict"] == ("fail" if analysis.has_errors else "pass")
    assert [c["id"] for c in doc["consumers"]] == [c.id for c in analysis.consumers]
    for entry, result in zip(doc["consumers"], analysis.consumers):
        assert Fraction(entry["target_hz_exact"]) == result.target_hz
        exact = entry["actual_hz_exact"], entry["synthesis_error_exact"]
        assert [None if e is None else Fraction(e) for e in exact] == [result.actual_hz, result.synthesis_error]
        assert entry["source_chain"] == list(result.chain)
    assert len(doc["findings"]) == len(analysis.findings)


def test_json_flag_and_format_json_are_the_same(capsys):
    main(["audit", BOARDS[0], "--json"])
    first = capsys.readouterr().out
    main(["audit", BOARDS[0], "--format", "json"])
    assert capsys.readouterr().out == first


def test_json_and_a_different_format_are_refused(capsys):
    assert main(["audit", BOARDS[0], "--json", "--format", "csv"]) == 2
    assert "disagree" in capsys.readouterr().err


# --------------------------------------------------------------------------- CSV


def _dotted_keys(doc: dict, prefix: str = "") -> list[str]:
    keys = []
    for key, value in doc.items():
        keys += _dotted_keys(value, f"{prefix}{key}.") if isinstance(value, dict) and value else [prefix + key]
    return keys


def test_csv_parses_and_agrees_with_json(analysis):
    text = render_csv(analysis)
    assert "\r\n" in text  # RFC 4180 section 2: lines end in CRLF
    rows = list(csv.DictReader(io.StringIO(text, newline="")))
    doc = json.loads(render_report(analysis, "json"))
    assert len(rows) == len(doc["consumers"])
    assert list(rows[0])[:10] == list(doc["consumers"][0])[:10]  # the contract's keys first, in order
    for row, entry in zip(rows, doc["consumers"]):
        assert set(_dotted_keys(entry)) - {k for k, v in entry.items() if v is None} <= set(row)
        assert row["source_chain"].split(CHAIN_SEPARATOR) == entry["source_chain"]
        assert row["actual_hz_exact"] == (entry["actual_hz_exact"] or "")  # null is an empty cell
        assert row["synthesis_error_exact"] == (entry["synthesis_error_exact"] or "")
        assert row["status"] == entry["status"]
        assert float(row["target_hz"]) == entry["target_hz"]


def test_csv_quotes_awkward_values():
    from dataclasses import replace

    analysis = analyze(load_board(BOARDS[0]))

    class Budget:
        def json_fields(self):
            return {"note": 'comma, "quote"\nand a new line', "limits_ppm": [-20, 20],
                    "jitter": {"rms_s": 2.5e-13, "band_hz": [12e3, 20e6]}}

    first = replace(analysis.consumers[0], accuracy=Budget())
    rows = list(csv.DictReader(io.StringIO(render_csv(analysis.with_consumer(first)), newline="")))
    assert rows[0]["note"] == 'comma, "quote"\nand a new line'
    assert json.loads(rows[0]["limits_ppm"]) == [-20, 20]
    assert float(rows[0]["jitter.rms_s"]) == 2.5e-13 and json.loads(rows[0]["jitter.band_hz"]) == [12e3, 20e6]
    assert rows[1]["note"] == ""


# --------------------------------------------------------------------------- Markdown


def test_markdown_tables_have_a_consistent_structure(analysis):
    text = render_markdown(analysis)
    tables = markdown_tables(text)
    consumers = tables[0]
    assert consumers[0][0] == "consumer" and consumers[0][-1] == "status"
    assert [row[0] for row in consumers[1:]] == [c.id for c in analysis.consumers]
    for table in tables:
        assert len({len(row) for row in table}) == 1, "every row has as many cells as the header"
    for row, result in zip(consumers[1:], analysis.consumers):
        word = {"PASS": "PASS", "FAIL": "FAIL", "warn": "warn", "unchecked": "unchecked"}
        assert any(w in row[-1] for w in word)
        assert ("FAIL" in row[-1]) == any(f.node == result.id and f.severity.value == "error" for f in analysis.findings)


def test_markdown_has_the_tree_in_a_code_block(analysis):
    tokens = MarkdownIt("commonmark").enable("table").parse(render_markdown(analysis))
    (tree,) = [t for t in tokens if t.type == "fence" and t.content.startswith(analysis.board.name + "\n")]
    assert tree.info == "text"
    for consumer in analysis.consumers:
        assert consumer.id in tree.content


@pytest.mark.parametrize(
    "text",
    ["a|b", "*bold*", "_under_", "[link](x)", "<b>tag</b>", "back\\slash", "`code`", "two\nlines", "# heading"],
)
def test_escaped_cells_come_back_verbatim(text):
    # The GFM table parser is the reference: the cell must read back as the text itself.
    table = f"| h |\n|---|\n| {escape_cell(text)} |\n"
    html = MarkdownIt("commonmark").enable("table").render(table)
    cell = re.search(r"<td>(.*)</td>", html, re.S).group(1)
    from html import unescape

    assert unescape(cell.replace("<br>", "\n")) == text


# --------------------------------------------------------------------------- HTML


class _Collector(HTMLParser):
    def __init__(self):
        super().__init__()
        self.stack, self.tables, self.references = [], 0, []
        self.text = []

    def handle_starttag(self, tag, attrs):
        if tag not in ("meta", "br", "img", "path", "polygon", "ellipse", "polyline", "text", "title", "g", "svg"):
            self.stack.append(tag)
        self.tables += tag == "table"
        for name, value in attrs:
            if name in ("src", "href", "xlink:href") and value:
                self.references.append(value)

    def handle_endtag(self, tag):
        if self.stack and self.stack[-1] == tag:
            self.stack.pop()

    def handle_data(self, data):
        if "style" not in self.stack:
            self.text.append(data)


def test_html_is_self_contained_and_balanced(analysis):
    page = render_html(analysis, images={"phase-noise.png": b"\x89PNG fake"})
    collector = _Collector()
    collector.feed(page)
    collector.close()
    assert page.startswith("<!DOCTYPE html>")
    assert collector.stack == [], "every opened element is closed"
    # consumers, budgets and their sources, settings, findings, and one per board-wide section that
    # offers report_table()
    tabled = sum(callable(getattr(extra, "report_table", None)) for extra in analysis.extras.values())
    assert collector.tables == 3 + (1 if analysis.findings else 0) + tabled
    # Nothing to fetch: every reference is inline data (no http, no file path).
    assert all(ref.startswith("data:image/png;base64,") for ref in collector.references)
    text = " ".join(collector.text)
    for consumer in analysis.consumers:
        assert consumer.id in text
    assert ("FAIL" in text) == analysis.has_errors


def test_html_escapes_board_text():
    from dataclasses import replace

    analysis = analyze(load_board(BOARDS[0]))
    hostile = replace(analysis, board=replace(analysis.board, name="<script>alert(1)</script> & co"))
    page = render_html(hostile)
    assert "<script>" not in page and "&lt;script&gt;" in page


# --------------------------------------------------------------------------- CLI


def test_format_list_in_the_cli_matches_the_renderers():
    assert _REPORT_FORMATS == FORMATS


@pytest.mark.parametrize(("name", "expected"), [("r.json", "json"), ("r.MD", "markdown"), ("r.csv", "csv"),
                                                ("r.html", "html"), ("r.txt", "table"), ("r.out", None)])
def test_format_follows_the_output_suffix(name, expected):
    assert format_for_path(name) == expected


@pytest.mark.parametrize("fmt", FORMATS)
def test_output_file_gets_the_same_text_as_stdout(fmt, tmp_path, capsys, monkeypatch):
    monkeypatch.setattr("clockplan.report.dot.dot_available", lambda: False)  # same page with or without Graphviz
    board = "boards/video-converter.toml"
    target = tmp_path / "report.out"
    assert main(["audit", board, "--format", fmt, "--output", str(target), "--width", "100"]) == 1
    assert "wrote" in capsys.readouterr().err
    main(["audit", board, "--format", fmt, "--width", "100", "--no-color"])
    assert target.read_bytes().decode("utf-8") == capsys.readouterr().out
    assert [p.name for p in tmp_path.iterdir()] == ["report.out"]  # no temporary left behind


def test_output_never_replaces_the_board(tmp_path, capsys):
    board = tmp_path / "board.toml"
    board.write_text(Path("boards/industrial-gateway.toml").read_text())
    before = board.read_text()
    assert main(["audit", str(board), "--format", "markdown", "--output", str(board)]) == 2
    assert "refusing to overwrite" in capsys.readouterr().err
    assert board.read_text() == before


def test_table_output_is_plain_when_piped(capsys):
    analysis = analyze(load_board("boards/video-converter.toml"))
    errors = sum(f.severity.value == "error" for f in analysis.findings)
    warnings = sum(f.severity.value == "warning" for f in analysis.findings)
    main(["audit", "boards/video-converter.toml", "--width", "100"])
    out = capsys.readouterr().out
    assert not ANSI.search(out)
    assert f"verdict: FAIL - {errors} error(s), {warnings} warning(s), 6 consumer(s)" in out


def test_no_color_environment_gives_plain_text(capsys, monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")
    monkeypatch.setenv("FORCE_COLOR", "1")  # even a forced terminal must not colour under NO_COLOR
    main(["audit", "boards/video-converter.toml", "--width", "100"])
    out = capsys.readouterr().out
    assert not re.search(r"\x1b\[[0-9;]*3[0-9]m", out), "no foreground colour codes"
    assert "FAIL" in out


@pytest.mark.parametrize(
    ("board", "fail_on", "status"),
    [
        ("boards/video-converter.toml", "error", 1),  # an error finding
        ("boards/video-converter.toml", "warning", 1),
        ("boards/industrial-gateway.toml", "error", 0),  # no error: uart_clk inexact (info), budgets unchecked
        # The exact audit alone computes no ppm or jitter budget: every budget is unchecked (a warning each),
        # which --fail-on unchecked and --fail-on warning both fail on (exit 0 before unchecked existed).
        ("boards/industrial-gateway.toml", "unchecked", 1),
        ("boards/industrial-gateway.toml", "warning", 1),
        ("boards/video-converter.toml", "unchecked", 1),
    ],
)
def test_fail_on_sets_the_exit_status(board, fail_on, status, capsys, monkeypatch):
    from clockplan import analysis as pipeline

    monkeypatch.setattr(pipeline, "STAGES", [])  # the exact audit alone: its findings are known
    assert main(["audit", board, "--format", "json", "--fail-on", fail_on]) == status


def test_fail_on_warning_counts_warnings(capsys, monkeypatch):
    from clockplan.findings import Finding, Severity

    from .test_report_terminal import exact_audit

    clean = exact_audit("boards/industrial-gateway.toml")  # the exact audit of this board has no error
    warned = clean.with_findings([Finding(Severity.WARNING, "test", "phy0", "a warning")])
    monkeypatch.setattr("clockplan.cli._analyze_with_progress", lambda *a, **k: warned)
    assert main(["audit", "boards/industrial-gateway.toml", "--json", "--fail-on", "warning"]) == 1
    assert main(["audit", "boards/industrial-gateway.toml", "--json", "--fail-on", "error"]) == 0


# --------------------------------------------------------------------------- upstream problems


def _minimal(old: str, new: str):
    from clockplan.boardfile import parse_board

    from .boards import MINIMAL

    text = MINIMAL.replace(old, new)
    assert text != MINIMAL
    return analyze(parse_board(text, "minimal.toml"))


def test_a_failing_pll_fails_its_consumers_in_every_report():
    # 25 MHz x 100 = 2.5 GHz, below a 2.6 GHz VCO range: the PLL cannot run, so neither can its loads,
    # although their frequencies are on target.
    analysis = _minimal('vco = ["2.4 GHz", "3.2 GHz"]', 'vco = ["2.6 GHz", "3.2 GHz"]')
    doc = json.loads(render_report(analysis, "json"))
    assert [(c["status"], c["chain_status"]) for c in doc["consumers"]] == [("pass", "fail"), ("pass", "fail")]
    assert all("FAIL" in row[-1] for row in markdown_tables(render_markdown(analysis))[0][1:])
    rows = list(csv.DictReader(io.StringIO(render_csv(analysis), newline="")))
    assert [r["chain_status"] for r in rows] == ["fail", "fail"]
    text = render_report(analysis, "table", width=120)
    assert "phy0 (consumer) 125 MHz FAIL" in text


def test_an_unset_board_renders_in_every_format():
    analysis = _minimal('settings = { r = 1, n = "100", outputs = { out0 = 20, out1 = 16 } }', "")
    for fmt in FORMATS:
        text = render_report(analysis, fmt)
        assert "phy0" in text
    assert "unset" in render_report(analysis, "table", width=120)
    doc = json.loads(render_report(analysis, "json"))
    assert doc["consumers"][0]["actual_hz"] is None and doc["consumers"][0]["chain_status"] == "fail"


def test_a_failing_graphviz_leaves_the_html_tree(monkeypatch):
    from clockplan.errors import ClockplanError
    from clockplan.report.html import build_html

    def broken(text, timeout_s=60.0):
        raise ClockplanError("Graphviz 'dot' failed: simulated")

    monkeypatch.setattr("clockplan.report.dot.dot_available", lambda: True)
    monkeypatch.setattr("clockplan.report.dot.render_svg", broken)
    page = build_html(analyze(load_board(BOARDS[0])))
    assert '<ul class="tree">' in page and "<svg" not in page


def test_board_wide_sections_of_the_budget_stages_reach_every_format():
    class Advice:  # only a terminal view, as a stage may first offer
        def rich_renderable(self):
            from rich.text import Text

            return Text("Reference advice: ref_main fits")

    class Yields:  # a plain table for every format
        def report_table(self):
            return "Yield", ("consumer", "inside budget"), [("phy0", "99.5 %")]

    from dataclasses import replace

    analysis = analyze(load_board(BOARDS[0]))
    analysis = replace(analysis, extras={"advice": Advice(), "yields": Yields()})
    markdown = render_markdown(analysis)
    assert "```text\nReference advice: ref_main fits\n```" in markdown
    assert ["consumer", "inside budget"] in [t[0] for t in markdown_tables(markdown)]
    page = render_html(analysis)
    assert "Reference advice: ref_main fits</pre>" in page and "<h2>Yield</h2>" in page
    text = render_report(analysis, "table", width=100)
    assert "Reference advice: ref_main fits" in text and "99.5 %" in text


@pytest.mark.parametrize("fmt", ["markdown", "csv", "html"])
def test_plan_reports_in_every_format(fmt, tmp_path, capsys):
    # The planned settings go through the same renderers: the consumers all come back with a frequency.
    target = tmp_path / f"plan.{fmt}"
    status = main(["plan", "boards/edge-router.toml", "--format", fmt, "--output", str(target)])
    analysis_ids = [c.id for c in load_board("boards/edge-router.toml").consumers]
    text = target.read_bytes().decode("utf-8")
    if fmt == "csv":
        rows = list(csv.DictReader(io.StringIO(text, newline="")))
        assert [r["id"] for r in rows] == analysis_ids and all(r["actual_hz_exact"] for r in rows)
    elif fmt == "markdown":
        assert text.startswith("# clockplan plan: ") and [r[0] for r in markdown_tables(text)[0][1:]] == analysis_ids
    else:
        assert text.startswith("<!DOCTYPE html>") and all(i in text for i in analysis_ids)
    assert status in (0, 1)
