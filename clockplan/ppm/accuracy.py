"""Frequency error at one consumer: worst case, statistical total and margin.

Every PLL and divider locked to a reference passes the reference's
fractional error through unchanged and adds its own synthesis error (the
exact difference between the achieved and the wanted frequency). Stages
compose multiplicatively, ``(1 + a)(1 + b) - 1``, written as ``a + b + ab`` so
that an exact zero adds exactly nothing. The reference's own contributions
(initial tolerance, temperature, aging, supply, load, crystal pulling) add
linearly, the convention datasheets use for an "overall" stability.

* Worst case: the linear sum of every contribution's extreme over the
  temperature range and lifetime; each curve is evaluated exactly at the range
  ends and at its turning points.
* Statistical total (RSS): the centres add, the half-widths add as the root of
  the sum of squares, the tolerance-stack convention for independent errors.

Budgets are planning estimates: the part datasheet and the governing standard
decide.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from fractions import Fraction

from clockplan.errors import BoardError
from clockplan.ppm.oscillator import OscillatorSpec
from clockplan.ppm.spread import SpreadAllowance, SpreadSpectrum, spread_fits

__all__ = [
    "PLANNING_NOTE",
    "OVEN_NOTE",
    "ConsumerBudget",
    "Contribution",
    "AccuracyResult",
    "compose",
    "reference_contributions",
    "consumer_accuracy",
]

PLANNING_NOTE = "Budgets are planning estimates: the part datasheet and the governing standard decide."
OVEN_NOTE = (
    "Oven-controlled oscillator: it runs hot and draws watts (several watts while warming, "
    "about 2 W once at temperature) and needs minutes of warm-up before it is in tolerance."
)

Number = Fraction | float


@dataclass(frozen=True)
class ConsumerBudget:
    """Frequency-error budget of a consumer, fractional ``(lo, hi)``.

    ``spread_allowance`` is the spread a standard allows on top of the
    tolerance (PCI Express: down-spread to -5000 ppm at 30-33 kHz on top of
    ±300 ppm); without it any spread counts as error.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> ConsumerBudget(parse_ppm("±100 ppm")).half_width
    Fraction(1, 10000)
    """

    tolerance: tuple[Fraction, Fraction]
    spread_allowance: SpreadAllowance | None = None

    def __post_init__(self) -> None:
        lo, hi = self.tolerance
        if not lo <= 0 <= hi:
            raise BoardError(
                f"budget {lo}..{hi} does not contain 0",
                hint="a budget is an error range around nominal, e.g. '±100 ppm'",
            )

    @property
    def half_width(self) -> Fraction:
        return (self.tolerance[1] - self.tolerance[0]) / 2


@dataclass(frozen=True)
class Contribution:
    """One term of a reference's error: its extremes and where in temperature they occur."""

    name: str
    low: Number
    high: Number
    low_at_c: float | None = None
    high_at_c: float | None = None

    @property
    def centre(self) -> Number:
        return (self.low + self.high) / 2

    @property
    def half_width(self) -> Number:
        return (self.high - self.low) / 2


def compose(a: Number, b: Number) -> Number:
    """Error of two cascaded stages, ``(1 + a)(1 + b) - 1``; exact zero adds nothing.

    Works alike on Fractions, floats and numpy arrays (the plots' curves and samples).

    Examples
    --------
    >>> compose(Fraction(1, 10**6), Fraction(0))
    Fraction(1, 1000000)
    """
    return a + b + a * b


def reference_contributions(
    spec: OscillatorSpec, temperature_range: tuple[float, float], lifetime_s: float
) -> tuple[Contribution, ...]:
    """Every term of a reference's error over the temperature range and lifetime.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> spec = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    >>> [c.name for c in reference_contributions(spec, (-40, 85), 0.0)]
    ['initial', 'temperature', 'aging', 'supply', 'load']
    """
    extremes = spec.temperature.extremes(*temperature_range)
    aging_low, aging_high = spec.aging.drift(lifetime_s)
    terms = [
        Contribution("initial", *spec.initial),
        Contribution("temperature", extremes.low, extremes.high, extremes.low_at_c, extremes.high_at_c),
        Contribution("aging", aging_low, aging_high),
        Contribution("supply", *spec.supply_sensitivity),
        Contribution("load", *spec.load_sensitivity),
    ]
    if spec.crystal_load is not None:
        terms.append(Contribution("crystal load", *spec.crystal_load.pulling_range()))
    return tuple(terms)


@dataclass(frozen=True)
class AccuracyResult:
    """Frequency error of one consumer, fractional; ``margin >= 0`` means inside budget.

    ``carrier_*`` is the clock without its spread sweep, ``error_*`` what the
    consumer sees including the sweep. ``checked`` says which of the two is
    held against the budget's tolerance (the carrier when the spread is within
    the consumer's allowance). ``worst_case`` is the checked extreme closest to
    its budget limit and ``worst_temperature_c`` the temperature where it
    occurs (``None`` when a stability band sets it).
    """

    contributions: tuple[Contribution, ...]
    synthesis_error: Fraction
    carrier_min: Number
    carrier_max: Number
    error_min: Number
    error_max: Number
    mean_error: Number
    worst_case: Number
    worst_temperature_c: float | None
    rss_min: Number
    rss_max: Number
    rss: Number
    budget: ConsumerBudget
    margin: Number
    rss_margin: Number
    checked: str
    spread_ok: bool | None = None
    spread_note: str = ""
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def passes(self) -> bool:
        """Worst case inside the budget (and any spread within its allowance)."""
        return self.margin >= 0 and self.spread_ok is not False

    @property
    def rss_passes(self) -> bool:
        return self.rss_margin >= 0 and self.spread_ok is not False


def _root_sum_square(values: list[Number]) -> Number:
    total = sum((v * v for v in values), Fraction(0))
    return Fraction(0) if total == 0 else math.sqrt(total)


def _margin(low: Number, high: Number, budget: ConsumerBudget) -> tuple[Number, str]:
    """Distance to the nearer budget limit and which side it is on."""
    below = low - budget.tolerance[0]
    above = budget.tolerance[1] - high
    return (below, "low") if below < above else (above, "high")


def consumer_accuracy(
    reference: OscillatorSpec,
    synthesis_error: Fraction,
    spread: SpreadSpectrum | None,
    temperature_range: tuple[float, float],
    lifetime_s: float,
    budget: ConsumerBudget,
) -> AccuracyResult:
    """Worst-case and statistical frequency error of one consumer against its budget.

    Parameters
    ----------
    reference
        The reference oscillator the consumer's chain is locked to.
    synthesis_error
        Exact fractional error added by the PLLs and dividers of the chain.
    spread
        Spread-spectrum on the consumer's clock, if any.
    temperature_range
        Board operating range ``(min, max)`` in °C.
    lifetime_s
        Board lifetime in seconds (aging runs over it).
    budget
        The consumer's allowed error.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> xo = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    >>> result = consumer_accuracy(xo, Fraction(0), None, (-40, 85), 0.0, ConsumerBudget(parse_ppm("±100 ppm")))
    >>> result.margin == Fraction(8, 10**5), result.passes
    (True, True)
    """
    terms = reference_contributions(reference, temperature_range, lifetime_s)
    ref_low = sum((t.low for t in terms), Fraction(0))
    ref_high = sum((t.high for t in terms), Fraction(0))
    centre = sum((t.centre for t in terms), Fraction(0))
    spread_half = _root_sum_square([t.half_width for t in terms])

    carrier_min, carrier_max = compose(ref_low, synthesis_error), compose(ref_high, synthesis_error)
    rss_carrier = (compose(centre - spread_half, synthesis_error), compose(centre + spread_half, synthesis_error))
    sweep = spread.extremes if spread is not None else (Fraction(0), Fraction(0))
    error_min, error_max = compose(carrier_min, sweep[0]), compose(carrier_max, sweep[1])
    mean = compose(compose(centre, synthesis_error), spread.mean_shift if spread is not None else Fraction(0))

    spread_ok, spread_note = (None, "") if spread is None else spread_fits(spread, budget.spread_allowance)
    if spread_ok is False:
        checked = "with spread"
        checked_low, checked_high = error_min, error_max
        rss_low, rss_high = compose(rss_carrier[0], sweep[0]), compose(rss_carrier[1], sweep[1])
    else:
        checked = "carrier"
        checked_low, checked_high = carrier_min, carrier_max
        rss_low, rss_high = rss_carrier

    margin, side = _margin(checked_low, checked_high, budget)
    rss_margin, rss_side = _margin(rss_low, rss_high, budget)
    temperature = next(t for t in terms if t.name == "temperature")
    notes = [PLANNING_NOTE]
    rated = getattr(reference.temperature, "rated_c", None)
    if rated is not None and not (rated[0] <= temperature_range[0] and temperature_range[1] <= rated[1]):
        notes.append(
            f"The stability band is rated over {rated[0]:g}..{rated[1]:g} °C only, not over "
            f"{temperature_range[0]:g}..{temperature_range[1]:g} °C: outside its rated range the band says nothing."
        )
    if reference.runs_hot:
        notes.append(OVEN_NOTE)
        if reference.power is not None:
            notes.append(
                f"This oven: {float(reference.power.warmup_w):g} W warming, "
                f"{float(reference.power.steady_w):g} W at temperature, "
                f"{reference.power.warmup_s / 60:g} min warm-up."
            )
    return AccuracyResult(
        contributions=terms,
        synthesis_error=synthesis_error,
        carrier_min=carrier_min,
        carrier_max=carrier_max,
        error_min=error_min,
        error_max=error_max,
        mean_error=mean,
        worst_case=checked_low if side == "low" else checked_high,
        worst_temperature_c=temperature.low_at_c if side == "low" else temperature.high_at_c,
        rss_min=rss_low,
        rss_max=rss_high,
        rss=rss_low if rss_side == "low" else rss_high,
        budget=budget,
        margin=margin,
        rss_margin=rss_margin,
        checked=checked,
        spread_ok=spread_ok,
        spread_note=spread_note,
        notes=tuple(notes),
    )
