"""Where a spread-spectrum modulation is made on a board, and which clocks it reaches.

A spread is made by modulating a loop: a fractional-N PLL's modulator sweeps
its feedback divider, or the VCO's control is swept. Either way the VCO's
frequency sweeps, so the spread reaches every output of that PLL and every
clock downstream of them: dividers and buffers pass the sweep as it is, and a
PLL locked to a spread clock follows it through its closed-loop response at
the modulation rate (a loop far wider than the ~30 kHz rate passes it whole, a
narrow one attenuates it). A board writes such a spread on the PLL
(``[[pll]] spread = {...}``).

A spread on one output alone exists only where the part says that output's
divider makes its own (a fractional output divider with its own modulation):
the output then says ``independent_spread = true``, and its spread reaches
that output and what it feeds, not the PLL's other outputs.

The frequency-accuracy stage takes the spread a consumer inherits from here
and passes its whole sweep through any PLL on the way (conservative for a
narrow loop; loop peaking at the rate is not added to the sweep); the jitter
stage carries its time deviation through each PLL's closed-loop response
(``docs/frequency-accuracy.md``, ``docs/jitter.md``). Two spreads stacked on one
clock path are refused: one modulation per path is what the models describe.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from clockplan.errors import BoardError

if TYPE_CHECKING:
    import networkx as nx

    from clockplan.parts import Board
    from clockplan.ppm.spread import SpreadAllowance, SpreadSpectrum
    from clockplan.standards.model import StandardBudget

__all__ = ["SpreadSource", "spread_key", "spreads_on_chain", "check_spreads", "spread_allowance", "describe_spread"]


@dataclass(frozen=True)
class SpreadSource:
    """A spread reaching a clock: where it is made, the modulation, and the PLLs it passes through.

    ``part`` is the PLL id (a loop spread) or ``"pll.output"`` (an output that
    spreads alone); ``key`` the board-file key path of its ``spread`` table;
    ``through`` the PLLs between it and the clock, in signal order (their loops
    filter it).
    """

    part: str
    spread: "SpreadSpectrum"
    key: str
    through: tuple[str, ...] = ()

    @property
    def describe(self) -> str:
        """``'down-spread 0.5 % at 31.5 kHz made by synth_a'``."""
        return f"{describe_spread(self.spread)} made by {self.part}"


def describe_spread(spread: "SpreadSpectrum") -> str:
    """A spread in words, e.g. ``'down-spread 0.5 % at 31.5 kHz'``.

    Examples
    --------
    >>> from fractions import Fraction
    >>> from clockplan.ppm.spread import SpreadSpectrum
    >>> describe_spread(SpreadSpectrum("down", Fraction(1, 200), Fraction(31500)))
    'down-spread 0.5 % at 31.5 kHz'
    """
    from clockplan.ppm.display import format_error
    from clockplan.units import format_frequency

    depth = format_error(spread.depth).lstrip("+")
    rate = "" if spread.modulation_hz is None else f" at {format_frequency(float(spread.modulation_hz))}"
    return f"{spread.mode}-spread {depth}{rate}"


def spread_key(board: "Board", node: str) -> str:
    """The key path of the ``spread`` table of a spreading PLL or PLL output node."""
    pll_id, _, output = node.partition(".")
    index = [p.id for p in board.plls].index(pll_id)
    return f"pll[{index}].outputs.{output}.spread" if output else f"pll[{index}].spread"


def _spread_at(graph: "nx.DiGraph", node: str) -> Any:
    attributes = graph.nodes[node]
    if attributes["role"] in ("pll", "pll_output"):
        return attributes["part"].spread
    return None


def spreads_on_chain(board: "Board", graph: "nx.DiGraph", chain: Sequence[str]) -> list[SpreadSource]:
    """Every spread made on a clock path (reference first), nearest to its end first.

    Examples
    --------
    ``spreads_on_chain(board, graph, ["ref", "synth", "synth.eth", "phy"])`` gives
    one :class:`SpreadSource` with ``part="synth"`` when ``synth`` spreads.
    """
    found = []
    for position in range(len(chain) - 1, -1, -1):
        node = chain[position]
        spread = _spread_at(graph, node)
        if spread is None:
            continue
        through = tuple(n for n in chain[position + 1:] if graph.nodes[n]["role"] == "pll")
        found.append(SpreadSource(node, spread, spread_key(board, node), through))
    return found


def check_spreads(board: "Board", graph: "nx.DiGraph") -> None:
    """Refuse two spreads stacked on one clock path.

    Raises
    ------
    BoardError
        Located at the spread further down, naming both.
    """
    from clockplan.graph import chain_to

    if sum(p.spread is not None for p in board.plls) + sum(o.spread is not None for p in board.plls for o in p.outputs) < 2:
        return  # nothing can stack
    for node in graph.nodes:
        if graph.out_degree(node):
            continue  # every clock path ends at a node that feeds nothing
        sources = spreads_on_chain(board, graph, chain_to(graph, node))
        if len(sources) < 2:
            continue
        near, far = sources[0], sources[1]
        raise BoardError(
            f"two spreads stacked on the clock path to {node}: {near.part} spreads a clock that {far.part} "
            "already spreads",
            file=board.source_file,
            key=near.key,
            line=board.lines.get(near.key) or board.lines.get(near.key.split(".", 1)[0]),
            hint=f"keep one spread on the path: remove the spread of {near.part} or of {far.part} "
            "(clockplan models one modulation per clock path)",
        )


def spread_allowance(budget: "StandardBudget | None") -> "SpreadAllowance | None":
    """The spread a consumer's resolved budget allows, as a mode and depth; None when it allows none.

    An asymmetric sweep that crosses zero (not a shape any standard we know
    uses) is read as the largest centre-spread inside it: never more than allowed.

    Examples
    --------
    >>> from clockplan.standards import get_standard
    >>> allowed = spread_allowance(get_standard("pcie-gen3"))
    >>> allowed.mode, allowed.max_depth * 10**6
    ('down', Fraction(5000, 1))
    """
    from clockplan.ppm.spread import SpreadAllowance

    if budget is None or budget.spread is None:
        return None
    low, high = budget.spread
    rate = budget.spread_rate_hz
    if low == high == 0:
        return None
    if high == 0:
        return SpreadAllowance("down", -low, rate)
    if low == 0:
        return SpreadAllowance("up", high, rate)
    return SpreadAllowance("center", 2 * min(-low, high), rate)
