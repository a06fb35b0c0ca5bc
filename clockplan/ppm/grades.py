"""Reference oscillator grades and advice on the least demanding one that fits.

The grades (on-chip RC < crystal/XO < TCXO < OCXO) and their typical figures
live in ``clockplan/data/oscillator_grades.toml``: common practice, not any
maker's data. Each grade says the frequencies it is commonly made at, so a
32.768 kHz real-time clock is offered a watch crystal or a kHz TCXO with
microwatt figures, never a megahertz TCXO's milliwatts or an oven
(:func:`applicable_grades`). For each reference, :func:`advise_grade` tries
the grades in order and picks the first that keeps every consumer downstream
inside its budget with the required margin.
"""

from __future__ import annotations

import tomllib
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from importlib import resources

from clockplan.errors import ClockplanError
from clockplan.margins import DEFAULT_MARGIN_WARNING, budget_headroom, is_thin
from clockplan.ppm.accuracy import OVEN_NOTE, PLANNING_NOTE, AccuracyResult, consumer_accuracy
from clockplan.ppm.display import format_limits
from clockplan.ppm.montecarlo import ConsumerChain
from clockplan.ppm.oscillator import OscillatorSpec
from clockplan.ppm.parse import parse_oscillator_spec
from clockplan.ppm.temperature import StabilityBand
from clockplan.units import format_quantity, format_time, parse_frequency

__all__ = [
    "DEFAULT_MARGIN",
    "GRADE_KEYS",
    "ALWAYS_ON_BELOW_HZ",
    "Grade",
    "GradeAdvice",
    "load_grades",
    "applicable_grades",
    "advise_grade",
]

#: Required headroom, as a fraction of each budget's half-width (our default).
DEFAULT_MARGIN = DEFAULT_MARGIN_WARNING

#: Keys of a grade entry that describe the grade, not the oscillator (the rest are reference keys).
GRADE_KEYS = ("name", "label", "note", "rank", "frequency_range")

#: A consumer clocked below this is a kHz timekeeping or sleep clock: always on, often from a backup
#: battery, on a microwatt budget, so an oven is never advised for its reference (common practice).
ALWAYS_ON_BELOW_HZ = Fraction(1_000_000)


@dataclass(frozen=True)
class Grade:
    """One oscillator grade with its typical specification.

    ``rank`` is its rung on the ladder (0 on-chip RC, 1 crystal/XO, 2 TCXO,
    3 OCXO); ``frequency_range`` the frequencies it is commonly made at, in Hz
    (``None``: any).
    """

    name: str
    label: str
    spec: OscillatorSpec
    note: str
    rank: int = 0
    frequency_range: tuple[Fraction, Fraction] | None = None

    def made_at(self, frequency_hz: Fraction) -> bool:
        """True when the grade is commonly made at this frequency (range ends included)."""
        return self.frequency_range is None or self.frequency_range[0] <= frequency_hz <= self.frequency_range[1]

    def summary(self) -> str:
        """Typical stability, power and warm-up in one line."""
        spec = self.spec
        band = spec.temperature
        parts = [
            f"{self.label}: tolerance {format_limits(spec.initial)}",
            _band_text(band) if isinstance(band, StabilityBand) else _curve_text(band),
        ]
        if spec.power is not None:
            power = spec.power
            if power.warmup_w != power.steady_w:
                parts.append(
                    f"power {format_quantity(power.warmup_w, 'W', 3)} warming, "
                    f"{format_quantity(power.steady_w, 'W', 3)} at temperature"
                )
            else:
                parts.append(f"power {format_quantity(power.steady_w, 'W', 3)}")
            parts.append(f"warm-up {_duration_text(power.warmup_s)}")
        return ", ".join(parts)


def _band_text(band: StabilityBand) -> str:
    text = f"stability {format_limits((band.lo, band.hi))}"
    if band.rated_c is not None:
        text += f" over {band.rated_c[0]:g}..{band.rated_c[1]:g} °C"
    return text
def _curve_text(model: object) -> str:
    coefficient = getattr(model, "coefficient", None)
    if coefficient is not None:
        return f"parabola {coefficient * 1e6:g} ppm/°C² from {getattr(model, 'turnover_c'):g} °C"
    return "temperature curve"


def _duration_text(seconds: float) -> str:
    return f"{seconds / 60:g} min" if seconds >= 60 else format_time(seconds)


def load_grades(text: str | None = None) -> tuple[Grade, ...]:
    """Read the grade table, least demanding first (the package's own unless ``text`` is given).

    Examples
    --------
    >>> [grade.name for grade in load_grades()]
    ['lf-rc', 'rc', 'watch-crystal', 'xo', 'rtc-tcxo', 'tcxo', 'ocxo']
    """
    if text is None:
        text = resources.files("clockplan").joinpath("data/oscillator_grades.toml").read_text(encoding="utf-8")
    grades = []
    for i, entry in enumerate(tomllib.loads(text).get("grade", [])):
        key = f"grade[{i}]"
        spec_table = {k: v for k, v in entry.items() if k not in GRADE_KEYS}
        span = entry.get("frequency_range")
        frequency_range = (parse_frequency(span[0]), parse_frequency(span[1])) if span is not None else None
        grades.append(Grade(
            entry["name"], entry.get("label", entry["name"]), parse_oscillator_spec(spec_table, key),
            entry.get("note", ""), int(entry.get("rank", 0)), frequency_range,
        ))
    return tuple(grades)


def applicable_grades(
    grades: Sequence[Grade], frequency_hz: Fraction, always_on: Sequence[str] = (),
) -> tuple[tuple[Grade, ...], tuple[str, ...]]:
    """The grades worth advising for a reference, and notes saying what was left out and why.

    Parameters
    ----------
    grades
        The grade table, least demanding first.
    frequency_hz
        The reference's frequency: only grades commonly made at it are kept.
    always_on
        Consumers downstream that are kHz timekeeping or sleep clocks (always on,
        microwatt budget): ovens are left out for them.

    Examples
    --------
    >>> kept, notes = applicable_grades(load_grades(), Fraction(32768), always_on=["rtc"])
    >>> [g.name for g in kept]
    ['lf-rc', 'watch-crystal', 'rtc-tcxo']
    """
    kept = [g for g in grades if g.made_at(frequency_hz)]
    at = format_quantity(frequency_hz, "Hz", 6)
    notes = []
    # Say so where it changes the advice: the ladder's upper rungs, or every grade, are not made at this frequency.
    top = max((g.rank for g in kept), default=-1)
    missing = [g.name for g in grades if g not in kept and g.rank > top]
    if not kept and grades:
        notes.append(f"no grade in the table is commonly made at {at} (frequency ranges are common practice)")
    elif missing:
        notes.append(
            f"only grades commonly made at {at} are advised (frequency ranges are common practice); "
            f"left out: {', '.join(missing)}"
        )
    hot = [g for g in kept if g.spec.runs_hot]
    if always_on and hot:
        kept = [g for g in kept if not g.spec.runs_hot]
        notes.append(
            f"no oven advised: {', '.join(always_on)} is an always-on kHz clock (timekeeping or sleep) "
            "on a microwatt budget, and an oven draws watts (common practice)"
        )
    return tuple(kept), tuple(notes)


@dataclass(frozen=True)
class GradeAdvice:
    """The least demanding grade for one reference and the results that justify it.

    ``grade`` is ``None`` when no grade is good enough; ``tried`` lists each
    grade tried with whether it fitted.
    """

    reference: int
    grade: Grade | None
    results: tuple[AccuracyResult, ...]
    tried: tuple[tuple[str, bool], ...]
    lines: tuple[str, ...]

    @property
    def text(self) -> str:
        return "\n".join(self.lines)


def _rated_over(spec: OscillatorSpec, temperature_range: tuple[float, float]) -> bool:
    """A grade's figures hold over the range: its band is rated over it (a curve always is)."""
    band = spec.temperature
    return not isinstance(band, StabilityBand) or band.rated_c is None or band.rated_over(*temperature_range)


def _fits(results: Sequence[AccuracyResult], margin: Fraction) -> bool:
    return all(r.passes and not is_thin(budget_headroom(r.margin, r.budget.half_width), margin) for r in results)


def advise_grade(
    reference: int,
    consumers: Sequence[ConsumerChain],
    temperature_range: tuple[float, float],
    lifetime_s: float,
    margin: Fraction = DEFAULT_MARGIN,
    grades: Sequence[Grade] | None = None,
    frequency_hz: Fraction | None = None,
) -> GradeAdvice:
    """Least demanding grade that keeps every consumer of ``reference`` inside budget with margin.

    Parameters
    ----------
    reference
        Index of the reference; only consumers with this index are considered.
    consumers
        The board's consumer chains (synthesis error, spread, budget).
    temperature_range, lifetime_s
        Board operating range in °C and lifetime in seconds.
    margin
        Headroom each worst case must keep, as a fraction of the budget's half-width.
    grades
        Grades least demanding first; the package table by default.
    frequency_hz
        The reference's frequency: only grades commonly made at it are tried
        (:func:`applicable_grades`). Without it every grade given is tried,
        kHz and MHz alike: give it.

    Examples
    --------
    >>> from clockplan.ppm.accuracy import ConsumerBudget
    >>> from clockplan.units import parse_ppm
    >>> uart = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±2 %")), name="uart")
    >>> advise_grade(0, [uart], (-40, 85), 10 * 31_557_600, frequency_hz=Fraction(25_000_000)).grade.name
    'xo'
    """
    if margin < 0:
        raise ClockplanError(f"margin {margin} is negative", hint="give a margin such as 0.2 (20 % of each budget)")
    grades = load_grades() if grades is None else tuple(grades)
    if frequency_hz is not None:
        grades = applicable_grades(grades, frequency_hz)[0]
    downstream = [c for c in consumers if c.reference == reference]
    tried: list[tuple[str, bool]] = []
    for grade in grades:
        if not _rated_over(grade.spec, temperature_range):
            tried.append((grade.name, False))  # its typical band says nothing over this range
            continue
        results = tuple(
            consumer_accuracy(grade.spec, c.synthesis_error, c.spread, temperature_range, lifetime_s, c.budget)
            for c in downstream
        )
        fits = _fits(results, margin)
        tried.append((grade.name, fits))
        if fits:
            return GradeAdvice(reference, grade, results, tuple(tried), _advice_lines(grade, downstream, margin))
    unrated = [grade.label for grade in grades if not _rated_over(grade.spec, temperature_range)]
    if not grades:
        head = "No oscillator grade in the table is commonly made at this frequency: choose the part from its datasheet."
    else:
        head = (
            f"No grade up to {grades[-1].label} keeps every consumer inside its budget "
            f"with {float(margin):.0%} margin: look at the synthesis errors, spread settings and budgets."
        )
    lines = (
        head,
        *(
            [f"Not tried over {temperature_range[0]:g}..{temperature_range[1]:g} °C (their typical bands are "
             f"rated over a narrower range): {', '.join(unrated)}."]
            if unrated else []
        ),
        PLANNING_NOTE,
    )
    return GradeAdvice(reference, None, (), tuple(tried), lines)


def _advice_lines(grade: Grade, downstream: Sequence[ConsumerChain], margin: Fraction) -> tuple[str, ...]:
    if downstream:
        head = f"Least demanding grade keeping {len(downstream)} consumer(s) inside budget with {float(margin):.0%} margin:"
    else:
        head = "No consumer depends on this reference; any grade will do:"
    lines = [head, "  " + grade.summary()]
    if grade.note:
        lines.append("  " + grade.note)
    if grade.spec.runs_hot:
        lines.append("  " + OVEN_NOTE)
    lines.append(PLANNING_NOTE)
    return tuple(lines)
