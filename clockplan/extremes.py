"""How far each PLL's input, PFD and VCO can move from nominal: the reference's error band and spread sweeps.

A PLL's ranges (input, PFD, VCO) hold at the nominal frequency only if
nothing moves it. Two things do:

* the **reference's error** over the board's temperature range and lifetime:
  the worst-case band the frequency-accuracy stage computes (the linear sum
  of initial tolerance, temperature, aging, supply and load terms,
  :func:`clockplan.ppm.accuracy.reference_contributions`), from the board's
  figures or, for a reference without them, its kind's typical grade (as the
  accuracy stage assumes it). A locked loop passes that fractional error
  unchanged to its PFD, VCO and outputs.
* a **spread-spectrum sweep** that modulates the loop: a down-spread of depth
  δ moves the VCO (and everything downstream of it) down by up to δ; a spread
  an output makes alone moves that output and what it feeds.
  :func:`vco_sweep` and :func:`output_sweep` are the one place that reads the
  spread data of the model.

Every band is a fractional ``(low, high)`` pair with ``low <= 0 <= high``,
exact (:class:`~fractions.Fraction`). Downstream bands compose
multiplicatively: ``(1 + a)(1 + b) - 1``. Assumption (on the side that can
only make a check stricter, as the accuracy stage takes it too): a sweep
passes whole through every downstream loop (a loop narrower than the
modulation rate would attenuate it; see docs/planning.md).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, replace
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from clockplan.parts import Board, FrequencyRange, Pll, Reference

if TYPE_CHECKING:
    import networkx as nx

__all__ = ["Band", "PllBand", "ZERO_BAND", "compose_bands", "vco_sweep", "output_sweep", "reference_band", "pll_bands", "margined_pll"]

Band = tuple[Fraction, Fraction]
#: No movement at all.
ZERO_BAND: Band = (Fraction(0), Fraction(0))


def compose_bands(a: Band, b: Band) -> Band:
    """The band of two cascaded fractional errors, ``(1 + a)(1 + b) - 1`` at each end.

    Examples
    --------
    >>> compose_bands((Fraction(-1, 100), Fraction(0)), (Fraction(-1, 100), Fraction(1, 100)))
    (Fraction(-199, 10000), Fraction(1, 100))
    """
    return a[0] + b[0] + a[0] * b[0], a[1] + b[1] + a[1] * b[1]


def _sweep_of(spread: Any) -> Band:
    if spread is None or not hasattr(spread, "extremes"):
        return ZERO_BAND
    low, high = spread.extremes
    return min(Fraction(low), Fraction(0)), max(Fraction(high), Fraction(0))


def vco_sweep(pll: Pll) -> Band:
    """How far a spread sweep moves ``pll``'s VCO: ``(low, high)``, fractional.

    The one place that reads where the model keeps spread: a spread made by
    modulating the loop (``[[pll]] spread``, :mod:`clockplan.spreading`) sweeps
    the VCO. A spread an output makes alone (``independent_spread``) leaves the
    VCO still; :func:`output_sweep` gives it.

    Examples
    --------
    >>> from clockplan.parts import IntChoices, PllOutput
    >>> from clockplan.ppm.spread import SpreadSpectrum
    >>> part = Pll("loop", "osc", FrequencyRange(Fraction(1), Fraction(2)), FrequencyRange(Fraction(1), Fraction(2)),
    ...            IntChoices(1, 1), Fraction(1), Fraction(2), "integer", (PllOutput("pcie", IntChoices(1, 8)),),
    ...            spread=SpreadSpectrum("down", Fraction(5, 1000)))
    >>> vco_sweep(part)
    (Fraction(-1, 200), Fraction(0, 1))
    """
    return _sweep_of(getattr(pll, "spread", None))


def output_sweep(output: Any) -> Band:
    """How far a spread an output makes alone moves that output (and what it feeds), fractional."""
    return _sweep_of(getattr(output, "spread", None))


def _exact(value: Any) -> Fraction | None:
    if isinstance(value, Fraction):
        return value
    number = float(value)
    return Fraction(number) if math.isfinite(number) else None


@dataclass(frozen=True)
class ReferenceBand:
    """A reference's worst-case fractional error band and where it comes from (``board``, ``typical``, ``none``)."""

    band: Band
    basis: str


def reference_band(board: Board, reference: Reference, grades: Any = None) -> ReferenceBand:
    """The worst-case fractional error of ``reference`` over the board's temperature range and lifetime.

    The same sum of terms the frequency-accuracy stage takes for its worst
    case. A reference with no figures and no typical grade gives a zero band
    (``basis = "none"``; the accuracy stage reports it as not checked).
    """
    return _reference_bands(board, grades)[reference.id]


@functools.lru_cache(maxsize=1)
def _package_grades() -> Any:
    """The package's own grade table, read once (it is immutable: a tuple of frozen grades)."""
    from clockplan.ppm.grades import load_grades

    return load_grades()


def _reference_bands(board: Board, grades: Any = None) -> dict[str, ReferenceBand]:
    from clockplan.ppm.accuracy import reference_contributions
    from clockplan.ppm.board import reference_models

    bands = {}
    for model in reference_models(board, grades if grades is not None else _package_grades()):
        if model.spec is None:
            bands[model.reference.id] = ReferenceBand(ZERO_BAND, model.basis)
            continue
        low = high = Fraction(0)
        for term in reference_contributions(model.spec, board.temperature_c, board.lifetime_s):
            lo, hi = _exact(term.low), _exact(term.high)
            if lo is None or hi is None:  # a non-finite term: fall back to the stated tolerance
                lo, hi = (Fraction(x) for x in model.spec.initial)
            low, high = low + lo, high + hi
        bands[model.reference.id] = ReferenceBand((min(low, Fraction(0)), max(high, Fraction(0))), model.basis)
    return bands


@dataclass(frozen=True)
class PllBand:
    """How far one PLL's input (and PFD) and its VCO can move, fractional, and why.

    ``reference`` is the root reference, ``reference_band`` its own error band,
    ``upstream_sweep`` the spread sweeps of PLLs above this one, ``sweep`` this
    PLL's own (:func:`vco_sweep`).
    """

    pll: str
    reference: str
    reference_band: Band
    reference_basis: str
    upstream_sweep: Band
    sweep: Band

    @property
    def input(self) -> Band:
        """The band of the input and PFD frequencies."""
        return compose_bands(self.reference_band, self.upstream_sweep)

    @property
    def vco(self) -> Band:
        """The band of the VCO frequency."""
        return compose_bands(self.input, self.sweep)


def pll_bands(board: Board, graph: "nx.DiGraph") -> dict[str, PllBand]:
    """Every PLL's band, from its root reference down through the PLLs above it."""
    from clockplan.graph import chain_to

    bands: dict[str, PllBand] = {}
    if not board.plls:
        return bands
    references = _reference_bands(board)
    for pll in board.plls:
        chain = chain_to(graph, pll.id)
        root = board.part(chain[0])
        if not isinstance(root, Reference) or root.id not in references:
            continue
        upstream = ZERO_BAND
        for node in chain[1:-1]:
            role = graph.nodes[node]["role"]
            if role == "pll":
                upstream = compose_bands(upstream, vco_sweep(board.part(node)))
            elif role == "pll_output":
                upstream = compose_bands(upstream, output_sweep(graph.nodes[node]["part"]))
        ref = references[root.id]
        bands[pll.id] = PllBand(pll.id, root.id, ref.band, ref.basis, upstream, vco_sweep(pll))
    return bands


def _narrowed(span: FrequencyRange, band: Band) -> FrequencyRange:
    # A band reaching -100 % (figures no real part has, but a board may write) leaves no frequency safe:
    # an empty range (lo above hi), which the planner reports as a part that cannot run.
    if 1 + band[0] <= 0:
        return FrequencyRange(span.hi + 1, span.hi)
    return FrequencyRange(span.lo / (1 + band[0]), span.hi / (1 + band[1]))


def margined_pll(pll: Pll, band: PllBand | None) -> Pll:
    """``pll`` with its input, PFD and VCO ranges narrowed so that the nominal frequency keeps ``band``'s margin.

    A nominal ``f`` with ``f (1 + low) >= lo`` and ``f (1 + high) <= hi`` stays in
    range over the whole band: the range for nominal frequencies is
    ``[lo / (1 + low), hi / (1 + high)]`` (it may come out empty).

    Examples
    --------
    A VCO of 2.4-3.2 GHz under a ±10 ppm reference keeps 3.2 GHz / 1.00001 as its top.
    """
    if band is None or (band.input == ZERO_BAND and band.vco == ZERO_BAND):
        return pll
    return replace(
        pll,
        vco=_narrowed(pll.vco, band.vco),
        pfd=_narrowed(pll.pfd, band.input),
        input_range=_narrowed(pll.input_range, band.input) if pll.input_range is not None else None,
    )
