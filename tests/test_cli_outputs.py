"""What ``--output``, ``plots -d`` and ``explain --json`` promise in the README and docs/reports.md."""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest

from clockplan.boardfile import load_board
from clockplan.cli import main
from clockplan.report.formats import format_for_path, output_format
from clockplan.starter import starter_text
from tests.test_report_dot import read_dot  # noqa: F401  (the fixture: networkx reads DOT through pydot)

ROOT = Path(__file__).resolve().parent.parent
BOARD = str(ROOT / "boards" / "edge-router.toml")


@pytest.mark.parametrize("command", [["audit", BOARD], ["plan", BOARD]])
def test_output_dot_writes_the_tree_diagram(command, tmp_path, capsys, read_dot):
    target = tmp_path / "review.dot"
    assert main([*command, "--output", str(target)]) in (0, 1)
    text = target.read_text(encoding="utf-8")
    assert text.startswith("digraph clock_tree {")
    # A real graph (read back by networkx through pydot), not a text report with a diagram's name.
    graph = read_dot(target)
    assert "sfp_a" in {str(n).strip('"') for n in graph.nodes}


def test_output_svg_draws_with_graphviz_or_refuses(tmp_path, capsys):
    target = tmp_path / "review.svg"
    status = main(["audit", BOARD, "--output", str(target)])
    if shutil.which("dot") is None:
        assert status == 2 and not target.exists()
        assert "Graphviz 'dot' program is not installed" in capsys.readouterr().err
    else:
        assert status in (0, 1) and "<svg" in target.read_text(encoding="utf-8")


@pytest.mark.parametrize("name", ["review.pdf", "review", "review.tex", ".hidden"])
def test_unknown_output_suffix_is_a_usage_error_and_writes_nothing(name, tmp_path, capsys):
    target = tmp_path / name
    assert main(["audit", BOARD, "--output", str(target)]) == 2
    err = capsys.readouterr().err
    assert f"--output {target}" in err and "hint:" in err and "--format" in err
    assert not target.exists()


def test_explicit_format_names_any_file(tmp_path, capsys):
    target = tmp_path / "review.log"
    assert main(["audit", BOARD, "--format", "markdown", "--output", str(target)]) in (0, 1)
    assert target.read_text(encoding="utf-8").startswith("# clockplan audit")


@pytest.mark.parametrize(
    ("path", "fmt"),
    [("a.txt", "table"), ("a.JSON", "json"), ("a.md", "markdown"), ("a.markdown", "markdown"), ("a.csv", "csv"),
     ("a.htm", "html"), ("a.html", "html"), ("a.dot", "dot"), ("a.gv", "dot"), ("a.svg", "svg"), ("d.x/a.md", "markdown")],
)
def test_every_documented_suffix(path, fmt):
    assert format_for_path(path) == fmt == output_format(path)


def test_diagram_refuses_a_suffix_it_cannot_write(tmp_path, capsys):
    target = tmp_path / "tree.png"
    assert main(["diagram", BOARD, "-o", str(target)]) == 2
    assert ".dot or .svg" in capsys.readouterr().err and not target.exists()


def test_plots_creates_a_missing_folder(tmp_path, capsys):
    pytest.importorskip("matplotlib")
    folder = tmp_path / "plots" / "nested"
    assert main(["plots", str(ROOT / "boards" / "industrial-gateway.toml"), "-d", str(folder), "--samples", "200"]) == 0
    out = capsys.readouterr().out
    assert f"created the folder {folder}" in out
    assert sorted(p.name for p in folder.glob("*.png"))


def test_plots_refuses_a_file_in_place_of_the_folder(tmp_path, capsys):
    pytest.importorskip("matplotlib")
    blocker = tmp_path / "plots"
    blocker.write_text("not a folder", encoding="utf-8")
    assert main(["plots", str(ROOT / "boards" / "industrial-gateway.toml"), "-d", str(blocker)]) == 2
    assert "is not a folder" in capsys.readouterr().err
    assert blocker.read_text(encoding="utf-8") == "not a folder"


def test_explain_takes_json_like_every_command(capsys):
    status = main(["explain", BOARD, "sfp_a", "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert doc["command"] == "explain" and status in (0, 1)
    assert main(["explain", BOARD, "sfp_a", "--json", "--format", "markdown"]) == 2


def test_explain_output_suffix_decides_its_format(tmp_path, capsys):
    target = tmp_path / "why.md"
    assert main(["explain", BOARD, "sfp_a", "-o", str(target)]) in (0, 1)
    assert target.read_text(encoding="utf-8").lstrip().startswith("#")
    assert main(["explain", BOARD, "sfp_a", "-o", str(tmp_path / "why.csv")]) == 2


def test_standards_doc_consumer_example_loads(tmp_path):
    # docs/standards.md's example, on the starter board (its 100 MHz output stands for the PCIe one).
    text = (ROOT / "docs" / "standards.md").read_text(encoding="utf-8")
    block = re.search(r"```toml\n(\[\[consumer\]\].*?)```", text, re.S).group(1)
    block = re.sub(r'source = "[^"]*"', 'source = "sys_pll.core"', block)
    board_file = tmp_path / "board.toml"
    board_file.write_text(starter_text() + "\n" + block, encoding="utf-8")
    board = load_board(board_file)
    assert board.part("ssd").standard


@pytest.mark.parametrize("command", [["audit", BOARD], ["diagram", BOARD], ["explain", BOARD, "sfp_a"]])
def test_a_special_output_needs_no_suffix(command, capsys):
    # /dev/null (common in CI scripts) is a device: its name tells no format, the default one is written.
    assert main([*command, "--output", "/dev/null"]) in (0, 1)
    assert "error" not in capsys.readouterr().err
