"""Load capacitance of a passive crystal and the frequency pulling it causes.

A crystal is cut to oscillate at its nominal frequency with one load
capacitance ``CL`` (its specified load). The circuit presents two load
capacitors in series plus stray capacitance; any difference pulls the
frequency. With the crystal's motional capacitance ``C1`` and shunt
capacitance ``C0`` (the Butterworth-Van Dyke equivalent circuit), the load
resonance sits above series resonance by

    f_L / f_s = sqrt(1 + C1 / (C0 + CL))   ~   1 + C1 / (2 (C0 + CL))

and the pulling is the ratio of the two load resonances minus one.

A board that gives no ``stray`` capacitance gets :data:`TYPICAL_STRAY_F`
± :data:`TYPICAL_STRAY_TOLERANCE_F` (pins, traces and the oscillator's
input: a few pF on a typical board, common practice), never 0 pF, and the
accuracy stage warns (``stray-assumed``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from clockplan.errors import BoardError
from clockplan.eseries import exact_values as series_values

__all__ = [
    "TYPICAL_STRAY_F",
    "TYPICAL_STRAY_TOLERANCE_F",
    "CrystalLoad",
    "CapacitorChoice",
    "series_load",
    "load_resonance_offset",
    "trim_sensitivity",
    "pulling",
    "nearest_load_capacitors",
]


#: Stray capacitance assumed when a board gives none: 3 pF (pin, trace and
#: oscillator-input capacitance of a typical board are 2-5 pF; common practice,
#: from memory).
TYPICAL_STRAY_F = Fraction(3, 10**12)
#: The uncertainty that goes with it when the board gives none either: ±2 pF, so
#: the assumed stray spans 1-5 pF.
TYPICAL_STRAY_TOLERANCE_F = Fraction(2, 10**12)


def series_load(cap_a: Fraction, cap_b: Fraction, stray: Fraction) -> Fraction:
    """Load seen by the crystal: ``cap_a * cap_b / (cap_a + cap_b) + stray``, exact.

    Examples
    --------
    >>> pF = Fraction(1, 10**12)
    >>> series_load(18 * pF, 18 * pF, 3 * pF) / pF
    Fraction(12, 1)
    """
    if cap_a <= 0 or cap_b <= 0 or stray < 0:
        raise BoardError("load capacitors must be positive and stray zero or positive", hint="check the load values")
    return cap_a * cap_b / (cap_a + cap_b) + stray


def load_resonance_offset(c1: float | Fraction, c0: float | Fraction, load: float | Fraction) -> float:
    """Fractional offset of the load resonance above series resonance.

    Lossless Butterworth-Van Dyke model: ``sqrt(1 + C1/(C0 + CL)) - 1``,
    which is ``C1 / (2 (C0 + CL))`` to first order.

    Examples
    --------
    >>> round(load_resonance_offset(20e-15, 5e-12, 20e-12) * 1e6, 2)
    399.92
    """
    ratio = float(c1) / (float(c0) + float(load))
    return math.sqrt(1.0 + ratio) - 1.0


def trim_sensitivity(c1: float | Fraction, c0: float | Fraction, load: float | Fraction) -> float:
    """Change of fractional frequency per farad of load, ``-C1 / (2 (C0 + CL)²)``.

    Examples
    --------
    >>> round(trim_sensitivity(20e-15, 5e-12, 20e-12) * 1e6 * 1e-12, 3)  # ppm per pF
    -16.0
    """
    total = float(c0) + float(load)
    return -float(c1) / (2.0 * total * total)


def pulling(c1: float | Fraction, c0: float | Fraction, specified: float | Fraction, actual: float | Fraction) -> float:
    """Fractional frequency error when a crystal cut for ``specified`` load sees ``actual``.

    Examples
    --------
    >>> round(pulling(20e-15, 5e-12, 20e-12, 10e-12) * 1e6)
    266
    """
    ratio_actual = float(c1) / (float(c0) + float(actual))
    ratio_spec = float(c1) / (float(c0) + float(specified))
    return math.sqrt((1.0 + ratio_actual) / (1.0 + ratio_spec)) - 1.0


@dataclass(frozen=True)
class CrystalLoad:
    """The load network of a passive crystal and the crystal's equivalent circuit.

    Parameters
    ----------
    specified_load
        The load capacitance the crystal is cut for (datasheet ``CL``), F.
    motional_c1, shunt_c0
        Motional and shunt capacitance of the crystal, F.
    cap_a, cap_b
        The two load capacitors from each crystal pin to ground, F.
    stray
        Pin, trace and oscillator-input capacitance in parallel with the load, F.
    cap_tolerance
        Fractional tolerance of each load capacitor (e.g. 5 % C0G: ``1/20``).
    stray_tolerance
        Uncertainty of the stray estimate, ± F.
    stray_assumed
        True when the board gave no ``stray`` and :data:`TYPICAL_STRAY_F` was taken.
    """

    specified_load: Fraction
    motional_c1: Fraction
    shunt_c0: Fraction
    cap_a: Fraction
    cap_b: Fraction
    stray: Fraction = Fraction(0)
    cap_tolerance: Fraction = Fraction(0)
    stray_tolerance: Fraction = Fraction(0)
    stray_assumed: bool = False

    def __post_init__(self) -> None:
        for name in ("specified_load", "motional_c1", "cap_a", "cap_b"):
            if getattr(self, name) <= 0:
                raise BoardError(f"crystal {name} must be positive", hint="write it in farads, e.g. '8 pF' or '5 fF'")
        for name in ("shunt_c0", "stray", "cap_tolerance", "stray_tolerance"):
            if getattr(self, name) < 0:
                raise BoardError(f"crystal {name} must not be negative", hint="write zero or a positive value")
        if self.cap_tolerance >= 1:
            raise BoardError("capacitor tolerance must be below 100 %", hint="write e.g. '5 %'")
        if self.stray_tolerance > self.stray:
            raise BoardError("stray tolerance exceeds the stray capacitance", hint="give stray as e.g. '3 pF ± 1 pF'")

    @property
    def actual_load(self) -> Fraction:
        """Load with nominal component values, exact."""
        return series_load(self.cap_a, self.cap_b, self.stray)

    @property
    def load_range(self) -> tuple[Fraction, Fraction]:
        """Smallest and largest load over the capacitor and stray tolerances, exact."""
        low, high = 1 - self.cap_tolerance, 1 + self.cap_tolerance
        return (
            series_load(self.cap_a * low, self.cap_b * low, self.stray - self.stray_tolerance),
            series_load(self.cap_a * high, self.cap_b * high, self.stray + self.stray_tolerance),
        )

    def pulling(self) -> float:
        """Fractional error with nominal values."""
        return pulling(self.motional_c1, self.shunt_c0, self.specified_load, self.actual_load)

    def pulling_range(self) -> tuple[float, float]:
        """Lowest and highest pulling: more load means lower frequency."""
        low_load, high_load = self.load_range
        return (
            pulling(self.motional_c1, self.shunt_c0, self.specified_load, high_load),
            pulling(self.motional_c1, self.shunt_c0, self.specified_load, low_load),
        )


@dataclass(frozen=True)
class CapacitorChoice:
    """A pair of standard load capacitors and where it lands."""

    cap_a: Fraction
    cap_b: Fraction
    load: Fraction
    residual: float  # fractional pulling left with this pair


def nearest_load_capacitors(
    specified_load: Fraction,
    motional_c1: Fraction,
    shunt_c0: Fraction,
    stray: Fraction = Fraction(0),
    series: str = "E12",
    equal: bool = True,
    count: int = 3,
    low: Fraction = Fraction(1, 10**12),
    high: Fraction = Fraction(100, 10**12),
) -> list[CapacitorChoice]:
    """Standard capacitor pairs whose load lands closest to the specified load.

    Parameters
    ----------
    equal
        Only pairs of equal values (the usual layout); ``False`` also tries
        unequal pairs, which can land closer.
    count
        How many choices to return, best first.

    Examples
    --------
    >>> pF = Fraction(1, 10**12)
    >>> best = nearest_load_capacitors(12 * pF, 5 * pF / 1000, 2 * pF, stray=3 * pF)[0]
    >>> best.cap_a / pF, best.load / pF
    (Fraction(18, 1), Fraction(12, 1))
    """
    if specified_load <= stray:
        raise BoardError(
            "the stray capacitance alone reaches the specified load",
            hint="no load capacitors can help; choose a crystal with a larger specified load",
        )
    values = series_values(series, low, high)
    pairs = ((a, a) for a in values) if equal else ((a, b) for i, a in enumerate(values) for b in values[i:])
    choices = []
    for cap_a, cap_b in pairs:
        load = series_load(cap_a, cap_b, stray)
        choices.append(CapacitorChoice(cap_a, cap_b, load, pulling(motional_c1, shunt_c0, specified_load, load)))
    choices.sort(key=lambda choice: (abs(choice.load - specified_load), choice.cap_a + choice.cap_b))
    return choices[:count]
