"""Showing a synthesis: the best tree's audit report, the best trees side by side, the reasons.

The terminal view prints the best tree as ``audit`` would print its written
board (tree, consumers, reference advice, settings, findings), then a table
with one column per proposed tree (parts, power, cost, worst margin, the
reference and every part), then the explanations and what the search did.
The JSON document (:func:`synthesis_document`) carries the same content; its
keys are listed in ``docs/synthesis.md``.
"""

from __future__ import annotations

from collections import Counter
from typing import TYPE_CHECKING, Any

from clockplan.synth.build import tree_parts
from clockplan.synth.library import TYPICAL_NOTE
from clockplan.synth.tree import Problem, Tree
from clockplan.units import format_frequency, format_quantity

if TYPE_CHECKING:
    from rich.console import Console, RenderableType

    from clockplan.synth.synthesize import ProposedTree, SynthesisResult

__all__ = ["describe_tree", "comparison_table", "render_synthesis", "synthesis_document"]


def _frequencies(problem: Problem, classes: tuple[int, ...]) -> str:
    return ", ".join(
        format_frequency(problem.classes[c].frequency) + (f" ×{problem.classes[c].count}" if problem.classes[c].count > 1 else "")
        for c in classes
    )


def describe_tree(problem: Problem, tree: Tree) -> dict[str, Any]:
    """The parts of a tree in words: reference, PLLs (template and the frequencies they make), oscillators,
    dividers and buffers (counts by template).

    Examples
    --------
    >>> describe_tree(problem, tree)["plls"]  # doctest: +SKIP
    ['cleaner-8: 156.25 MHz ×2, 125 MHz, 100 MHz ×2']
    """
    parts = tree_parts(problem, tree)
    plls, oscillators = [], []
    for block in tree.blocks:
        text = f"{block.kind.name}: {_frequencies(problem, block.members())}"
        (plls if block.is_pll else oscillators).append(text)
    reference = None
    if tree.uses_reference and tree.reference is not None:
        direct = _frequencies(problem, tuple(d.cls for d in tree.direct))
        reference = tree.reference.label() + (f" (also serves {direct})" if direct else "")
    dividers = Counter(p.template.name for p in parts.parts if p.role == "divider")
    buffers = Counter(p.template.name for p in parts.parts if p.role == "buffer")
    return {
        "reference": reference,
        "plls": plls,
        "oscillators": oscillators,
        "dividers": [f"{name} ×{n}" for name, n in sorted(dividers.items())],
        "buffers": [f"{name} ×{n}" for name, n in sorted(buffers.items())],
    }


def _power(watts) -> str:
    return format_quantity(watts, "W", 4)


def _margin(margin: float | None) -> str:
    return "-" if margin is None else f"{margin * 100:.0f} %"  # spaced like every other percentage clockplan prints


def _verdict(proposed: "ProposedTree") -> str:
    """``FAIL``, or the written board's own verdict: ``UNCHECKED`` when a budget could not be computed, else ``PASS``."""
    from clockplan.report.content import board_verdict

    return board_verdict(proposed.verified.analysis) if proposed.passes else "FAIL"


def comparison_table(result: "SynthesisResult") -> "RenderableType":
    """One column per proposed tree: objective figures, then the parts."""
    from rich.table import Table

    trees: list[ProposedTree] = result.trees + result.failing
    table = Table(title="Trees side by side (best first)", title_justify="left", header_style="bold", show_lines=True)
    table.add_column("")
    for proposed in trees:
        table.add_column(f"tree {proposed.rank}" if proposed.passes else "fails", overflow="fold")
    descriptions = [describe_tree(result.problem, p.candidate.tree) for p in trees]
    best = trees[0].candidate.cost if trees else None
    rows = [
        ("verdict", [_verdict(p) for p in trees]),
        ("parts", [str(p.candidate.cost.parts) for p in trees]),
        ("power", [_power(p.candidate.cost.power_w) for p in trees]),
        ("relative cost", [f"{float(p.candidate.cost.cost):g}" for p in trees]),
        ("worst margin", [_margin(p.candidate.margin) for p in trees]),
    ]
    if best is not None:
        rows.append(("vs best", [_delta(best, p.candidate.cost) for p in trees]))
    rows += [
        ("reference", [d["reference"] or "-" for d in descriptions]),
        ("PLLs", ["\n".join(d["plls"]) or "-" for d in descriptions]),
        ("oscillators", ["\n".join(d["oscillators"]) or "-" for d in descriptions]),
        ("dividers", ["\n".join(d["dividers"]) or "-" for d in descriptions]),
        ("buffers", ["\n".join(d["buffers"]) or "-" for d in descriptions]),
    ]
    for label, cells in rows:
        table.add_row(label, *cells)
    return table


def _delta(best, cost) -> str:
    if cost == best:
        return "best" if cost is best else "same cost"
    return f"{cost.parts - best.parts:+d} parts, {float(cost.power_w - best.power_w) * 1000:+.0f} mW, {float(cost.cost - best.cost):+g} cost"


def _search_line(result: "SynthesisResult") -> str:
    stats = result.stats
    state = "stopped at its time limit" if stats.stopped else "complete"
    return (
        f"search: {stats.leaves} grouping(s) judged, {stats.nodes} node(s), {result.evaluator.checked} block check(s) "
        f"with the planner and the budget stages, {result.elapsed_s:.2f} s ({state})"
    )


def render_synthesis(result: "SynthesisResult", console: "Console") -> None:
    """Print the best tree's audit report, the trees side by side, the explanations and the search figures."""
    from clockplan.report.terminal import render_analysis

    spec = result.problem.spec
    where = f" ({spec.source_file})" if spec.source_file else ""
    best = result.best
    if best is not None:
        render_analysis(best.verified.analysis, console, title="synthesize: tree 1 (best)")
    else:
        from rich.markup import escape

        console.print(f"[bold]clockplan synthesize[/]: {escape(spec.name)}{escape(where)}")
        console.print("[bold red]NO TREE MEETS EVERY BUDGET[/] with the allowed parts")
    if result.trees or result.failing:
        console.print(comparison_table(result))
    for line in result.explanation.lines():
        console.print(line, markup=False)
    for note in result.notes:
        console.print(f"note: {note}", markup=False)
    console.print(_search_line(result), markup=False)
    console.print(f"Parts are generic templates: {TYPICAL_NOTE}.", markup=False)


def _tree_fields(result: "SynthesisResult", proposed: "ProposedTree") -> dict[str, Any]:
    from clockplan.report.json import number

    candidate = proposed.candidate
    return {
        "rank": proposed.rank if proposed.passes else None,
        "passes": proposed.passes,
        "parts": candidate.cost.parts,
        "power_w": number(candidate.cost.power_w),
        "relative_cost": number(candidate.cost.cost),
        "worst_margin": candidate.margin,
        **describe_tree(result.problem, candidate.tree),
        "failures": proposed.verified.check.reasons(),
    }


def synthesis_document(result: "SynthesisResult", include_board: bool = True) -> dict[str, Any]:
    """The JSON document of ``clockplan synthesize``.

    ``best`` is the audit document (docs/json-output.md) of the best tree's
    written board; ``best_board_toml`` its text.
    """
    from clockplan.analysis import CAVEAT
    from clockplan.report.json import analysis_document

    spec = result.problem.spec
    best = result.best
    document: dict[str, Any] = {
        "schema": 1,
        "command": "synthesize",
        "board": {"name": spec.name, "file": spec.source_file},
        "verdict": _verdict(best).lower() if best is not None else "infeasible",
        "objective": ["parts", "power_w", "relative_cost", "worst_margin"],
        "trees": [_tree_fields(result, p) for p in result.trees + result.failing],
        "explanations": result.explanation.json_fields(),
        "search": {
            "elapsed_s": round(result.elapsed_s, 3),
            "groupings_judged": result.stats.leaves,
            "nodes": result.stats.nodes,
            "block_checks": result.evaluator.checked,
            "complete": not result.stats.stopped,
        },
        "notes": list(result.notes) + [f"parts are generic templates: {TYPICAL_NOTE}"],
        "caveat": CAVEAT,
    }
    if best is not None:
        document["best"] = analysis_document(best.verified.analysis, "synthesize")
        if include_board:
            document["best_board_toml"] = best.verified.text
    return document
