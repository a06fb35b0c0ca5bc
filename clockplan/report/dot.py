"""The clock tree as a Graphviz DOT diagram, and as SVG when Graphviz is installed.

Nodes are the signal graph's nodes (``clockplan.graph``), labelled with their
exact frequency; a PLL shows R, N and its VCO, an edge into a PLL output its
divider. A consumer says ``PASS``, ``warn`` or ``FAIL`` in its label; any part
with an error or warning is also drawn red or orange, with the finding codes,
so the diagram still reads right in black and white.
"""

from __future__ import annotations

import shutil
import subprocess

from clockplan.analysis import Analysis
from clockplan.errors import ClockplanError
from clockplan.findings import Severity
from clockplan.report.content import consumer_status, operating_mode, status_codes, status_of
from clockplan.units import format_exact, format_frequency

__all__ = ["INSTALL_HINT", "dot_quote", "render_dot", "dot_available", "render_svg"]

#: How to get the ``dot`` program, printed when it is missing.
INSTALL_HINT = (
    "install Graphviz, which provides the 'dot' program: 'apt-get install graphviz' (Debian, Ubuntu), "
    "'dnf install graphviz' (Fedora), 'brew install graphviz' (macOS), 'winget install graphviz' (Windows); "
    "or write the DOT text with '--output tree.dot' and render it elsewhere"
)

_SHAPE = {
    "reference": ("ellipse", "#e3f2fd"),
    "pll": ("box3d", "#ede7f6"),
    "pll_output": ("box", "#f3e5f5"),
    "divider": ("trapezium", "#fff8e1"),
    "buffer": ("cds", "#e0f2f1"),
    "consumer": ("box", "#e8f5e9"),
}
_STATUS_COLOUR = {"FAIL": ("#c62828", "#ffebee"), "warn": ("#ef6c00", "#fff3e0"), "unchecked": ("#6a1b9a", "#f3e5f5")}


def dot_quote(text: str) -> str:
    r"""A DOT double-quoted string; newlines become DOT's ``\n`` (centred line break).

    Examples
    --------
    >>> dot_quote('say "hi"')
    '"say \\"hi\\""'
    """
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'


def _attributes(**values: str | float) -> str:
    return "[" + ", ".join(f"{k}={dot_quote(str(v))}" for k, v in values.items()) + "]"


def _node_lines(analysis: Analysis, node: str, role: str) -> list[str]:
    hz = analysis.frequencies.nodes.get(node)
    frequency = format_frequency(hz) if hz is not None else "unset"
    if role == "pll":
        pll = analysis.board.part(node)
        setting = analysis.settings.plls.get(node)
        lines = [node, f"PLL {operating_mode(pll, setting)}"]
        if setting is not None:
            lines.append(f"R={setting.r}  N={format_exact(setting.n)}")
        return lines + [f"VCO {frequency}"]
    if role == "consumer":
        result = analysis.consumer(node)
        lines = [node, frequency]
        if result.synthesis_error:
            lines.append(f"target {format_frequency(result.target_hz)}")
        return lines
    if role == "pll_output":
        return [node.split(".", 1)[1], frequency]
    kind = analysis.board.part(node).kind if role == "reference" else role
    return [node, f"{kind} {frequency}" if role == "reference" else frequency]


def _edge_label(analysis: Analysis, source: str, target: str, role: str) -> str:
    if role == "pll_output":
        setting = analysis.settings.plls.get(source)
        divider = setting.dividers.get(target.split(".", 1)[1]) if setting else None
        return f"÷{divider}" if divider is not None else "÷?"
    if role == "divider":
        ratio = analysis.settings.dividers.get(target)
        return f"÷{ratio}" if ratio is not None else "÷?"
    return ""


def render_dot(analysis: Analysis) -> str:
    """The clock tree as DOT text (left to right, references on the left).

    Examples
    --------
    >>> text = render_dot(result)  # doctest: +SKIP
    >>> text.startswith("digraph clock_tree {")  # doctest: +SKIP
    True
    """
    graph = analysis.graph
    out = [
        "digraph clock_tree {",
        f"  graph {_attributes(rankdir='LR', label=analysis.board.name, labelloc='t', fontname='Helvetica', fontsize=14)};",
        f"  node {_attributes(fontname='Helvetica', fontsize=10, style='filled')};",
        f"  edge {_attributes(fontname='Helvetica', fontsize=9)};",
    ]
    for node in graph.nodes:
        role = graph.nodes[node]["role"]
        shape, fill = _SHAPE[role]
        extra: dict[str, str | float] = {"style": "filled,rounded"} if role == "consumer" else {}
        if role == "divider":
            extra["margin"] = "0.02,0.02"  # a trapezium's default margin makes it twice as wide as its text
        lines = _node_lines(analysis, node, role)
        status = consumer_status(analysis, node) if role == "consumer" else status_of(analysis, node)
        if status in _STATUS_COLOUR:
            colour, fill = _STATUS_COLOUR[status]
            extra.update(color=colour, penwidth=2.5, fontcolor=colour)
            codes = (status_codes(analysis, node) if role == "consumer" else
                     sorted({f.code for f in analysis.findings if f.node == node and f.severity is not Severity.INFO}))
            lines.append(f"{status} ({', '.join(codes)})")
        elif role == "consumer":
            lines.append(status)
        label = "\n".join(lines)
        out.append(f"  {dot_quote(node)} {_attributes(label=label, shape=shape, fillcolor=fill, **extra)};")
    for source, target in graph.edges:
        label = _edge_label(analysis, source, target, graph.nodes[target]["role"])
        attrs = f" {_attributes(label=label)}" if label else ""
        out.append(f"  {dot_quote(source)} -> {dot_quote(target)}{attrs};")
    out.append("}")
    return "\n".join(out) + "\n"


def dot_available() -> bool:
    """True if Graphviz's ``dot`` program is on the PATH."""
    return shutil.which("dot") is not None


def render_svg(dot_text: str, timeout_s: float = 60.0) -> str:
    """Render DOT text to SVG with Graphviz's ``dot`` program.

    Raises
    ------
    ClockplanError
        ``dot`` is not installed (the hint says how to install it), or it failed.

    Examples
    --------
    >>> svg = render_svg(render_dot(result))  # doctest: +SKIP
    """
    program = shutil.which("dot")
    if program is None:
        raise ClockplanError("the Graphviz 'dot' program is not installed, so no SVG can be drawn", hint=INSTALL_HINT)
    try:
        done = subprocess.run([program, "-Tsvg"], input=dot_text.encode("utf-8"), capture_output=True,
                              timeout=timeout_s, check=False)
    except subprocess.TimeoutExpired as err:
        raise ClockplanError(f"Graphviz 'dot' took longer than {timeout_s:g} s",
                             hint="write the DOT text with '--output tree.dot' and render it separately") from err
    if done.returncode != 0:
        message = done.stderr.decode("utf-8", "replace").strip() or f"exit status {done.returncode}"
        raise ClockplanError(f"Graphviz 'dot' failed: {message}", hint="write the DOT text with '--output tree.dot'")
    return done.stdout.decode("utf-8")
