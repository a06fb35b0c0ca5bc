"""Reference oscillator grades and advice on the least demanding one that fits.

The grades (on-chip RC < crystal/XO < TCXO < OCXO) and their typical figures
live in ``clockplan/data/oscillator_grades.toml``: common practice, not any
maker's data. For each reference, :func:`advise_grade` tries the grades in
order and picks the first that keeps every consumer downstream inside its
budget with the required margin.
"""

from __future__ import annotations

import tomllib
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from importlib import resources

from clockplan.errors import ClockplanError
from clockplan.ppm.accuracy import OVEN_NOTE, PLANNING_NOTE, AccuracyResult, consumer_accuracy
from clockplan.ppm.display import format_limits
from clockplan.ppm.montecarlo import ConsumerChain
from clockplan.ppm.oscillator import OscillatorSpec
from clockplan.ppm.parse import parse_oscillator_spec
from clockplan.ppm.temperature import StabilityBand
from clockplan.units import format_quantity, format_time

__all__ = ["DEFAULT_MARGIN", "Grade", "GradeAdvice", "load_grades", "advise_grade"]

#: Required headroom, as a fraction of each budget's half-width (our default).
DEFAULT_MARGIN = Fraction(1, 5)


@dataclass(frozen=True)
class Grade:
    """One oscillator grade with its typical specification."""

    name: str
    label: str
    spec: OscillatorSpec
    note: str

    def summary(self) -> str:
        """Typical stability, power and warm-up in one line."""
        spec = self.spec
        band = spec.temperature
        parts = [
            f"{self.label}: tolerance {format_limits(spec.initial)}",
            _band_text(band) if isinstance(band, StabilityBand) else "curve",
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


def _duration_text(seconds: float) -> str:
    return f"{seconds / 60:g} min" if seconds >= 60 else format_time(seconds)


def load_grades(text: str | None = None) -> tuple[Grade, ...]:
    """Read the grade table, least demanding first (the package's own unless ``text`` is given).

    Examples
    --------
    >>> [grade.name for grade in load_grades()]
    ['rc', 'xo', 'tcxo', 'ocxo']
    """
    if text is None:
        text = resources.files("clockplan").joinpath("data/oscillator_grades.toml").read_text(encoding="utf-8")
    grades = []
    for i, entry in enumerate(tomllib.loads(text).get("grade", [])):
        key = f"grade[{i}]"
        spec_table = {k: v for k, v in entry.items() if k not in ("name", "label", "note")}
        grades.append(Grade(entry["name"], entry.get("label", entry["name"]), parse_oscillator_spec(spec_table, key), entry.get("note", "")))
    return tuple(grades)


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
    return all(r.passes and r.margin >= margin * r.budget.half_width for r in results)


def advise_grade(
    reference: int,
    consumers: Sequence[ConsumerChain],
    temperature_range: tuple[float, float],
    lifetime_s: float,
    margin: Fraction = DEFAULT_MARGIN,
    grades: Sequence[Grade] | None = None,
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

    Examples
    --------
    >>> from clockplan.ppm.accuracy import ConsumerBudget
    >>> from clockplan.units import parse_ppm
    >>> uart = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±2 %")), name="uart")
    >>> advise_grade(0, [uart], (-40, 85), 10 * 31_557_600).grade.name
    'xo'
    """
    if margin < 0:
        raise ClockplanError(f"margin {margin} is negative", hint="give a margin such as 0.2 (20 % of each budget)")
    grades = load_grades() if grades is None else tuple(grades)
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
    lines = (
        f"No grade up to {grades[-1].label if grades else 'any'} keeps every consumer inside its budget "
        f"with {float(margin):.0%} margin: look at the synthesis errors, spread settings and budgets.",
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
