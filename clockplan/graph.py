"""The board as a directed signal graph, built on demand from the domain model.

Nodes are part ids, plus one node per PLL output named ``"<pll>.<output>"``.
Edges run in the direction of the signal. Each node carries ``part`` (the
dataclass) and ``role`` (``reference``, ``pll``, ``pll_output``, ``divider``,
``buffer`` or ``consumer``); the dataclasses stay the data model.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from clockplan.errors import BoardError, did_you_mean

if TYPE_CHECKING:  # networkx is imported lazily: it costs start-up time
    import networkx as nx

    from clockplan.parts import Board

__all__ = ["build_graph", "source_nodes", "chain_to", "consumers_below", "check_topology"]


def source_nodes(board: "Board") -> list[str]:
    """Every node id a signal can be taken from (references, PLL outputs, dividers, buffers)."""
    nodes = [r.id for r in board.references]
    nodes += [f"{p.id}.{o.name}" for p in board.plls for o in p.outputs]
    nodes += [d.id for d in board.dividers] + [b.id for b in board.buffers]
    return nodes


def _key(board: "Board", group: str, index: int, field: str) -> tuple[str, int | None]:
    key = f"{group}[{index}].{field}"
    return key, board.lines.get(key) or board.lines.get(f"{group}[{index}]")


def _check_source(board: "Board", sources: set[str], group: str, index: int, field: str, value: str) -> None:
    if value in sources:
        return
    key, line = _key(board, group, index, field)
    pll_ids = {p.id for p in board.plls}
    if value in pll_ids:
        outs = ", ".join(f"'{value}.{o.name}'" for o in board.part(value).outputs)
        hint = f"a PLL is used through one of its outputs: {outs}"
    else:
        hint = did_you_mean(value, sources) or "known sources: " + ", ".join(sorted(sources)[:12])
    raise BoardError(f"unknown source {value!r}", file=board.source_file, key=key, line=line, hint=hint)


def build_graph(board: "Board") -> "nx.DiGraph":
    """Build the signal graph of ``board`` and check its topology.

    Raises
    ------
    BoardError
        A source that does not exist, a loop, or a buffer with more loads than outputs.
    """
    import networkx as nx

    graph = nx.DiGraph()
    sources = set(source_nodes(board))
    for ref in board.references:
        graph.add_node(ref.id, part=ref, role="reference")
    for group, parts, role in (("pll", board.plls, "pll"), ("divider", board.dividers, "divider"), ("buffer", board.buffers, "buffer")):
        for index, part in enumerate(parts):
            _check_source(board, sources, group, index, "input", part.input)
            graph.add_node(part.id, part=part, role=role)
            graph.add_edge(part.input, part.id)
    for pll in board.plls:
        for out in pll.outputs:
            graph.add_node(f"{pll.id}.{out.name}", part=out, role="pll_output", pll=pll.id)
            graph.add_edge(pll.id, f"{pll.id}.{out.name}")
    for index, consumer in enumerate(board.consumers):
        _check_source(board, sources, "consumer", index, "source", consumer.source)
        graph.add_node(consumer.id, part=consumer, role="consumer")
        graph.add_edge(consumer.source, consumer.id)
    check_topology(board, graph)
    return graph


def check_topology(board: "Board", graph: "nx.DiGraph") -> None:
    """Refuse loops and over-subscribed buffers (every node then has one path to a reference)."""
    import networkx as nx

    try:
        cycle = nx.find_cycle(graph)
    except nx.NetworkXNoCycle:
        cycle = None
    if cycle:
        loop = " -> ".join([edge[0] for edge in cycle] + [cycle[0][0]])
        raise BoardError(
            f"the clock tree has a loop: {loop}",
            file=board.source_file,
            hint="every part must be fed, directly or through others, by a reference; break the loop",
        )
    for index, buffer in enumerate(board.buffers):
        loads = graph.out_degree(buffer.id)
        if loads > buffer.outputs:
            key, line = _key(board, "buffer", index, "outputs")
            raise BoardError(
                f"buffer {buffer.id!r} feeds {loads} loads but has {buffer.outputs} outputs",
                file=board.source_file,
                key=key,
                line=line,
                hint="raise 'outputs' to the part's real output count, or add a second buffer",
            )


def chain_to(graph: "nx.DiGraph", node: str) -> list[str]:
    """The node ids from the root reference down to ``node`` (inclusive).

    Examples
    --------
    ``chain_to(g, "phy0")`` might give ``["ref_main", "pll_a", "pll_a.out0", "phy0"]``.
    """
    path = [node]
    while True:
        parents = list(graph.predecessors(path[-1]))
        if not parents:
            return path[::-1]
        path.append(parents[0])


def consumers_below(graph: "nx.DiGraph", node: str) -> list[str]:
    """The consumer ids fed, directly or through other parts, by ``node``."""
    import networkx as nx

    return sorted(n for n in nx.descendants(graph, node) if graph.nodes[n]["role"] == "consumer")
