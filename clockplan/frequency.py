"""Exact frequency propagation through the tree, from given settings."""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

from clockplan.parts import Board, Buffer, Consumer, Divider, Pll, PllOutput, PllSetting, Reference, Settings

if TYPE_CHECKING:
    import networkx as nx

__all__ = ["PllOperatingPoint", "Frequencies", "propagate", "synthesis_error"]


@dataclass(frozen=True)
class PllOperatingPoint:
    """Where a PLL runs: its input, PFD and VCO frequencies (exact) and its setting."""

    input_hz: Fraction
    pfd_hz: Fraction
    vco_hz: Fraction
    setting: PllSetting


@dataclass(frozen=True)
class Frequencies:
    """Exact frequency of every node that the settings determine.

    Nodes downstream of an unset part are absent from ``nodes``.
    """

    nodes: dict[str, Fraction]
    plls: dict[str, PllOperatingPoint]


def propagate(board: Board, graph: "nx.DiGraph", settings: Settings) -> Frequencies:
    """Compute every node's exact frequency from ``settings``.

    A PLL's node carries its VCO frequency; ``"pll.out"`` nodes its outputs.

    Examples
    --------
    A 25 MHz reference, R = 1, N = 100 gives a 2.5 GHz VCO; an output divider
    of 20 gives exactly 125 MHz.
    """
    import networkx as nx

    nodes: dict[str, Fraction] = {}
    plls: dict[str, PllOperatingPoint] = {}
    for node in nx.topological_sort(graph):
        part = graph.nodes[node]["part"]
        parents = list(graph.predecessors(node))
        upstream = nodes.get(parents[0]) if parents else None
        if isinstance(part, Reference):
            nodes[node] = part.frequency
        elif upstream is None:
            continue
        elif isinstance(part, Pll):
            setting = settings.plls.get(node)
            if setting is not None:
                pfd = upstream / setting.r
                plls[node] = PllOperatingPoint(upstream, pfd, pfd * setting.n, setting)
                nodes[node] = pfd * setting.n
        elif isinstance(part, PllOutput):
            pll_id = graph.nodes[node]["pll"]
            setting = settings.plls.get(pll_id)
            if setting is not None and part.name in setting.dividers:
                nodes[node] = upstream / setting.dividers[part.name]
        elif isinstance(part, Divider):
            if node in settings.dividers:
                nodes[node] = upstream / settings.dividers[node]
        elif isinstance(part, (Buffer, Consumer)):
            nodes[node] = upstream
    return Frequencies(nodes, plls)


def synthesis_error(actual_hz: Fraction, target_hz: Fraction) -> Fraction:
    """Exact fractional error ``actual / target - 1`` (0 means exactly on target).

    Examples
    --------
    >>> synthesis_error(Fraction(125_000_125), Fraction(125_000_000))
    Fraction(1, 1000000)
    """
    return Fraction(actual_hz) / Fraction(target_hz) - 1
