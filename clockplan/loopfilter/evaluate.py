"""From a board's loop-filter request to a judged filter: design, snap, measure, warn.

:func:`evaluate_loop_filter` is what ``clockplan loop BOARD PLL`` runs: it
designs the filter (or takes the existing one), snaps it to the chosen
E-series, and measures what the filter that will be built really gives.
The jitter model takes :meth:`LoopFilterResult.open_loop` (for
``clockplan.jitter.loop.loop_from_open_loop``), or :meth:`LoopFilterResult.closed_loop`
and :meth:`LoopFilterResult.error` directly (polynomials in s, rad/s).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from fractions import Fraction

import numpy as np

from clockplan.loopfilter.board import LoopFilterConfig
from clockplan.loopfilter.design import FilterDesign, LoopSpec, design_filter, snap_design
from clockplan.loopfilter.response import (
    closed_loop_bandwidth_hz,
    closed_loop_peaking_db,
    closed_loop_polynomials,
    error_polynomials,
    lock_time,
    loop_margins,
    open_loop_polynomials,
)

__all__ = [
    "LOCK_TOLERANCE_FRACTION",
    "LoopPerformance",
    "LoopFilterResult",
    "measure_performance",
    "evaluate_loop_filter",
    "result_document",
]

# Default lock criterion: within 1 ppm of the VCO frequency (common practice
# for "frequency lock" of a clock synthesizer; phase settles later).
LOCK_TOLERANCE_FRACTION = 1e-6
# Bandwidth above this fraction of the PFD frequency makes the continuous-time
# model unreliable (common practice: stay below a tenth).
_PFD_FRACTION_LIMIT = 0.1


@dataclass(frozen=True)
class LoopPerformance:
    """What a filter gives in its loop (measured on the transfer functions)."""

    crossover_hz: float
    phase_margin_deg: float
    closed_loop_bandwidth_hz: float
    peaking_db: float
    lock_time_s: float
    lock_step_hz: float
    lock_tolerance_hz: float


@dataclass(frozen=True)
class LoopFilterResult:
    """A designed (or given) filter, the parts to fit, and how they perform."""

    config: LoopFilterConfig
    spec: LoopSpec
    ideal: FilterDesign | None
    chosen: FilterDesign
    ideal_performance: LoopPerformance | None
    chosen_performance: LoopPerformance
    notes: tuple[str, ...]

    def open_loop(self) -> tuple[np.ndarray, np.ndarray]:
        """``G(s)`` of the chosen filter, 1/N included (what ``jitter.loop_from_open_loop`` takes)."""
        return open_loop_polynomials(self.chosen, self.spec)

    def closed_loop(self) -> tuple[np.ndarray, np.ndarray]:
        """``H(s) = G/(1+G)`` of the chosen filter (reference to output, before the factor N)."""
        return closed_loop_polynomials(self.chosen, self.spec)

    def error(self) -> tuple[np.ndarray, np.ndarray]:
        """``E(s) = 1/(1+G)`` of the chosen filter (VCO to output)."""
        return error_polynomials(self.chosen, self.spec)


def _lock_criterion(config: LoopFilterConfig, spec: LoopSpec) -> tuple[float, float]:
    step = config.lock_step_hz if config.lock_step_hz is not None else float(spec.f_pfd_hz)
    vco_hz = float(spec.n) * float(spec.f_pfd_hz)
    tolerance = (
        config.lock_tolerance_hz if config.lock_tolerance_hz is not None else LOCK_TOLERANCE_FRACTION * vco_hz
    )
    return step, tolerance


def measure_performance(
    design: FilterDesign, spec: LoopSpec, *, lock_step_hz: float, lock_tolerance_hz: float
) -> LoopPerformance:
    """Measure crossover, phase margin, closed-loop bandwidth, peaking and lock time.

    Examples
    --------
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> result = measure_performance(design_filter(spec, 100e3, 55), spec,
    ...                              lock_step_hz=25e6, lock_tolerance_hz=2.5e3)
    >>> round(result.phase_margin_deg, 3)
    55.0
    """
    margins = loop_margins(design, spec)
    return LoopPerformance(
        crossover_hz=margins.crossover_hz,
        phase_margin_deg=margins.phase_margin_deg,
        closed_loop_bandwidth_hz=closed_loop_bandwidth_hz(design, spec),
        peaking_db=closed_loop_peaking_db(design, spec),
        lock_time_s=lock_time(design, spec, frequency_step_hz=lock_step_hz, tolerance_hz=lock_tolerance_hz),
        lock_step_hz=lock_step_hz,
        lock_tolerance_hz=lock_tolerance_hz,
    )


def _notes(config: LoopFilterConfig, spec: LoopSpec, chosen: FilterDesign, performance: LoopPerformance) -> list[str]:
    notes = [
        "Planning estimate from a linear, continuous-time loop model. Kvco and the charge-pump "
        "current vary with tuning voltage, temperature and part; the synthesizer datasheet and "
        "a measurement of the built loop decide."
    ]
    if performance.crossover_hz > _PFD_FRACTION_LIMIT * float(spec.f_pfd_hz):
        notes.append(
            f"The loop bandwidth is above a tenth of the PFD frequency ({float(spec.f_pfd_hz):.4g} Hz): "
            "the sampled loop has less phase margin than shown and may be unstable."
        )
    if performance.phase_margin_deg < 30:
        notes.append("The phase margin is below 30°: expect strong peaking and ringing, or instability.")
    targets = (config.bandwidth_hz, config.phase_margin_deg)
    if targets[0] is not None and abs(math.log(performance.crossover_hz / targets[0])) > math.log(1.1):
        notes.append("The fitted parts move the bandwidth by more than 10 % from the target.")
    if targets[1] is not None and abs(performance.phase_margin_deg - targets[1]) > 5:
        notes.append("The fitted parts move the phase margin by more than 5° from the target.")
    tuning_cap = chosen.c3 if chosen.order == 3 else chosen.c2
    notes.append(
        f"The VCO tuning input sits across {'C3' if chosen.order == 3 else 'C2'} "
        f"({tuning_cap * 1e12:.3g} pF): its own input capacitance and leakage add to it; check the datasheet."
    )
    notes.append(
        "Lock time assumes a linear loop (no cycle slips, no charge-pump or tuning-voltage "
        "saturation, no VCO band calibration); real lock takes longer."
    )
    return notes


def evaluate_loop_filter(config: LoopFilterConfig, spec: LoopSpec) -> LoopFilterResult:
    """Design (or take) the filter, snap it, and measure both.

    Examples
    --------
    >>> from clockplan.loopfilter.board import parse_loop_filter
    >>> config = parse_loop_filter({"charge_pump": "2.5 mA", "kvco": "30 MHz/V",
    ...                             "bandwidth": "100 kHz", "phase_margin": 55})
    >>> result = evaluate_loop_filter(config, config.spec(100, 25_000_000))
    >>> result.chosen.order, 50 < result.chosen_performance.phase_margin_deg < 60
    (3, True)
    """
    step, tolerance = _lock_criterion(config, spec)
    ideal = None
    ideal_performance = None
    if config.fixed is not None:
        chosen = config.fixed
    else:
        assert config.bandwidth_hz is not None and config.phase_margin_deg is not None  # parse guarantees
        ideal = design_filter(
            spec,
            config.bandwidth_hz,
            config.phase_margin_deg,
            order=config.order,
            pole_ratio=config.pole_ratio,
            gamma=config.gamma,
        )
        ideal_performance = measure_performance(ideal, spec, lock_step_hz=step, lock_tolerance_hz=tolerance)
        chosen = snap_design(
            ideal, resistor_series=config.resistor_series, capacitor_series=config.capacitor_series
        )
    chosen_performance = measure_performance(chosen, spec, lock_step_hz=step, lock_tolerance_hz=tolerance)
    notes = tuple(_notes(config, spec, chosen, chosen_performance))
    return LoopFilterResult(config, spec, ideal, chosen, ideal_performance, chosen_performance, notes)


def _exact_or_number(value: Fraction | float) -> str | float:
    if isinstance(value, Fraction):
        return str(value.numerator) if value.denominator == 1 else f"{value.numerator}/{value.denominator}"
    return float(value)


def _polynomials(pair: tuple[np.ndarray, np.ndarray]) -> dict[str, list[float]]:
    return {"num": [float(c) for c in pair[0]], "den": [float(c) for c in pair[1]]}


def result_document(result: LoopFilterResult) -> dict:
    """Return a JSON-ready dict of the result (SI units; polynomials in s, rad/s, highest power first).

    Examples
    --------
    >>> import json
    >>> from clockplan.loopfilter.board import parse_loop_filter
    >>> config = parse_loop_filter({"charge_pump": "2.5 mA", "kvco": "30 MHz/V",
    ...                             "bandwidth": "100 kHz", "phase_margin": 55})
    >>> document = result_document(evaluate_loop_filter(config, config.spec(100, 25_000_000)))
    >>> sorted(document["fitted"]) == ["c1", "c2", "c3", "r1", "r3"] and bool(json.dumps(document))
    True
    """
    config, spec = result.config, result.spec
    return {
        "order": result.chosen.order,
        "loop": {
            "charge_pump_a": float(spec.charge_pump_a),
            "kvco_hz_per_v": float(spec.kvco_hz_per_v),
            "n": _exact_or_number(spec.n),
            "pfd_hz": _exact_or_number(spec.f_pfd_hz),
        },
        "target": {"bandwidth_hz": config.bandwidth_hz, "phase_margin_deg": config.phase_margin_deg},
        "series": {"resistors": config.resistor_series, "capacitors": config.capacitor_series},
        "ideal": result.ideal.components() if result.ideal is not None else None,
        "fitted": result.chosen.components(),
        "ideal_performance": asdict(result.ideal_performance) if result.ideal_performance is not None else None,
        "performance": asdict(result.chosen_performance),
        "open_loop": _polynomials(result.open_loop()),
        "closed_loop": _polynomials(result.closed_loop()),
        "error": _polynomials(result.error()),
        "notes": list(result.notes),
    }
