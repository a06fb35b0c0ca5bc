"""The specification of one reference oscillator, as a datasheet states it.

All errors are fractional (1 ppm = 1e-6) ``(lo, hi)`` ranges relative to the
nominal frequency; the initial tolerance holds at 25 °C and the temperature
model gives the deviation from the 25 °C frequency.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from clockplan.errors import BoardError
from clockplan.ppm.aging import NO_AGING, AgingModel
from clockplan.ppm.crystal_load import CrystalLoad
from clockplan.ppm.temperature import NO_TEMPERATURE_MODEL, StabilityBand, TemperatureModel

__all__ = [
    "OSCILLATOR_KINDS",
    "DISTRIBUTIONS",
    "SIGMA_PER_LIMIT",
    "OscillatorPower",
    "OscillatorSpec",
    "trim_range",
    "supply_power",
]

#: Kinds of reference: a passive crystal driven by a chip's oscillator
#: circuit, packaged oscillators (XO, VCXO, TCXO, OCXO, MEMS), on-chip RC
#: or ring oscillators, and an ``external`` input: a clock from another unit
#: (a network reference, a lab's 10 MHz), whose figures are that unit's.
OSCILLATOR_KINDS = ("crystal", "xo", "vcxo", "tcxo", "ocxo", "mems", "rc", "external")

#: How a part's tolerances are spread between their limits in the Monte Carlo.
DISTRIBUTIONS = ("uniform", "normal")

#: For a ``normal`` part the datasheet limits are taken as ±3 sigma and parts
#: outside them as screened out (common practice in tolerance analysis).
SIGMA_PER_LIMIT = 3

_ZERO_RANGE = (Fraction(0), Fraction(0))


def _check_range(name: str, value: tuple[Fraction, Fraction]) -> None:
    if len(value) != 2 or value[0] > value[1]:
        raise BoardError(f"{name} {value!r} is not a (min, max) range", hint="write it as '±20 ppm' or '-50..+30 ppm'")


@dataclass(frozen=True)
class OscillatorPower:
    """Supply power while warming up and once settled, and the warm-up time.

    An oven-controlled oscillator heats its crystal to a set point: it draws
    watts while warming and stays hot in operation.
    """

    warmup_w: Fraction
    steady_w: Fraction
    warmup_s: float


@dataclass(frozen=True)
class OscillatorSpec:
    """One reference oscillator.

    Parameters
    ----------
    kind
        One of :data:`OSCILLATOR_KINDS`.
    initial
        Frequency tolerance at 25 °C, fractional ``(lo, hi)``.
    temperature
        Frequency versus temperature model.
    aging
        Drift over the board's lifetime.
    supply_sensitivity, load_sensitivity
        Extra error over the board's supply tolerance and the output load's
        variation, fractional ``(lo, hi)``, as the datasheet states them.
    distribution
        ``"uniform"`` or ``"normal"`` (limits at ±3 sigma) for the tolerances.
    crystal_load
        For a passive crystal: its load network, which pulls the frequency.
    trim
        Adjustment range (e.g. an oven oscillator's frequency trim), fractional.
    power
        Supply power and warm-up, where the grade makes it matter (ovens).

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> xo = OscillatorSpec("xo", parse_ppm("±20 ppm"), StabilityBand(*parse_ppm("±25 ppm"), rated_c=(-40.0, 85.0)))
    >>> xo.kind
    'xo'
    """

    kind: str
    initial: tuple[Fraction, Fraction]
    temperature: TemperatureModel = NO_TEMPERATURE_MODEL
    aging: AgingModel = NO_AGING
    supply_sensitivity: tuple[Fraction, Fraction] = _ZERO_RANGE
    load_sensitivity: tuple[Fraction, Fraction] = _ZERO_RANGE
    distribution: str = "uniform"
    crystal_load: CrystalLoad | None = None
    trim: tuple[Fraction, Fraction] | None = None
    power: OscillatorPower | None = None
    #: Figures the board file left out that were taken as 0 (``"supply_sensitivity"``), for a finding.
    unstated: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if self.kind not in OSCILLATOR_KINDS:
            raise BoardError(f"unknown oscillator kind {self.kind!r}", hint="use one of " + ", ".join(OSCILLATOR_KINDS))
        if self.distribution not in DISTRIBUTIONS:
            raise BoardError(f"unknown distribution {self.distribution!r}", hint="use 'uniform' or 'normal'")
        _check_range("initial tolerance", self.initial)
        _check_range("supply sensitivity", self.supply_sensitivity)
        _check_range("load sensitivity", self.load_sensitivity)
        if self.trim is not None:
            _check_range("trim range", self.trim)
        if self.crystal_load is not None and self.kind != "crystal":
            raise BoardError(
                f"a load network belongs to a passive crystal, not to a {self.kind!r}",
                hint="set kind = 'crystal' or remove the load table",
            )

    @property
    def runs_hot(self) -> bool:
        """True for an oven-controlled oscillator."""
        return self.kind == "ocxo"


def trim_range(nominal_hz: Fraction, trim_hz: tuple[Fraction, Fraction]) -> tuple[Fraction, Fraction]:
    """A trim range in Hz as a fractional range, exact.

    Examples
    --------
    >>> trim_range(Fraction(10_000_000), (Fraction(-10), Fraction(10)))
    (Fraction(-1, 1000000), Fraction(1, 1000000))
    """
    if nominal_hz <= 0:
        raise BoardError("nominal frequency must be positive", hint="write e.g. '10 MHz'")
    return trim_hz[0] / nominal_hz, trim_hz[1] / nominal_hz


def supply_power(volts: Fraction, amps: Fraction) -> Fraction:
    """Power drawn from a supply, W, exact.

    Examples
    --------
    >>> supply_power(Fraction(12), Fraction(7, 10))
    Fraction(42, 5)
    """
    return volts * amps
