"""Passive loop-filter design from a target loop bandwidth and phase margin.

The method is the standard one for charge-pump PLLs with a passive filter
(as in Banerjee, *PLL Performance, Simulation, and Design*, chapters on the
fundamental loop-filter design equations):

1. choose the open-loop crossover ``wc = 2*pi*bandwidth``;
2. with ``T3 = pole_ratio * T1`` and ``Tz = gamma / (wc**2 * (T1 + T3))``,
   solve the phase-margin equation ``atan(wc*Tz) - atan(wc*T1) - atan(wc*T3)
   = phase_margin`` for ``T1`` (numerically; its left side falls steadily
   with ``T1``, so bisection finds the single root);
3. the crossover condition ``|G(j*wc)| = 1`` gives the total capacitance A0;
4. the component values follow from the inverse coefficient map.

The formulas are derived in :mod:`clockplan.loopfilter.symbolic` and
evaluated here in their closed forms (:mod:`clockplan.loopfilter.closed_form`,
checked against the derivation by the tests); this module only solves them.
``bandwidth`` here is the **open-loop unity-gain frequency**, the usual
meaning of "loop bandwidth" in this design method; the closed-loop -3 dB
frequency is somewhat higher
(:func:`clockplan.loopfilter.response.closed_loop_bandwidth_hz`).

The design assumes a continuous-time loop, valid while the bandwidth is well
below the PFD frequency (a tenth of it is common practice).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, fields
from fractions import Fraction

from clockplan.errors import ClockplanError, InfeasibleError
from clockplan.eseries import snap
from clockplan.loopfilter._numeric import geometric_bisection
from clockplan.loopfilter.closed_form import (
    COMPONENT_NAMES,
    component_values,
    impedance_coefficients,
    peak_zero_time_constant,
    phase_margin,
    total_capacitance,
)

__all__ = [
    "DEFAULT_POLE_RATIO",
    "LoopSpec",
    "FilterDesign",
    "design_filter",
    "design_second_order",
    "design_third_order",
    "snap_design",
]

# T3/T1 of the third-order filter when none is given: the extra pole sits at
# twice the frequency of the first one -- a middle choice between spur
# attenuation (larger ratio) and phase left for the margin (smaller ratio).
DEFAULT_POLE_RATIO = 0.5

_UNITS = {"r1": "Ω", "r3": "Ω", "c1": "F", "c2": "F", "c3": "F"}


def _positive_float(value: object, name: str, hint: str) -> float:
    try:
        number = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        number = math.nan
    if not (math.isfinite(number) and number > 0):
        raise ClockplanError(f"{name} must be a finite number above zero, not {value!r}", key=name, hint=hint)
    return number


@dataclass(frozen=True)
class LoopSpec:
    """The loop around the filter: charge pump, VCO, divider and PFD.

    Parameters
    ----------
    charge_pump_a
        Charge-pump current in A (the magnitude of the up/down current).
    kvco_hz_per_v
        VCO tuning gain in **Hz/V** (not rad/s/V).
    n
        Feedback division ratio from VCO to PFD (exact from the plan, or a float).
    f_pfd_hz
        Phase-detector comparison frequency in Hz.

    Examples
    --------
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> spec.loop_constant
    750.0
    """

    charge_pump_a: float
    kvco_hz_per_v: float
    n: Fraction | float
    f_pfd_hz: Fraction | float

    def __post_init__(self) -> None:
        _positive_float(self.charge_pump_a, "charge_pump_a", "give the charge-pump current in A, e.g. 2.5e-3")
        _positive_float(self.kvco_hz_per_v, "kvco_hz_per_v", "give the VCO gain in Hz/V, e.g. 30e6")
        _positive_float(self.n, "n", "give the feedback divider ratio N, e.g. 100")
        _positive_float(self.f_pfd_hz, "f_pfd_hz", "give the PFD frequency in Hz, e.g. 25e6")

    @property
    def loop_constant(self) -> float:
        """``Icp * Kvco / N`` in A/(V*s): ``G(s) = loop_constant * Z(s) / s``."""
        return float(self.charge_pump_a) * float(self.kvco_hz_per_v) / float(self.n)


@dataclass(frozen=True)
class FilterDesign:
    """Component values of a passive loop filter (ohms and farads).

    ``r1``-``c1`` is the series branch that makes the zero, ``c2`` the shunt
    capacitor at the charge pump, ``r3``-``c3`` the extra low-pass section of
    the third-order filter (``None`` for order 2).  See
    :mod:`clockplan.loopfilter.symbolic` for the drawing.

    Examples
    --------
    >>> FilterDesign(2, r1=1e3, c1=10e-9, c2=1e-9).components()
    {'r1': 1000.0, 'c1': 1e-08, 'c2': 1e-09}
    """

    order: int
    r1: float
    c1: float
    c2: float
    r3: float | None = None
    c3: float | None = None

    def __post_init__(self) -> None:
        if self.order not in COMPONENT_NAMES:
            raise ClockplanError(
                f"loop filter order must be 2 or 3, not {self.order!r}",
                key="order",
                hint="use 2 (R1, C1, C2) or 3 (adds R3, C3)",
            )
        for name in ("r3", "c3"):
            present = getattr(self, name) is not None
            if present != (self.order == 3):
                raise ClockplanError(
                    f"{name} is {'given' if present else 'missing'} for a order-{self.order} filter",
                    key=name,
                    hint="a second-order filter has r1, c1, c2; a third-order one adds r3 and c3",
                )
        for name in COMPONENT_NAMES[self.order]:
            value = _positive_float(getattr(self, name), name, f"give {name} in {_UNITS[name]}")
            object.__setattr__(self, name, value)

    def components(self) -> dict[str, float]:
        """Return the component values by name, in drawing order."""
        return {name: getattr(self, name) for name in COMPONENT_NAMES[self.order]}

    def coefficients(self) -> tuple[float, float, float, float]:
        """Return ``(A0, A1, A2, Tz)`` of ``Z(s) = (1 + s*Tz) / (s*(A2*s**2 + A1*s + A0))``."""
        return impedance_coefficients(self.order, *self.components().values())

    @classmethod
    def from_components(cls, order: int, values: Mapping[str, float]) -> "FilterDesign":
        """Build a design from a ``{name: value}`` mapping (extra names are refused)."""
        known = {f.name for f in fields(cls)} - {"order"}
        unknown = sorted(set(values) - known)
        if unknown:
            raise ClockplanError(
                f"unknown component {unknown[0]!r}", key=unknown[0], hint="components are r1, c1, c2, r3, c3"
            )
        return cls(order, **values)  # type: ignore[arg-type]


def _check_targets(bandwidth_hz: float, phase_margin_deg: float, gamma: float) -> tuple[float, float, float]:
    wc = 2 * math.pi * _positive_float(bandwidth_hz, "bandwidth", "give the loop bandwidth in Hz, e.g. 100e3")
    margin = _positive_float(phase_margin_deg, "phase_margin", "give the phase margin in degrees, e.g. 55")
    if margin >= 90:
        raise InfeasibleError(
            f"a phase margin of {margin:g}° is not reachable with a passive filter",
            key="phase_margin",
            hint="the zero adds at most 90°; choose a margin between 30° and 75°",
        )
    ratio = _positive_float(gamma, "gamma", "gamma is about 1 (it places the phase peak at the crossover)")
    return wc, math.radians(margin), ratio


def _zero_time_constant(wc: float, t1: float, t3: float, gamma: float) -> float:
    """``Tz = gamma / (wc**2 * (T1 + T3))``: the second-order peak condition, the book's rule for order 3."""
    return gamma * peak_zero_time_constant(wc, t1 + t3)


def _solve_pole_time_constant(order: int, wc: float, margin_rad: float, pole_ratio: float, gamma: float) -> float:
    """Solve the phase-margin equation for ``T1`` by bisection on ``log(T1)``."""

    def excess(t1: float) -> float:
        t3 = pole_ratio * t1
        return phase_margin(wc, _zero_time_constant(wc, t1, t3, gamma), t1, t3) - margin_rad

    # As T1 -> 0 the margin tends to 90° (> target); it falls steadily as T1
    # grows, so widen the upper end until it is below the target.
    low, high = 1e-9 / wc, 1.0 / wc
    while excess(high) > 0:
        high *= 10
        if high > 1e12 / wc:  # pragma: no cover - unreachable for margins below 90°
            raise InfeasibleError("the phase-margin equation has no solution", hint="lower the phase margin")
    return geometric_bisection(lambda t1: excess(t1) > 0, low, high, rel_tol=1e-14)


def design_filter(
    spec: LoopSpec,
    bandwidth_hz: float,
    phase_margin_deg: float,
    *,
    order: int = 3,
    pole_ratio: float = DEFAULT_POLE_RATIO,
    gamma: float = 1.0,
) -> FilterDesign:
    """Design a passive loop filter of ``order`` 2 or 3 (see the module docstring).

    Parameters
    ----------
    spec
        Charge pump, VCO gain, N and PFD frequency.
    bandwidth_hz
        Open-loop unity-gain (crossover) frequency in Hz.
    phase_margin_deg
        Phase margin at the crossover, degrees (0 < margin < 90).
    order
        2 or 3.
    pole_ratio
        ``T3 / T1`` of the third-order filter (ignored for order 2).
    gamma
        Zero placement factor of the design method; 1 puts the phase peak at
        the crossover (exactly for order 2, nearly for order 3).

    Examples
    --------
    >>> design = design_filter(LoopSpec(2.5e-3, 30e6, 100, 25e6), 100e3, 55, order=2)
    >>> sorted(design.components())
    ['c1', 'c2', 'r1']
    """
    if order not in COMPONENT_NAMES:
        raise ClockplanError(f"loop filter order must be 2 or 3, not {order!r}", key="order", hint="use 2 or 3")
    wc, margin_rad, gamma_value = _check_targets(bandwidth_hz, phase_margin_deg, gamma)
    ratio = _positive_float(pole_ratio, "pole_ratio", "T3/T1 between 0 and 1, e.g. 0.5") if order == 3 else 0.0
    t1 = _solve_pole_time_constant(order, wc, margin_rad, ratio, gamma_value)
    t3 = ratio * t1
    tz = _zero_time_constant(wc, t1, t3, gamma_value)
    a0 = total_capacitance(float(spec.charge_pump_a), float(spec.kvco_hz_per_v), float(spec.n), wc, tz, t1, t3)
    # A0 * (1 + s*T1) * (1 + s*T3) expanded.
    a1, a2 = a0 * (t1 + t3), a0 * t1 * t3
    try:
        values = component_values(order, a0, a1, a2, tz)
    except (ValueError, ZeroDivisionError):  # pragma: no cover - defensive, see below
        values = {}
    # A positive margin implies Tz > T1, T3, which keeps every part positive
    # (a random search over gamma, pole ratio and margin found no exception);
    # the check stays as a guard against rounding at extreme inputs.
    if not values or not all(math.isfinite(v) and v > 0 for v in values.values()):  # pragma: no cover
        raise InfeasibleError(
            f"no passive order-{order} filter gives {phase_margin_deg:g}° at {bandwidth_hz:g} Hz "
            f"with pole ratio {pole_ratio:g} and gamma {gamma:g}",
            key="loop_filter",
            hint="use gamma near 1, a pole ratio below 1, or a smaller phase margin",
        )
    return FilterDesign(order, **values)


def design_second_order(spec: LoopSpec, bandwidth_hz: float, phase_margin_deg: float, *, gamma: float = 1.0) -> FilterDesign:
    """Design the second-order filter (R1, C1, C2).

    Examples
    --------
    >>> design_second_order(LoopSpec(2.5e-3, 30e6, 100, 25e6), 100e3, 55).order
    2
    """
    return design_filter(spec, bandwidth_hz, phase_margin_deg, order=2, gamma=gamma)


def design_third_order(
    spec: LoopSpec,
    bandwidth_hz: float,
    phase_margin_deg: float,
    *,
    pole_ratio: float = DEFAULT_POLE_RATIO,
    gamma: float = 1.0,
) -> FilterDesign:
    """Design the third-order filter (R1, C1, C2, R3, C3) with ``T3 = pole_ratio * T1``.

    Examples
    --------
    >>> design_third_order(LoopSpec(2.5e-3, 30e6, 100, 25e6), 100e3, 55).order
    3
    """
    return design_filter(spec, bandwidth_hz, phase_margin_deg, order=3, pole_ratio=pole_ratio, gamma=gamma)


def snap_design(design: FilterDesign, *, resistor_series: str = "E24", capacitor_series: str = "E12") -> FilterDesign:
    """Replace each component by the nearest value of a preferred series (IEC 60063).

    Examples
    --------
    >>> snap_design(FilterDesign(2, r1=1234.0, c1=9.6e-9, c2=1.05e-9)).components()
    {'r1': 1200.0, 'c1': 1e-08, 'c2': 1e-09}
    """
    snapped = {
        name: snap(value, resistor_series if name.startswith("r") else capacitor_series)
        for name, value in design.components().items()
    }
    return FilterDesign(design.order, **snapped)
