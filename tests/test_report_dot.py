"""The clock-tree diagram: DOT read back by networkx's reader, SVG drawn by Graphviz.

References outside the project: networkx's ``read_dot`` (through pydot, which
parses the DOT language as Graphviz documents it) must give back exactly the
nodes and edges of the signal graph; Graphviz's own ``dot`` program must
accept the text and draw one SVG node per graph node (skipped where Graphviz
is not installed).
"""

import shutil
import warnings
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import load_board
from clockplan.cli import main
from clockplan.report.dot import dot_quote, render_dot, render_svg
from clockplan.units import format_frequency

BOARDS = sorted(str(p) for p in Path("boards").glob("*.toml"))


@pytest.fixture(scope="module", params=BOARDS)
def analysis(request):
    return analyze(load_board(request.param))


@pytest.fixture(scope="module")
def read_dot():
    pytest.importorskip("pydot", reason="pydot (test extra) lets networkx read DOT")
    with warnings.catch_warnings():
        # pydot's grammar trips a pyparsing diagnostic warning on import with pyparsing >= 3.3;
        # it is about pydot's own parser construction, not about the DOT being read.
        warnings.simplefilter("ignore")
        import pydot.dot_parser  # noqa: F401
    import networkx as nx

    return nx.nx_pydot.read_dot


def test_networkx_reads_back_the_same_graph(analysis, read_dot, tmp_path):
    path = tmp_path / "tree.dot"
    path.write_text(render_dot(analysis), encoding="utf-8")
    graph = read_dot(path)
    assert set(graph.nodes) == set(analysis.graph.nodes)
    assert {(a, b) for a, b, _ in graph.edges} == set(analysis.graph.edges)


def test_labels_carry_frequencies_and_status(analysis, read_dot, tmp_path):
    path = tmp_path / "tree.dot"
    path.write_text(render_dot(analysis), encoding="utf-8")
    graph = read_dot(path)
    for result in analysis.consumers:
        label = graph.nodes[result.id]["label"].strip('"')
        expected = format_frequency(result.actual_hz) if result.actual_hz is not None else "unset"
        assert expected in label
        failing = any(f.node == result.id and f.severity.value == "error" for f in analysis.findings)
        assert ("FAIL" in label) == failing
        # A budget no stage could compute reads "unchecked", never PASS (the demo's PCIe jitter, SDI jitter).
        assert ("unchecked" in label) == (bool(result.unchecked) and not failing)
        warned = any(f.node == result.id and f.severity.value == "warning" for f in analysis.findings)
        assert ("PASS" in label) == (not failing and not result.unchecked and not warned)
        if failing:  # marked by colour as well as by the word
            assert graph.nodes[result.id]["color"].strip('"') == "#c62828"
    for pll in analysis.board.plls:
        vco = analysis.frequencies.nodes.get(pll.id)
        expected = format_frequency(vco) if vco is not None else "unset"  # an open board has no VCO yet
        assert f"VCO {expected}" in graph.nodes[pll.id]["label"]


@pytest.mark.parametrize(("text", "quoted"), [
    ("plain", '"plain"'),
    ('say "hi"', '"say \\"hi\\""'),
    ("back\\slash", '"back\\\\slash"'),
    ("two\nlines", '"two\\nlines"'),
])
def test_dot_quoting(text, quoted):
    # DOT language (Graphviz docs): in a double-quoted string the only escaped quote is \".
    assert dot_quote(text) == quoted


@pytest.mark.skipif(shutil.which("dot") is None, reason="Graphviz 'dot' is not installed")
def test_graphviz_draws_every_node(analysis):
    svg = render_svg(render_dot(analysis))
    root = ET.fromstring(svg)
    ns = {"svg": "http://www.w3.org/2000/svg"}
    titles = {g.find("svg:title", ns).text for g in root.iter("{http://www.w3.org/2000/svg}g")
              if g.get("class") == "node"}
    assert titles == set(analysis.graph.nodes)


@pytest.mark.skipif(shutil.which("dot") is None, reason="Graphviz 'dot' is not installed")
def test_diagram_command_writes_svg(tmp_path, capsys):
    target = tmp_path / "tree.svg"
    assert main(["diagram", "boards/video-converter.toml", "--output", str(target)]) == 0
    assert ET.fromstring(target.read_text(encoding="utf-8")).tag == "{http://www.w3.org/2000/svg}svg"


def test_diagram_command_writes_dot_to_stdout(capsys):
    assert main(["diagram", "boards/industrial-gateway.toml"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("digraph clock_tree {") and out.rstrip().endswith("}")


def test_missing_graphviz_says_how_to_install_it(monkeypatch, capsys):
    monkeypatch.setattr("clockplan.report.dot.shutil.which", lambda name: None)
    assert main(["diagram", "boards/video-converter.toml", "--format", "svg"]) == 2
    err = capsys.readouterr().err
    assert "not installed" in err and "apt-get install graphviz" in err and "--output tree.dot" in err
