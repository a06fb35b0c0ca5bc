"""What the frequency-accuracy stage hands to the reports: per consumer, per reference, per run.

Each object offers the hooks the reports read (see ``DEVELOPERS.md``):
``json_fields()`` for the JSON contract (``docs/json-output.md``),
``table_cells()`` for the terminal's consumer table, ``budget_margin()`` for
the margin column and the summary's worst margins, ``contributions()`` and
``notes`` for an explanation waterfall, ``temperature_curve()`` and
``monte_carlo_errors()`` for the plots, and ``rich_renderable()`` /
``report_table()`` for a table of its own.
Errors are fractional inside; ppm (or % from 0.1 % up) only in what is shown.
Exact values stay exact: an exact zero is the JSON integer ``0``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from typing import TYPE_CHECKING, Any, NamedTuple

from clockplan.margins import budget_headroom, is_thin
from clockplan.parts import WORST_CASE
from clockplan.ppm.accuracy import AccuracyResult, ConsumerBudget, Contribution, compose
from clockplan.ppm.aging import SECONDS_PER_YEAR
from clockplan.ppm.display import format_error, format_limits
from clockplan.ppm.grades import Grade, GradeAdvice
from clockplan.ppm.oscillator import OscillatorPower, OscillatorSpec
from clockplan.ppm.spread import SpreadSpectrum

if TYPE_CHECKING:
    import numpy as np
    from rich.console import RenderableType

__all__ = [
    "BASIS_BOARD",
    "BASIS_TYPICAL",
    "BASIS_NONE",
    "BASIS_UNRATED",
    "ppm_number",
    "CURVE_POINTS",
    "TemperatureCurve",
    "SampledErrors",
    "ConsumerAccuracy",
    "ReferenceAdvice",
    "ReferenceAdvices",
    "MonteCarloSummary",
    "JUDGED_AT",
]

#: Where every simulated board is judged (``clockplan.ppm.montecarlo``).
JUDGED_AT = "over the whole temperature range, at start and end of life"

#: Where a reference's accuracy figures come from.
BASIS_BOARD = "board"
BASIS_TYPICAL = "typical-grade"
BASIS_NONE = "none"
#: Figures exist, but their stability band is not rated over the board's temperature range: not used.
BASIS_UNRATED = "unrated-band"

Number = Fraction | float
_PPM = 10**6
_TERM_LABELS = {
    "initial": "reference initial tolerance",
    "aging": "reference aging",
    "supply": "reference supply sensitivity",
    "load": "reference load sensitivity",
    "crystal load": "crystal load pulling",
}


def ppm_number(value: Number | None) -> int | float | None:
    """A fractional error as a JSON number of ppm: exact values stay exact, whole ones are integers.

    Floats (from temperature curves and statistics) are rounded to 1e-6 ppm,
    far below anything a datasheet states, so the JSON stays readable.

    Examples
    --------
    >>> ppm_number(Fraction(-1, 50000)), ppm_number(Fraction(0)), ppm_number(1.25e-5)
    (-20, 0, 12.5)
    """
    if value is None:
        return None
    if isinstance(value, Fraction):
        ppm = value * _PPM
        return ppm.numerator if ppm.denominator == 1 else float(ppm)
    return round(float(value) * _PPM, 6) + 0.0


def _temperature_text(celsius: float | None) -> str:
    return "band edge" if celsius is None else f"{celsius:g} °C"


def _budget_json(budget: ConsumerBudget | None) -> Any:
    if budget is None:
        return None
    low, high = budget.tolerance
    if low == -high:
        return ppm_number(high)
    return [ppm_number(low), ppm_number(high)]


def _checked_extremes(result: AccuracyResult) -> tuple[Number, Number]:
    """The extremes held against the budget: the carrier's, or the sweep's when the spread counts."""
    if result.checked == "carrier":
        return result.carrier_min, result.carrier_max
    return result.error_min, result.error_max


def _worst_is_low(result: AccuracyResult) -> bool:
    """Whether the worst case is the low extreme (the one nearer its budget limit)."""
    low, high = _checked_extremes(result)
    lo_limit, hi_limit = result.budget.tolerance
    return low - lo_limit < hi_limit - high


def _years(seconds: float) -> str:
    return f"{seconds / SECONDS_PER_YEAR:g} years"


#: Evenly spaced temperatures of a drawn curve; the worst-case temperatures are added to them.
CURVE_POINTS = 121

_TYPICAL_NOTE = "typical grade figures, assumed: the board gives no accuracy data for the reference"


class TemperatureCurve(NamedTuple):
    """A consumer's fractional error over the board's temperature range, at the end of its lifetime.

    The first three fields are the ``temperature_curve()`` report hook
    (``DEVELOPERS.md``): ``errors`` is the error of a part whose other terms
    (initial tolerance, aging, supply, load, crystal pulling) sit at the centre
    of their ranges, NaN where a stability band sets the temperature term (a
    band does not say how the frequency moves with temperature, so no curve is
    invented). ``envelope`` is ``(low, high)``: the worst case at each
    temperature with every other term at its extreme; its outer edges are the
    worst case the consumer table shows. ``note`` says what the curve assumes.
    """

    temperatures_c: "np.ndarray"
    errors: "np.ndarray"
    budget: tuple[float, float]
    envelope: "tuple[np.ndarray, np.ndarray] | None" = None
    note: str = ""


class SampledErrors(NamedTuple):
    """A consumer's Monte Carlo errors and the budget they are held against (``monte_carlo_errors()``).

    ``errors`` is the clock's carrier error on each kept board at the board's
    worst condition for this consumer: of its lowest and highest error over
    the temperature range and the lifetime (the reference's sampled extremes
    through the exact synthesis error), the one nearer its budget limit. The
    share of ``errors`` inside ``budget`` is then the yield on those boards.
    When a spread counts as error, ``budget`` is the carrier range that keeps
    the whole sweep inside the consumer's budget, and ``note`` says so.
    """

    errors: "np.ndarray"
    budget: tuple[float, float]
    note: str = ""


@dataclass(frozen=True)
class ConsumerAccuracy:
    """Frequency error of one consumer on the board, with its budget verdict.

    ``result`` is the worst-case and statistical analysis over the board's
    temperature range and lifetime; ``at_25c`` the same at 25 °C (``None``
    when the reference's temperature table does not reach 25 °C). ``budget``
    is ``None`` when the consumer has no frequency-error budget: the error is
    then shown, not judged. ``basis`` says whether the reference's figures
    come from the board file or are typical grade figures assumed for its kind.
    ``policy`` is the board's ``accuracy_policy``: ``passes`` is always the
    worst case, ``verdict_passes`` the verdict under the policy.
    """

    reference: str
    basis: str
    result: AccuracyResult
    at_25c: AccuracyResult | None
    budget: ConsumerBudget | None
    budget_source: str
    spread: SpreadSpectrum | None
    temperature_range: tuple[float, float]
    lifetime_s: float
    required_margin: Fraction
    yield_fraction: float | None = None
    yield_standard_error: float | None = None
    spec: OscillatorSpec | None = field(default=None, compare=False, repr=False)
    spread_source: str | None = None
    spread_key: str | None = None
    sampled_reference_errors: "np.ndarray | None" = field(default=None, compare=False, repr=False)
    policy: str = WORST_CASE

    @property
    def judged(self) -> bool:
        """True when there is a budget to hold the error against."""
        return self.budget is not None

    @property
    def passes(self) -> bool | None:
        return self.result.passes if self.judged else None

    @property
    def rss_passes(self) -> bool | None:
        return self.result.rss_passes if self.judged else None

    @property
    def verdict_passes(self) -> bool | None:
        """Inside the budget under the board's ``policy``: the worst case (default) or the statistical total."""
        return self.passes if self.policy == WORST_CASE else self.rss_passes

    @property
    def thin(self) -> bool:
        """Inside the budget, but with less headroom than the required margin (:func:`clockplan.margins.is_thin`)."""
        if not self.passes:
            return False
        half = self.budget.half_width
        return is_thin(self.result.margin / half, Fraction(self.required_margin) / half)

    @property
    def notes(self) -> tuple[str, ...]:
        """What the figures assume, for ``explain``: the planning note, an oven's power, assumed figures."""
        notes = list(self.result.notes)
        if self.basis == BASIS_TYPICAL:
            notes.append(_TYPICAL_NOTE[0].upper() + _TYPICAL_NOTE[1:] + ".")
        if self.result.spread_ok is False:
            notes.append(f"The spread counts as frequency error: {self.result.spread_note}.")
        return tuple(notes)

    def budget_margin(self) -> tuple[float, str] | None:
        """The share of the budget left and a short text, e.g. ``(0.929, "+7.1 ppm of ±100 ppm")``.

        The share is the margin to the nearer budget limit over the budget's
        half-width (the measure the 20 % margin rule uses): 1 for an error of
        exactly 0 in a symmetric budget, 0 at the limit, negative outside.
        None without a budget.

        Examples
        --------
        ``ConsumerAccuracy`` of a ±20 ppm XO on an exact chain with a ±100 ppm
        budget: ``(0.8, "+20 ppm of ±100 ppm")``.
        """
        if not self.judged:
            return None
        r = self.result
        prefix = "typ. " if self.basis == BASIS_TYPICAL else ""
        text = f"{prefix}{format_error(r.worst_case)} of {format_limits(self.budget.tolerance)}"
        return float(budget_headroom(r.margin, self.budget.half_width)), text

    def _checked_sweep(self) -> tuple[Fraction, Fraction, Fraction]:
        """The sweep held against the budget ``(low, high, mean)``: zero unless the spread counts as error."""
        if self.spread is None or self.result.checked == "carrier":
            return Fraction(0), Fraction(0), Fraction(0)
        low, high = self.spread.extremes
        return low, high, self.spread.mean_shift

    def temperature_curve(self) -> TemperatureCurve | None:
        """The consumer's error over the board's temperature range at end of life (the plots' hook).

        Temperatures are :data:`CURVE_POINTS` even steps over the range plus
        the temperatures where the worst case happens, so the envelope's outer
        edges are exactly the worst case (``result.carrier_min/max``, or
        ``error_min/max`` when the spread counts). None without a budget or
        without the reference's figures.

        Examples
        --------
        A tuning-fork crystal (-0.034 ppm/°C² about 25 °C) on an exact chain
        gives ``errors`` of about -144 ppm at -40 °C.
        """
        import numpy as np

        if not self.judged or self.spec is None:
            return None
        r = self.result
        t_lo, t_hi = (float(t) for t in self.temperature_range)
        temperature = next(c for c in r.contributions if c.name == "temperature")
        marks = [t for t in (temperature.low_at_c, temperature.high_at_c) if t is not None]
        temps = np.unique(np.concatenate((np.linspace(t_lo, t_hi, CURVE_POINTS), np.asarray(marks, dtype=float))))
        others = [c for c in r.contributions if c.name != "temperature"]
        low_rest = float(sum((c.low for c in others), Fraction(0)))
        high_rest = float(sum((c.high for c in others), Fraction(0)))
        centre_rest = float(sum((c.centre for c in others), Fraction(0)))
        drift = np.asarray(self.spec.temperature.fractional_error(temps), dtype=float)
        band = bool(np.all(np.isnan(drift)))
        low_t = float(temperature.low) if band else drift
        high_t = float(temperature.high) if band else drift
        synthesis = float(r.synthesis_error)
        sweep_low, sweep_high, sweep_mean = (float(x) for x in self._checked_sweep())
        errors = compose(compose(drift + centre_rest, synthesis), sweep_mean)
        low = compose(compose(low_t + low_rest, synthesis), sweep_low) + np.zeros_like(temps)
        high = compose(compose(high_t + high_rest, synthesis), sweep_high) + np.zeros_like(temps)
        notes = []
        if band:
            notes.append("stability band: its edges are shown, no curve")
        if self.basis == BASIS_TYPICAL:
            notes.append(_TYPICAL_NOTE)
        if sweep_low or sweep_high:
            notes.append("the spread sweep counts as error")
        budget = (float(self.budget.tolerance[0]), float(self.budget.tolerance[1]))
        return TemperatureCurve(temps, errors, budget, (low, high), "; ".join(notes))

    def monte_carlo_errors(self) -> SampledErrors | None:
        """The Monte Carlo's sampled carrier errors of this consumer (worst condition per board) and its budget.

        The plots' hook (see :class:`SampledErrors`).

        None unless the run kept samples (``--samples``) and the consumer has a budget.
        """
        import numpy as np

        samples = self.sampled_reference_errors
        if samples is None or not self.judged:
            return None
        synthesis = float(self.result.synthesis_error)
        low, high = self.budget.tolerance
        sweep_low, sweep_high, _ = self._checked_sweep()
        note = "typ. figures, assumed" if self.basis == BASIS_TYPICAL else ""
        if sweep_low or sweep_high:
            low, high = (1 + low) / (1 + sweep_low) - 1, (1 + high) / (1 + sweep_high) - 1
            note = "; ".join(filter(None, (note, "budget narrowed by the spread sweep, which counts as error")))
        low, high = float(low), float(high)
        lowest, highest = compose(samples[:, 0], synthesis), compose(samples[:, 1], synthesis)
        # Each board's worst condition: the extreme nearer its limit. It is inside the budget exactly
        # when both extremes are, so the histogram's share inside is the yield.
        worst = np.where(lowest - low < high - highest, lowest, highest)
        return SampledErrors(worst, (low, high), note)


    def contributions(self) -> list[tuple[str, Number | str]]:
        """The worst case term by term, reference first: ``(stage, fractional amount or note)``.

        The amounts add up to ``result.worst_case`` exactly (a ``cross terms``
        entry carries the products of cascaded errors when they are not zero).

        Examples
        --------
        ``[("reference initial tolerance", Fraction(-1, 50000)), ("temperature at -40 °C", -1.4e-05),
        ..., ("synthesis error", Fraction(0))]``
        """
        low_side = _worst_is_low(self.result)
        rows: list[tuple[str, Number | str]] = []
        linear: Number = Fraction(0)
        for term in self.result.contributions:
            if term.low == 0 and term.high == 0:
                continue
            amount = term.low if low_side else term.high
            rows.append((self._term_label(term, low_side), amount))
            linear += amount
        rows.append(("synthesis error", self.result.synthesis_error))
        linear += self.result.synthesis_error
        if self.spread is not None:
            if self.result.checked == "carrier":
                rows.append(("spread", f"{self.result.spread_note}: the carrier is checked"))
            else:
                sweep = self.spread.extremes[0] if low_side else self.spread.extremes[1]
                made = f" made by {self.spread_source}" if self.spread_source else ""
                rows.append((f"spread sweep{made} ({self.result.spread_note})", sweep))
                linear += sweep
        cross = self.result.worst_case - linear
        if cross != 0:
            rows.append(("cross terms of the cascade", cross))
        return rows

    def _term_label(self, term: Contribution, low_side: bool) -> str:
        if term.name == "temperature":
            at = term.low_at_c if low_side else term.high_at_c
            return "temperature band edge" if at is None else f"temperature at {at:g} °C"
        if term.name == "aging":
            return f"reference aging over {_years(self.lifetime_s)}"
        return _TERM_LABELS.get(term.name, term.name)

    def json_fields(self) -> dict[str, Any]:
        """The consumer's keys in the JSON contract (``docs/json-output.md``)."""
        r = self.result
        low, high = _checked_extremes(r)
        fields: dict[str, Any] = {
            "ppm_reference": self.reference,
            "ppm_basis": self.basis,
            "ppm_worst_case": ppm_number(r.worst_case),
            "ppm_min": ppm_number(low),
            "ppm_max": ppm_number(high),
            "worst_temperature_c": r.worst_temperature_c,
            "ppm_rss": ppm_number(r.rss),
            "ppm_rss_min": ppm_number(r.rss_min),
            "ppm_rss_max": ppm_number(r.rss_max),
            "ppm_budget": _budget_json(self.budget),
            "ppm_budget_source": self.budget_source if self.judged else None,
            "ppm_margin": ppm_number(r.margin) if self.judged else None,
            "ppm_rss_margin": ppm_number(r.rss_margin) if self.judged else None,
            "ppm_pass": self.passes,
            "ppm_rss_pass": self.rss_passes,
            "ppm_policy": self.policy,
            "ppm_policy_pass": self.verdict_passes,
            "ppm_at_25c": ppm_number(self.at_25c.worst_case) if self.at_25c else None,
            "ppm_pass_at_25c": self.at_25c.passes if self.at_25c and self.judged else None,
            "ppm_checked": r.checked,
            "ppm_spread": self._spread_json(),
            "ppm_contributions": [
                {"term": name, "ppm": ppm_number(amount)} if not isinstance(amount, str) else {"term": name, "note": amount}
                for name, amount in self.contributions()
            ],
        }
        if self.yield_fraction is not None:
            fields["yield"] = self.yield_fraction
            fields["yield_standard_error"] = self.yield_standard_error
        return fields

    def _spread_json(self) -> dict[str, Any] | None:
        if self.spread is None:
            return None
        rate = self.spread.modulation_hz
        return {
            "mode": self.spread.mode,
            "depth_ppm": ppm_number(self.spread.depth),
            "rate_hz": None if rate is None else (rate.numerator if rate.denominator == 1 else float(rate)),
            "source": self.spread_source,
            "key": self.spread_key,
            "within_allowance": self.result.spread_ok,
            "note": self.result.spread_note,
        }

    def table_cells(self) -> dict[str, str]:
        """Short columns for the terminal's consumer table."""
        r = self.result
        worst = format_error(r.worst_case)
        cells = {
            "ppm worst": ("typ. " if self.basis == BASIS_TYPICAL else "") + worst,
            "at": _temperature_text(r.worst_temperature_c),
            "ppm budget": format_limits(self.budget.tolerance) if self.budget else "none",
            "ppm margin": format_error(r.margin) if self.judged else "-",
        }
        if self.yield_fraction is not None:
            cells["yield"] = f"{self.yield_fraction * 100:.2f} %"
        return cells


def _hz(value: Fraction) -> int | float:
    return value.numerator if value.denominator == 1 else float(value)


def _power_json(power: OscillatorPower | None) -> dict[str, Any] | None:
    if power is None:
        return None
    return {"warmup_w": float(power.warmup_w), "steady_w": float(power.steady_w), "warmup_s": power.warmup_s}


def _grade_json(grade: Grade, fits: bool | None) -> dict[str, Any]:
    spec = grade.spec
    band = spec.temperature
    return {
        "grade": grade.name,
        "label": grade.label,
        "fits": fits,
        "tolerance_ppm": [ppm_number(spec.initial[0]), ppm_number(spec.initial[1])],
        "stability_ppm": [ppm_number(band.lo), ppm_number(band.hi)] if hasattr(band, "lo") else None,
        "stability_range_c": list(band.rated_c) if getattr(band, "rated_c", None) is not None else None,
        "rank": grade.rank,
        "frequency_range_hz": None if grade.frequency_range is None else [_hz(f) for f in grade.frequency_range],
        "power": _power_json(spec.power),
        "summary": grade.summary(),
    }


@dataclass(frozen=True)
class ReferenceAdvice:
    """One reference: where its figures come from, its consumers, and the least demanding grade that fits.

    ``advice`` is ``None`` when no consumer downstream has a budget to meet.
    ``unreachable`` lists consumers no oscillator can fix (their synthesis
    error or spread alone breaks the budget); ``failing`` and ``thin`` the
    others that break their budget or keep less than the required margin. ``oven_power`` is the oven's
    power (the board's figures, else the typical grade's) for an OCXO.
    """

    id: str
    kind: str
    basis: str
    consumers: tuple[str, ...]
    failing: tuple[str, ...]
    thin: tuple[str, ...]
    advice: GradeAdvice | None
    grades: tuple[Grade, ...]
    current_rank: int | None
    unreachable: tuple[str, ...] = ()
    oven_power: OscillatorPower | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def verdict(self) -> str:
        """``fits``, ``upgrade``, ``better part``, ``thin margin``, ``over-specified``, ``no grade fits``,
        ``re-plan`` or ``not checked``.

        ``better part``: a consumer fails on the board's part although typical
        figures of its own grade would do. ``re-plan``: every judged consumer
        misses its margin even on a perfect reference (see ``unreachable``).
        """
        if self.advice is None:
            return "re-plan" if self.unreachable else "not checked"
        if self.advice.grade is None:
            return "no grade fits"
        rank = self.advice.grade.rank
        if self.failing:
            return "upgrade" if self.current_rank is None or rank > self.current_rank else "better part"
        if self.thin:
            return "thin margin"
        if self.current_rank is not None and self.current_rank > rank:
            return "over-specified"
        return "fits"

    @property
    def beats_its_grade(self) -> bool:
        """The board's part keeps its consumers in budget where its grade's typical figures would not."""
        grade = self.advice.grade if self.advice is not None else None
        if grade is None or self.current_rank is None or self.verdict != "fits":
            return False
        return grade.rank > self.current_rank

    def json_fields(self) -> dict[str, Any]:
        """One entry of the top-level ``references`` list."""
        tried = dict(self.advice.tried) if self.advice is not None else {}
        grade = self.advice.grade if self.advice is not None else None
        return {
            "id": self.id,
            "kind": self.kind,
            "basis": self.basis,
            "consumers": list(self.consumers),
            "failing": list(self.failing),
            "thin_margin": list(self.thin),
            "unreachable": list(self.unreachable),
            "verdict": self.verdict,
            "advice": None if grade is None else grade.name,
            "advice_label": None if grade is None else grade.label,
            "advice_text": None if self.advice is None else self.advice.text,
            "grades": [_grade_json(g, tried.get(g.name)) for g in self.grades],
            "oven": None if self.oven_power is None else {**_power_json(self.oven_power), "warning": _oven_text(self.oven_power)},
            "notes": list(self.notes),
        }


def _oven_text(power: OscillatorPower) -> str:
    return (
        f"Oven-controlled: runs hot and draws {float(power.warmup_w):g} W while warming "
        f"({power.warmup_s / 60:g} min) and {float(power.steady_w):g} W at temperature; "
        "count its power and heat in the board's budget."
    )


_ADVICE_HEADERS = ("reference", "kind", "figures", "verdict", "least demanding grade", "its typical figures", "note")


def _reference_note(ref: ReferenceAdvice) -> str:
    notes = []
    if ref.beats_its_grade:
        notes.append("this part's own figures do better than its grade's typical ones")
    if ref.oven_power is not None:
        notes.append(_oven_text(ref.oven_power))
    notes.extend(ref.notes)
    return "; ".join(notes)


@dataclass(frozen=True)
class ReferenceAdvices:
    """Every reference's advice, board order; the top-level ``references`` list of the JSON."""

    references: tuple[ReferenceAdvice, ...]

    def json_fields(self) -> list[dict[str, Any]]:
        return [r.json_fields() for r in self.references]

    def report_table(self) -> tuple[str, tuple[str, ...], list[tuple[str, ...]]]:
        """The "Reference advice" table as ``(title, headers, rows)`` of text (Markdown and HTML reports)."""
        rows = []
        for ref in self.references:
            grade = ref.advice.grade if ref.advice is not None else None
            rows.append((
                ref.id,
                ref.kind,
                {BASIS_BOARD: "board", BASIS_TYPICAL: "typical (assumed)", BASIS_NONE: "none",
                 BASIS_UNRATED: "band not rated over the board's range"}[ref.basis],
                ref.verdict + (f"; re-plan {', '.join(ref.unreachable)}" if ref.unreachable and ref.advice else ""),
                grade.label if grade is not None else "-",
                grade.summary().split(": ", 1)[-1] if grade is not None else "-",
                _reference_note(ref),
            ))
        return "Reference advice", _ADVICE_HEADERS, rows

    def rich_renderable(self) -> "RenderableType":
        """The terminal's "Reference advice" table."""
        from rich.table import Table

        title, headers, rows = self.report_table()
        table = Table(title=title, title_justify="left", header_style="bold")
        for header in headers:
            table.add_column(header, overflow="fold")
        for row in rows:
            table.add_row(*row)
        return table


@dataclass(frozen=True)
class MonteCarloSummary:
    """The yield run as a whole: how many boards, the seed, and the whole-board yield."""

    samples: int
    seed: int | None
    board_yield: float
    consumers: int
    requested: int = 0

    @property
    def complete(self) -> bool:
        """False if the run stopped at its time limit before the boards asked for."""
        return self.samples >= self.requested

    def json_fields(self) -> dict[str, Any]:
        """The top-level ``monte_carlo`` object."""
        return {
            "samples": self.samples,
            "requested_samples": max(self.requested, self.samples),
            "complete": self.complete,
            "seed": self.seed,
            "board_yield": self.board_yield,
            "consumers": self.consumers,
            "judged_at": JUDGED_AT,
        }

    def rich_renderable(self) -> "RenderableType":
        from rich.text import Text

        seed = "random" if self.seed is None else str(self.seed)
        boards = f"{self.samples:,} boards" if self.complete else (
            f"{self.samples:,} of {self.requested:,} boards (stopped at the time limit)")
        return Text(
            f"Monte Carlo: {boards} (seed {seed}), {self.consumers} consumer(s) with a budget; "
            f"{self.board_yield * 100:.2f} % of boards keep every one inside its budget {JUDGED_AT}."
        )
