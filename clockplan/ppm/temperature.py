"""Frequency versus temperature of a reference oscillator.

Four models, all giving the fractional frequency error relative to the
frequency at the reference temperature (25 °C, where the initial tolerance
is specified):

* :class:`AtCutCurve` -- the cubic of an AT-cut quartz resonator, set by its
  cut-angle offset (Bechmann-type curve) or by explicit coefficients;
* :class:`TuningForkCurve` -- the parabola of a tuning-fork (kHz) crystal;
* :class:`PointTable` -- measured or datasheet points, linearly interpolated;
* :class:`StabilityBand` -- a plain ``lo..hi`` band, as TCXO, OCXO, MEMS and
  on-chip RC datasheets state it, with the temperature range it is rated
  over (``rated_c``).

How the band enters the analysis
--------------------------------
A band says where the frequency stays, not how it moves with temperature.
The worst case takes the band's edges; no temperature can be named for them
(``None``). The Monte Carlo draws the band error uniformly inside the band for
each board, independently of the board's drawn temperature: that is a
planning assumption, neither the datasheet's guarantee nor its typical curve.
The curve models are deterministic functions of temperature; the Monte Carlo
evaluates them at each board's temperature, shared by every reference on the
board.

A band holds only over the temperature range its datasheet rates it over
(``rated_c``); outside that range the figure is unknown, not the same.
:meth:`StabilityBand.rated_over` says whether a board's range lies inside
it; the accuracy stage refuses to judge a consumer on a band that does not
cover the board's range (``docs/frequency-accuracy.md``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from clockplan.errors import BoardError

__all__ = [
    "REFERENCE_TEMPERATURE_C",
    "AT_CUT_LINEAR_PER_ARCMIN",
    "AT_CUT_QUADRATIC",
    "AT_CUT_CUBIC",
    "TUNING_FORK_COEFFICIENT",
    "TemperatureExtremes",
    "StabilityBand",
    "NO_TEMPERATURE_MODEL",
    "AtCutCurve",
    "TuningForkCurve",
    "PointTable",
    "TemperatureModel",
]

#: Temperature at which initial tolerances are specified, °C.
REFERENCE_TEMPERATURE_C = 25.0

# AT-cut coefficients about 25 °C (Bechmann 1956, Proc. IRE 44; the
# higher-order values of Bechmann, Ballato & Lukaszek 1962, Proc. IRE 50,
# as reproduced in later frequency-control literature). Values quoted from memory
# and marked so in the tests that check them.
#: First-order coefficient per minute of arc of cut-angle offset, 1/°C.
AT_CUT_LINEAR_PER_ARCMIN = -5.15e-6 / 60.0
#: Second-order coefficient, 1/°C², puts the inflection near 26.4 °C.
AT_CUT_QUADRATIC = -4.5e-10
#: Third-order coefficient, 1/°C³, nearly independent of the angle.
AT_CUT_CUBIC = 109.5e-12

#: Typical parabolic coefficient of a tuning-fork crystal, 1/°C² (common practice).
TUNING_FORK_COEFFICIENT = -0.034e-6


@dataclass(frozen=True)
class TemperatureExtremes:
    """The lowest and highest error of a model over a temperature range.

    ``low_at_c`` / ``high_at_c`` are the temperatures where they occur, or
    ``None`` for a band, whose edges belong to no particular temperature.
    """

    low: float | Fraction
    low_at_c: float | None
    high: float | Fraction
    high_at_c: float | None


def _check_range(t_lo: float, t_hi: float) -> None:
    if not (math.isfinite(t_lo) and math.isfinite(t_hi)) or t_lo > t_hi:
        raise BoardError(
            f"temperature range {t_lo}..{t_hi} °C is not a range",
            hint="give the board's operating range as min..max, e.g. -40..85 °C",
        )


def _polynomial_extremes(coeffs: tuple[float, ...], origin: float, t_lo: float, t_hi: float) -> TemperatureExtremes:
    """Exact extremes of ``sum c_k (t - origin)^k`` on [t_lo, t_hi].

    A polynomial's extremes on a closed range lie at the ends or at its
    stationary points, so those few temperatures are evaluated exactly
    rather than searching a grid.
    """
    _check_range(t_lo, t_hi)
    poly = np.polynomial.Polynomial(coeffs)
    candidates = [t_lo, t_hi]
    for root in poly.deriv().roots():
        if abs(root.imag) < 1e-12:
            t = float(root.real) + origin
            if t_lo < t < t_hi:
                candidates.append(t)
    values = [float(poly(t - origin)) for t in candidates]
    low = min(range(len(values)), key=values.__getitem__)
    high = max(range(len(values)), key=values.__getitem__)
    return TemperatureExtremes(values[low], candidates[low], values[high], candidates[high])


@dataclass(frozen=True)
class StabilityBand:
    """Frequency stays inside ``lo..hi`` (fractional) over the rated range ``rated_c``.

    ``rated_c`` is the ``(min, max)`` temperature range in °C the datasheet
    rates the band over; ``None`` when it is not stated (only the zero band
    :data:`NO_TEMPERATURE_MODEL` that stands for "no temperature data", and
    bands built by hand in Python). The band says nothing outside its rated
    range: :meth:`rated_over` tells whether a board's range is inside it.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> band = StabilityBand(*parse_ppm("±0.5 ppm"), rated_c=(-40.0, 85.0))
    >>> band.extremes(-40, 85).high
    Fraction(1, 2000000)
    >>> band.rated_over(-40, 85), band.rated_over(-55, 85)
    (True, False)
    """

    lo: Fraction
    hi: Fraction
    rated_c: tuple[float, float] | None = None

    def __post_init__(self) -> None:
        if self.lo > self.hi:
            raise BoardError(f"stability band {self.lo}..{self.hi} has min above max", hint="write it as min..max")
        if self.rated_c is not None:
            low, high = self.rated_c
            if not (math.isfinite(low) and math.isfinite(high)) or low > high:
                raise BoardError(
                    f"rated range {low}..{high} °C of a stability band is not a range",
                    hint='write the range the datasheet rates the band over as min..max, e.g. "-40..85 C"',
                )

    def rated_over(self, t_lo: float, t_hi: float) -> bool:
        """True when ``t_lo..t_hi`` lies inside the rated range (its ends included).

        False when the band states no rated range: where it holds is then unknown.
        """
        _check_range(t_lo, t_hi)
        if self.rated_c is None:
            return False
        return self.rated_c[0] <= t_lo and t_hi <= self.rated_c[1]

    def fractional_error(self, temps_c: np.ndarray) -> np.ndarray:
        """Not a function of temperature: NaN everywhere, so no curve is invented.

        Use :meth:`extremes` for the worst case and :meth:`sample` for the
        Monte Carlo; a plot draws the band's edges instead of a curve.
        """
        return np.full(np.shape(temps_c), np.nan)

    def extremes(self, t_lo: float, t_hi: float) -> TemperatureExtremes:
        """Band edges; no temperature is attached to them.

        The edges are returned whatever the range: whether the band is rated
        over it is :meth:`rated_over`'s question, asked by the stage.
        """
        _check_range(t_lo, t_hi)
        return TemperatureExtremes(self.lo, None, self.hi, None)

    def sample(self, temps_c: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        """Uniform draw inside the band, one per board (see module notes)."""
        return rng.uniform(float(self.lo), float(self.hi), size=np.shape(temps_c))


#: The zero band a reference gets when its file gives neither ``stability``
#: nor ``temperature_curve``: no temperature term at all (the stage warns).
NO_TEMPERATURE_MODEL = StabilityBand(Fraction(0), Fraction(0))


@dataclass(frozen=True)
class AtCutCurve:
    """AT-cut cubic: ``a1 dT + a2 dT² + a3 dT³`` with ``dT = T - reference_c``.

    Build it from the cut-angle offset with :meth:`from_angle` or give the
    coefficients of a datasheet or a fit directly.

    Examples
    --------
    >>> curve = AtCutCurve.from_angle(4.0)
    >>> round(curve.extremes(-40, 85).high_at_c, 1)  # the upper turning point
    -6.0
    """

    a1: float
    a2: float = AT_CUT_QUADRATIC
    a3: float = AT_CUT_CUBIC
    reference_c: float = REFERENCE_TEMPERATURE_C

    @classmethod
    def from_angle(cls, offset_arcmin: float) -> "AtCutCurve":
        """Curve for a cut-angle offset in minutes of arc from the zero-slope angle."""
        return cls(a1=AT_CUT_LINEAR_PER_ARCMIN * offset_arcmin)

    @property
    def coefficients(self) -> tuple[float, float, float, float]:
        return (0.0, self.a1, self.a2, self.a3)

    @property
    def inflection_c(self) -> float:
        """Temperature of the inflection point, °C."""
        return self.reference_c - self.a2 / (3.0 * self.a3) if self.a3 else math.nan

    def fractional_error(self, temps_c: np.ndarray) -> np.ndarray:
        """Fractional frequency error at each temperature (vectorized)."""
        dt = np.asarray(temps_c, dtype=float) - self.reference_c
        return ((self.a3 * dt + self.a2) * dt + self.a1) * dt

    def extremes(self, t_lo: float, t_hi: float) -> TemperatureExtremes:
        """Lowest and highest error over the range, at the ends or the turning points."""
        return _polynomial_extremes(self.coefficients, self.reference_c, t_lo, t_hi)

    def sample(self, temps_c: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return self.fractional_error(temps_c)


@dataclass(frozen=True)
class TuningForkCurve:
    """Tuning-fork parabola: ``coefficient * (T - turnover_c)²``.

    Examples
    --------
    >>> fork = TuningForkCurve()
    >>> round(float(fork.fractional_error(np.array([-40.0]))[0]) * 1e6, 2)
    -143.65
    """

    coefficient: float = TUNING_FORK_COEFFICIENT
    turnover_c: float = REFERENCE_TEMPERATURE_C

    def fractional_error(self, temps_c: np.ndarray) -> np.ndarray:
        dt = np.asarray(temps_c, dtype=float) - self.turnover_c
        return self.coefficient * dt * dt

    def extremes(self, t_lo: float, t_hi: float) -> TemperatureExtremes:
        return _polynomial_extremes((0.0, 0.0, self.coefficient), self.turnover_c, t_lo, t_hi)

    def sample(self, temps_c: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return self.fractional_error(temps_c)


@dataclass(frozen=True)
class PointTable:
    """Measured ``(temperature °C, fractional error)`` points, linearly interpolated.

    The table must span the board's temperature range: extrapolating a
    measured curve is a guess, so :meth:`extremes` refuses it.

    Examples
    --------
    >>> table = PointTable(((-40.0, 1e-5), (25.0, 0.0), (85.0, 2e-5)))
    >>> table.extremes(-40, 85).high_at_c
    85.0
    """

    points: tuple[tuple[float, float], ...]

    def __post_init__(self) -> None:
        temps = [t for t, _ in self.points]
        if len(temps) < 2 or any(b <= a for a, b in zip(temps, temps[1:])):
            raise BoardError(
                "a temperature table needs two or more points in rising temperature order",
                hint="list points as [[-40, '12 ppm'], [25, '0 ppm'], [85, '-8 ppm']]",
            )

    def _arrays(self) -> tuple[np.ndarray, np.ndarray]:
        pts = np.asarray(self.points, dtype=float)
        return pts[:, 0], pts[:, 1]

    def fractional_error(self, temps_c: np.ndarray) -> np.ndarray:
        temps, errors = self._arrays()
        return np.interp(np.asarray(temps_c, dtype=float), temps, errors)

    def extremes(self, t_lo: float, t_hi: float) -> TemperatureExtremes:
        """Extremes of the interpolated curve: at the range ends or at table points inside."""
        _check_range(t_lo, t_hi)
        temps, _ = self._arrays()
        if t_lo < temps[0] or t_hi > temps[-1]:
            raise BoardError(
                f"the temperature table covers {temps[0]:g}..{temps[-1]:g} °C, "
                f"not the board's {t_lo:g}..{t_hi:g} °C",
                hint="add points at the ends of the board's temperature range",
            )
        candidates = np.concatenate(([t_lo, t_hi], temps[(temps > t_lo) & (temps < t_hi)]))
        values = self.fractional_error(candidates)
        low, high = int(np.argmin(values)), int(np.argmax(values))
        return TemperatureExtremes(
            float(values[low]), float(candidates[low]), float(values[high]), float(candidates[high])
        )

    def sample(self, temps_c: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        return self.fractional_error(temps_c)


TemperatureModel = StabilityBand | AtCutCurve | TuningForkCurve | PointTable
