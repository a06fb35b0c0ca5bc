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

A physical figure the board leaves out is never taken as zero: a PLL's
``output_floor``, its ``flicker_fom`` (when its ``fom`` is given) and a plain
divider's ``additive_noise`` take the typical figures in :data:`TYPICAL_FIGURES`
(common practice), and the node records the assumption (:attr:`NodeNoise.assumed`)
for a warning finding.

The loop comes from the PLL's ``loop`` (bandwidth and damping or phase
margin, or open-loop polynomials) or from its ``loop_filter``, designed (or
taken as built) for the N and PFD frequency of the plan: the filter's own
transfer function then replaces the bandwidth-and-damping model. A loop
given by its bandwidth is the usual third-order passive filter designed for
it (:func:`clockplan.jitter.loop.passive_filter_loop`) unless it says
``model = "second-order"``; when a fractional-N modulator's noise goes
through such an assumed loop, the node records it for a warning that points
to ``loop_filter``.
Cascades work because a PLL's input is whatever node feeds it.

Each node's result is computed once (chains below a PLL share it). Where the
data needed is missing, the node's result says which part lacks what
(:class:`MissingNoiseData`) instead of a chain.
"""

from __future__ import annotations

import dataclasses

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from clockplan.errors import BoardError, ClockplanError
from clockplan.frequency import Frequencies, PllOperatingPoint
from clockplan.jitter.chain import (
    NoiseChain,
    add_buffer,
    add_noise,
    add_tones,
    divide,
    pll as pll_noise,
    source_chain,
    truncate,
)
from clockplan.jitter.loop import LoopResponse
from clockplan.parts import Board, Buffer, Divider, Pll, PllOutput, Reference

if TYPE_CHECKING:
    import networkx as nx

    from clockplan.jitter.profile import Extrapolation
    from clockplan.loopfilter.evaluate import LoopFilterResult

__all__ = [
    "BOARD_EXTRAPOLATION",
    "CONTRIBUTOR_KINDS",
    "TYPICAL_FIGURES",
    "TYPICAL_OUTPUT_FLOOR_DBC_HZ",
    "TYPICAL_FLICKER_FOM_DBC_HZ",
    "TYPICAL_DIVIDER_FLOOR_DBC_HZ",
    "Assumption",
    "MissingNoiseData",
    "NodeNoise",
    "BoardNoise",
    "loop_model_of",
]

#: A PLL output's additive white floor (divider and driver) when the noise table
#: gives no ``output_floor``: the noisy end of the -150..-165 dBc/Hz that clock
#: outputs usually reach (common practice, from memory).
TYPICAL_OUTPUT_FLOOR_DBC_HZ = -150.0
#: A PLL's normalised flicker (1/f) figure when its noise table gives ``fom`` but
#: no ``flicker_fom``: the noisy end of the -270..-260 dBc/Hz usual for
#: integrated synthesizers (common practice, from memory).
TYPICAL_FLICKER_FOM_DBC_HZ = -260.0
#: A plain divider's additive white floor without ``additive_noise``: the noisy
#: end of the -150..-160 dBc/Hz usual for logic dividers (common practice, from memory).
TYPICAL_DIVIDER_FLOOR_DBC_HZ = -150.0

#: Each typical figure: board key, value, unit, finding code (docs/board-format.md lists them).
TYPICAL_FIGURES = (
    ("pll noise.output_floor", TYPICAL_OUTPUT_FLOOR_DBC_HZ, "dBc/Hz", "noise-assumed"),
    ("pll noise.flicker_fom", TYPICAL_FLICKER_FOM_DBC_HZ, "dBc/Hz", "noise-assumed"),
    ("divider additive_noise", TYPICAL_DIVIDER_FLOOR_DBC_HZ, "dBc/Hz", "noise-assumed"),
)

#: How a reference's or a VCO's phase noise is read past its listed offsets on a
#: board (:mod:`clockplan.jitter.profile`): rising at least 20 dB/decade toward the
#: carrier below the first point, held (or still rising) beyond the last.
BOARD_EXTRAPOLATION: "Extrapolation" = "conservative"

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
class Assumption:
    """What the model took for ``part`` (a figure left out, the loop model): finding ``code``, in words.

    ``stated`` marks a model the board chose itself (an info finding, not a warning);
    an empty ``code`` is a note on the consumers only.
    """

    part: str
    code: str
    text: str
    stated: bool = False


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
    assumed
        Figures upstream that the board left out and the model assumed
        (typical noise figures, an assumed loop).
    """

    chain: NoiseChain
    kinds: Mapping[str, tuple[str, str]]
    unmodelled: tuple[tuple[str, str], ...] = ()
    assumed: tuple[Assumption, ...] = ()

    def then(
        self,
        chain: NoiseChain,
        kind: str,
        part: str,
        unmodelled: str | None = None,
        assumed: tuple[Assumption, ...] = (),
    ) -> "NodeNoise":
        """The next node's noise: ``chain`` with its new contributors tagged ``kind`` of ``part``."""
        kinds = dict(self.kinds)
        for name in chain.names:
            kinds.setdefault(name, (kind, part))
        extra = ((part, unmodelled),) if unmodelled else ()
        return NodeNoise(chain, kinds, self.unmodelled + extra, self.assumed + assumed)


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
        The base analysis grid (:func:`clockplan.jitter.chain.log_grid`, with
        the band edges on it); it must cover every band integrated later. Each
        node's chain refines it for what that node carries (listed offsets,
        loop corners, shaped densities; :mod:`clockplan.jitter.chain`).
    loop_filters
        Filled as PLLs with a ``loop_filter`` are evaluated.
    bands
        Consumer id -> the band it is judged over: a node's chain is cut above
        the highest band edge of the consumers it feeds.

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
    bands: Mapping[str, tuple[float, float]] = field(default_factory=dict)
    _memo: dict[str, NodeNoise | MissingNoiseData] = field(default_factory=dict)
    _reach: dict[str, float] | None = None

    def at(self, node: str) -> NodeNoise | MissingNoiseData:
        """The noise at ``node`` (a part id or ``"pll.output"``; a consumer gets its source's)."""
        if node not in self._memo:
            self._memo[node] = self._build(node)
        return self._memo[node]

    def reach_hz(self, node: str) -> float | None:
        """The highest band edge of the consumers ``node`` feeds (``bands``), or None without one.

        A node's chain needs no offsets above it: it is cut there
        (:func:`clockplan.jitter.chain.truncate`), so no refinement is spent
        where nothing below it integrates.
        """
        if self._reach is None:
            self._reach = {}
            for consumer, (_, high) in self.bands.items():
                fed: str | None = consumer if consumer in self.graph else None
                while fed is not None:  # up the chain: each node has one input
                    self._reach[fed] = max(self._reach.get(fed, 0.0), float(high))
                    fed = next(iter(self.graph.predecessors(fed)), None)
        return self._reach.get(node)

    def _build(self, node: str) -> NodeNoise | MissingNoiseData:
        part = self.graph.nodes[node]["part"]
        if isinstance(part, Reference):
            return self._reference(part)
        parent = next(iter(self.graph.predecessors(node)))
        upstream = self.at(parent)
        if isinstance(upstream, MissingNoiseData):
            return upstream
        reach = self.reach_hz(node)
        if reach is not None:
            upstream = dataclasses.replace(upstream, chain=truncate(upstream.chain, reach))
        if node not in self.frequencies.nodes:
            return MissingNoiseData(node, f"the frequency of {node} is unknown", "complete its settings", unset=True)
        if isinstance(part, Pll):
            return self._pll(part, upstream)
        if isinstance(part, PllOutput):
            return self._pll_output(node, part, upstream)
        if isinstance(part, Divider):
            ratio = self.frequencies.nodes[parent] / self.frequencies.nodes[node]
            floor, assumed = part.additive_noise, ()
            if floor is None:
                floor = TYPICAL_DIVIDER_FLOOR_DBC_HZ
                assumed = (_typical(part.id, f"divider {part.id} has no additive_noise", "additive floor", floor),)
            chain = divide(upstream.chain, ratio, floor_dbc_hz=floor, name=part.id)
            return upstream.then(chain, "divider floor", part.id, assumed=assumed)
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
        chain = source_chain(
            name, reference.phase_noise, float(reference.frequency), self.offsets_hz, extrapolation=BOARD_EXTRAPOLATION
        )
        reach = self.reach_hz(reference.id)
        if reach is not None:
            chain = truncate(chain, reach)
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
        assumed: list[Assumption] = []
        flicker = noise.flicker_fom_dbc_hz
        if flicker is None and noise.fom_dbc_hz is not None:
            flicker = TYPICAL_FLICKER_FOM_DBC_HZ
            assumed.append(_typical(part.id, f"PLL {part.id} has fom but no flicker_fom", "flicker figure", flicker))
        modulator = noise.modulator_order if fractional else None
        if modulator is not None and loop.model != "loop_filter":
            assumed.append(_modulator_loop(part.id, loop))
        elif loop.model == "third-order (assumed)":
            # No modulator for the extra poles to decide: a note on the consumers, no finding.
            text = f"the loop of {part.id} is assumed: the usual {loop.summary}; loop_filter gives the real parts"
            assumed.append(Assumption(part.id, "", text, stated=True))
        chain = pll_noise(
            upstream.chain,
            point.vco_hz / point.input_hz,
            loop,
            name=part.id,
            vco=noise.vco,
            fom_dbc_hz=noise.fom_dbc_hz,
            flicker_fom_dbc_hz=flicker,
            f_pfd_hz=float(point.pfd_hz),
            modulator_order=modulator,
            vco_extrapolation=BOARD_EXTRAPOLATION,
        )
        kinds = dict(upstream.kinds)
        for name in chain.names:
            if name not in kinds:
                kinds[name] = (_PLL_SUFFIX_KINDS[name.rsplit(" ", 1)[1]], part.id)
        missing = _missing_pll_figures(part, fractional)
        result = NodeNoise(
            chain,
            kinds,
            upstream.unmodelled + (((part.id, missing),) if missing else ()),
            upstream.assumed + tuple(assumed),
        )
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
            loop = LoopResponse(*result.open_loop(), "loop_filter", loop_model_of(part))
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

        def density(offsets: np.ndarray) -> np.ndarray:
            # S_phi is the one-sided phase density; L(f) = S_phi / 2 (IEEE Std 1139 small-angle reading).
            return loop_filter_phase_noise(result.chosen, result.spec, offsets, temperature_c=hottest) / 2.0

        return add_noise(chain, f"{pll_id} loop filter", density)

    def _pll_output(self, node: str, part: PllOutput, upstream: NodeNoise) -> NodeNoise:
        pll_id = self.graph.nodes[node]["pll"]
        owner = self.board.part(pll_id)
        ratio = self.frequencies.plls[pll_id].setting.dividers[part.name]
        floor = owner.noise.output_floor_dbc_hz if owner.noise is not None else None
        assumed: tuple[Assumption, ...] = ()
        if floor is None:
            floor = TYPICAL_OUTPUT_FLOOR_DBC_HZ
            assumed = (_typical(pll_id, f"PLL {pll_id} has no output_floor", "output floor", floor),)
        chain = divide(upstream.chain, ratio, floor_dbc_hz=floor, name=f"{node} output")
        return self._with_spread(upstream.then(chain, "output floor", node, assumed=assumed), part.spread, node)

    def _buffer(self, part: Buffer, upstream: NodeNoise) -> NodeNoise:
        additive: Any = part.additive_jitter
        if additive is None:
            text = f"buffer {part.id} has no additive_jitter: it is counted as noiseless"
            return upstream.then(upstream.chain, "buffer", part.id, text)
        chain = add_buffer(upstream.chain, additive.seconds, name=f"{part.id} buffer", band_hz=additive.band_hz)
        return upstream.then(chain, "buffer", part.id)


def _modulator_loop(pll_id: str, loop: LoopResponse) -> Assumption:
    """Which loop the fractional-N modulator noise of ``pll_id`` went through, and whether it was assumed."""
    described = loop.summary or loop.model
    if loop.model == "third-order (assumed)":
        return Assumption(
            pll_id,
            "loop-model",
            f"the fractional-N modulator noise of {pll_id} goes through an assumed loop, the usual {described} "
            "(the loop gives only a bandwidth); the modulator noise rises with offset, so the real filter's poles "
            "above the bandwidth decide it: give loop_filter with the real parts (docs/loop-filter.md)",
        )
    return Assumption(
        pll_id,
        "loop-model",
        f"the fractional-N modulator noise of {pll_id} goes through the loop the board states: {described}; "
        "loop_filter with the real parts models the filter as built (docs/loop-filter.md)",
        stated=True,
    )


def _typical(part: str, lack: str, what: str, value_dbc_hz: float) -> Assumption:
    return Assumption(
        part,
        "noise-assumed",
        f"{lack}: a typical {what} of {value_dbc_hz:g} dBc/Hz is assumed (common practice, "
        "the noisy end of the usual range; docs/board-format.md, Defaults clockplan assumes); "
        "give the datasheet figure",
    )


def loop_model_of(pll: Pll) -> str | None:
    """The loop the jitter stage uses for ``pll``, in words, or None without a loop.

    Examples
    --------
    >>> from clockplan.boardfile import load_board
    >>> board = load_board("boards/sampling-receiver.toml")
    >>> loop_model_of(board.part("conv_synth"))
    'loop_filter: designed order-3 passive filter (its own transfer function)'
    >>> loop_model_of(board.part("cleaner"))[:60]
    'third-order passive-filter loop designed for 20 kHz (closed-'
    """
    if pll.loop is not None:
        return pll.loop.summary or pll.loop.model
    if pll.loop_filter is not None:
        how = "as built" if pll.loop_filter.fixed is not None else "designed"
        return f"loop_filter: {how} order-{pll.loop_filter.order} passive filter (its own transfer function)"
    return None


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
