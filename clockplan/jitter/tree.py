"""The phase noise of every clock on a board, built from its parts' noise data.

:class:`BoardNoise` follows the signal graph from a node up to its reference
and carries the noise down, one operation per part
(:mod:`clockplan.jitter.chain`):

- a reference starts the chain from its ``phase_noise``;
- a PLL multiplies its input noise by ``f_VCO / f_in`` (N/R) under its
  closed-loop low-pass, adds its in-band floor from the figure of merit, its
  VCO under the complementary high-pass, a fractional-N modulator's noise when
  N has a fractional part, and, with a designed ``loop_filter``, the filter
  resistors' thermal noise (at the board's hottest temperature);
- a PLL output divides by its divider and adds the PLL's ``output_floor``;
- a plain divider divides and adds its ``additive_noise``;
- a fanout buffer adds its ``additive_jitter`` in root-sum-square;
- a spread (on a PLL, or on an output that spreads alone) adds its triangular
  time deviation as lines at the odd harmonics of its rate
  (:mod:`clockplan.jitter.spread`), which dividers and buffers pass and a PLL
  further down filters by its closed-loop response, like any spur.

The loop comes from the PLL's ``loop`` (bandwidth and damping or phase
margin, or open-loop polynomials) or from its ``loop_filter``, designed (or
taken as built) for the N and PFD frequency of the plan: the filter's own
transfer function then replaces the bandwidth-and-damping approximation.
Cascades work because a PLL's input is whatever node feeds it.

Each node's result is computed once (chains below a PLL share it). Where the
data needed is missing, the node's result says which part lacks what
(:class:`MissingNoiseData`) instead of a chain.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from clockplan.errors import BoardError, ClockplanError
from clockplan.frequency import Frequencies, PllOperatingPoint
from clockplan.jitter.chain import NoiseChain, add_buffer, add_noise, add_tones, divide, pll as pll_noise, source_chain
from clockplan.jitter.loop import LoopResponse, loop_from_open_loop
from clockplan.parts import Board, Buffer, Divider, Pll, PllOutput, Reference

if TYPE_CHECKING:
    import networkx as nx

    from clockplan.loopfilter.evaluate import LoopFilterResult

__all__ = ["CONTRIBUTOR_KINDS", "MissingNoiseData", "NodeNoise", "BoardNoise"]

#: What a contributor is, for naming the dominant one and suggesting a fix.
CONTRIBUTOR_KINDS = (
    "reference",
    "pll floor",
    "vco",
    "modulator",
    "loop filter",
    "output floor",
    "divider floor",
    "buffer",
    "spread",
)

# Contributor-name suffixes that chain.pll gives, and their kinds.
_PLL_SUFFIX_KINDS = {"floor": "pll floor", "VCO": "vco", "modulator": "modulator"}


@dataclass(frozen=True)
class MissingNoiseData:
    """Why a node's noise cannot be computed: the part that lacks data, and how to fix it.

    ``unset`` marks a frequency left unknown by a missing setting (the audit
    already reports it).
    """

    part: str
    message: str
    hint: str
    unset: bool = False


@dataclass(frozen=True, eq=False)
class NodeNoise:
    """The noise of one clock node, per contributor.

    Parameters
    ----------
    chain
        The contributors' densities at this node's frequency.
    kinds
        Contributor name -> ``(kind, part id)``, kind one of :data:`CONTRIBUTOR_KINDS`.
    unmodelled
        ``(part id, text)`` for each part upstream whose own noise is not
        counted for lack of data (the figure is then optimistic).
    """

    chain: NoiseChain
    kinds: Mapping[str, tuple[str, str]]
    unmodelled: tuple[tuple[str, str], ...] = ()

    def then(self, chain: NoiseChain, kind: str, part: str, unmodelled: str | None = None) -> "NodeNoise":
        """The next node's noise: ``chain`` with its new contributors tagged ``kind`` of ``part``."""
        kinds = dict(self.kinds)
        for name in chain.names:
            kinds.setdefault(name, (kind, part))
        extra = ((part, unmodelled),) if unmodelled else ()
        return NodeNoise(chain, kinds, self.unmodelled + extra)


@dataclass(eq=False)
class BoardNoise:
    """Noise of every node of a board with its frequency plan, computed on demand.

    Parameters
    ----------
    board
        The parts, with their noise data.
    graph
        The signal graph (:func:`clockplan.graph.build_graph`).
    frequencies
        Exact frequencies and PLL operating points of the plan.
    offsets_hz
        The common analysis grid (:func:`clockplan.jitter.chain.log_grid`); it
        must cover every band integrated later.

    Examples
    --------
    >>> from clockplan.analysis import analyze
    >>> from clockplan.boardfile import load_board
    >>> from clockplan.jitter.chain import log_grid
    >>> analysis = analyze(load_board("boards/sampling-receiver.toml"))
    >>> noise = BoardNoise(analysis.board, analysis.graph, analysis.frequencies, log_grid())
    >>> noise.at("link_ref").kinds["link_fanout buffer"]
    ('buffer', 'link_fanout')
    """

    board: Board
    graph: "nx.DiGraph"
    frequencies: Frequencies
    offsets_hz: np.ndarray
    loop_filters: dict[str, "LoopFilterResult"] = field(default_factory=dict)
    _memo: dict[str, NodeNoise | MissingNoiseData] = field(default_factory=dict)

    def at(self, node: str) -> NodeNoise | MissingNoiseData:
        """The noise at ``node`` (a part id or ``"pll.output"``; a consumer gets its source's)."""
        if node not in self._memo:
            self._memo[node] = self._build(node)
        return self._memo[node]

    def _build(self, node: str) -> NodeNoise | MissingNoiseData:
        part = self.graph.nodes[node]["part"]
        if isinstance(part, Reference):
            return self._reference(part)
        parent = next(iter(self.graph.predecessors(node)))
        upstream = self.at(parent)
        if isinstance(upstream, MissingNoiseData):
            return upstream
        if node not in self.frequencies.nodes:
            return MissingNoiseData(node, f"the frequency of {node} is unknown", "complete its settings", unset=True)
        if isinstance(part, Pll):
            return self._pll(part, upstream)
        if isinstance(part, PllOutput):
            return self._pll_output(node, part, upstream)
        if isinstance(part, Divider):
            ratio = self.frequencies.nodes[parent] / self.frequencies.nodes[node]
            chain = divide(upstream.chain, ratio, floor_dbc_hz=part.additive_noise, name=part.id)
            return upstream.then(chain, "divider floor", part.id)
        if isinstance(part, Buffer):
            return self._buffer(part, upstream)
        return upstream  # a consumer sees its source's clock

    def _reference(self, reference: Reference) -> NodeNoise | MissingNoiseData:
        if reference.phase_noise is None:
            return MissingNoiseData(
                reference.id,
                f"no phase-noise data for reference {reference.id}",
                "give the reference a phase_noise list from its datasheet (docs/jitter.md)",
            )
        name = f"{reference.id} reference"
        chain = source_chain(name, reference.phase_noise, float(reference.frequency), self.offsets_hz)
        return NodeNoise(chain, {name: ("reference", reference.id)})

    def _pll(self, part: Pll, upstream: NodeNoise) -> NodeNoise | MissingNoiseData:
        from clockplan.jitter.parse import PllNoise

        point = self.frequencies.plls[part.id]
        loop = self._loop(part, point)
        if isinstance(loop, MissingNoiseData):
            return loop
        noise = part.noise if part.noise is not None else PllNoise()
        # A fractional-N loop that spreads runs its modulator even at a whole N: it sweeps N.
        fractional = point.setting.n.denominator != 1 or (part.spread is not None and part.mode == "fractional")
        chain = pll_noise(
            upstream.chain,
            point.vco_hz / point.input_hz,
            loop,
            name=part.id,
            vco=noise.vco,
            fom_dbc_hz=noise.fom_dbc_hz,
            flicker_fom_dbc_hz=noise.flicker_fom_dbc_hz,
            f_pfd_hz=float(point.pfd_hz),
            modulator_order=noise.modulator_order if fractional else None,
        )
        kinds = dict(upstream.kinds)
        for name in chain.names:
            if name not in kinds:
                kinds[name] = (_PLL_SUFFIX_KINDS[name.rsplit(" ", 1)[1]], part.id)
        missing = _missing_pll_figures(part, fractional)
        result = NodeNoise(chain, kinds, upstream.unmodelled + (((part.id, missing),) if missing else ()))
        if part.id in self.loop_filters:
            result = result.then(self._filter_noise(part.id, chain), "loop filter", part.id)
        return self._with_spread(result, part.spread, part.id)

    def _with_spread(self, noise: NodeNoise, spread: Any, part: str) -> NodeNoise:
        """``noise`` with the time deviation of a spread made here, as lines at its harmonics."""
        if spread is None or spread.modulation_hz is None or spread.depth == 0:
            return noise
        from clockplan.jitter.spread import spread_tones

        chain = noise.chain
        offsets, power = spread_tones(
            float(spread.depth), float(spread.modulation_hz), chain.carrier_hz, float(self.offsets_hz[-1])
        )
        return noise.then(add_tones(chain, f"{part} spread", offsets, power), "spread", part)

    def _loop(self, part: Pll, point: PllOperatingPoint) -> LoopResponse | MissingNoiseData:
        if part.loop is not None:
            return part.loop
        if part.loop_filter is None:
            return MissingNoiseData(
                part.id,
                f"no loop response for PLL {part.id}",
                "give it loop = { bandwidth = \"100 kHz\", damping = 0.707 } or a loop_filter table "
                "(docs/jitter.md, docs/loop-filter.md)",
            )
        from clockplan.loopfilter.evaluate import evaluate_loop_filter

        key = f"pll[{self.board.plls.index(part)}].loop_filter"
        try:
            result = evaluate_loop_filter(part.loop_filter, part.loop_filter.spec(point.setting.n, point.pfd_hz))
            loop = loop_from_open_loop(*result.open_loop())
        except ClockplanError as err:
            raise BoardError(
                f"the loop filter of {part.id} cannot be built for N = {point.setting.n}: {err.message}",
                file=self.board.source_file,
                key=key,
                line=self.board.lines.get(key) or self.board.lines.get(key.rsplit(".", 1)[0]),
                hint=err.hint,
            ) from None
        self.loop_filters[part.id] = result
        return loop

    def _filter_noise(self, pll_id: str, chain: NoiseChain) -> NoiseChain:
        from clockplan.loopfilter.noise import loop_filter_phase_noise

        result = self.loop_filters[pll_id]
        hottest = self.board.temperature_c[1]
        s_phi = loop_filter_phase_noise(result.chosen, result.spec, self.offsets_hz, temperature_c=hottest)
        # S_phi is the one-sided phase density; L(f) = S_phi / 2 (IEEE Std 1139 small-angle reading).
        return add_noise(chain, f"{pll_id} loop filter", s_phi / 2.0)

    def _pll_output(self, node: str, part: PllOutput, upstream: NodeNoise) -> NodeNoise:
        pll_id = self.graph.nodes[node]["pll"]
        owner = self.board.part(pll_id)
        ratio = self.frequencies.plls[pll_id].setting.dividers[part.name]
        floor = owner.noise.output_floor_dbc_hz if owner.noise is not None else None
        chain = divide(upstream.chain, ratio, floor_dbc_hz=floor, name=f"{node} output")
        return self._with_spread(upstream.then(chain, "output floor", node), part.spread, node)

    def _buffer(self, part: Buffer, upstream: NodeNoise) -> NodeNoise:
        additive: Any = part.additive_jitter
        if additive is None:
            text = f"buffer {part.id} has no additive_jitter: it is counted as noiseless"
            return upstream.then(upstream.chain, "buffer", part.id, text)
        chain = add_buffer(upstream.chain, additive.seconds, name=f"{part.id} buffer", band_hz=additive.band_hz)
        return upstream.then(chain, "buffer", part.id)


def _missing_pll_figures(part: Pll, fractional: bool) -> str | None:
    """What the PLL's noise table lacks (its noise is then not counted), or None."""
    if part.noise is None:
        return f"PLL {part.id} has no noise table: only the noise of its input is counted"
    missing = [name for name, value in (("fom", part.noise.fom_dbc_hz), ("vco_phase_noise", part.noise.vco)) if value is None]
    if fractional and part.noise.modulator_order is None:
        missing.append("modulator_order (N is fractional)")
    if not missing:
        return None
    return f"PLL {part.id} has no {', '.join(missing)} in its noise table: that noise is not counted"
