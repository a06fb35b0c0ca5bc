"""Operating conditions and the ranges a reference's figures hold over.

Three checks keep a frequency-error verdict from resting on a silent,
optimistic default:

* **Conditions stated.** A board file without ``temperature`` or
  ``lifetime`` in ``[board]`` is held at 25 °C and 0 years. That is
  harmless where no model depends on them, and optimistic where one does (a
  crystal's temperature curve, any aging). :func:`require_conditions` refuses
  such a board with a located error naming the reference whose model needs
  the missing key.
* **Bands rated over the board's range.** A stability band holds over the
  temperature range its datasheet rates it over; outside it the figure is
  unknown. The board model (:mod:`clockplan.ppm.board`) keeps such figures
  aside; :func:`condition_findings` reports them as errors that ask for the
  figure over the board's range.
* **A trim that reaches.** A reference's ``trim`` range must be able to
  cancel its initial tolerance plus its aging over the lifetime (the static
  offsets a trim exists to correct); :func:`trim_need` gives the correction
  needed and :func:`condition_findings` an error when the trim falls short.
  The worst case never assumes the trim is used.

A reference with tolerance data but neither a band nor a curve has no
temperature term at all, and one without ``aging`` does not drift; over a
board range wider than one temperature, or a lifetime, each is an
assumption in the part's favour, stated in a warning (an on-chip RC is not
warned for aging: its datasheets rarely state any).

Budgets are planning estimates: the part datasheet and the governing
standard decide.
"""

from __future__ import annotations

from collections.abc import Sequence
from fractions import Fraction
from typing import TYPE_CHECKING

from clockplan.errors import BoardError
from clockplan.findings import Finding, Severity
from clockplan.ppm.aging import SECONDS_PER_YEAR, AgingLinear, AgingLog
from clockplan.ppm.display import format_error, format_limits
from clockplan.ppm.oscillator import OscillatorSpec
from clockplan.ppm.results import BASIS_BOARD, BASIS_TYPICAL, BASIS_UNRATED
from clockplan.ppm.temperature import NO_TEMPERATURE_MODEL, StabilityBand

if TYPE_CHECKING:
    from clockplan.parts import Board
    from clockplan.ppm.board import ConsumerLink, ReferenceModel

__all__ = [
    "TEMPERATURE_HINT",
    "LIFETIME_HINT",
    "depends_on_temperature",
    "ages",
    "require_conditions",
    "trim_need",
    "condition_findings",
    "conditions_text",
]

#: What the error for a missing ``[board] temperature`` tells the user to add.
TEMPERATURE_HINT = 'add temperature = ["-40 C", "85 C"] to [board]: the coldest and hottest the board must work at'
#: What the error for a missing ``[board] lifetime`` tells the user to add.
LIFETIME_HINT = 'add lifetime = "10 years" to [board]: how long the board must stay inside its budgets'

Number = Fraction | float


def depends_on_temperature(spec: OscillatorSpec) -> bool:
    """True when the reference's error is a function of temperature (a curve or point table).

    A stability band gives the same edges over any range inside its rated
    range, so it does not need the board's range to be computed (only to be
    checked against its rated range).

    Examples
    --------
    >>> from clockplan.ppm.temperature import TuningForkCurve
    >>> depends_on_temperature(OscillatorSpec("crystal", (Fraction(0), Fraction(0)), TuningForkCurve()))
    True
    """
    return not isinstance(spec.temperature, StabilityBand)


def ages(spec: OscillatorSpec) -> bool:
    """True when the reference's aging model drifts at all (a lifetime then changes its error).

    Examples
    --------
    >>> ages(OscillatorSpec("xo", (Fraction(0), Fraction(0))))
    False
    """
    aging = spec.aging
    if isinstance(aging, AgingLinear):
        return any(value != 0 for value in (*aging.first_year, *aging.per_year))
    if isinstance(aging, AgingLog):
        return any(value != 0 for value in aging.first_year)
    return True  # an aging model of another kind: assume it needs the lifetime


def _whose(model: "ReferenceModel") -> str:
    ref = model.reference
    if model.basis == BASIS_TYPICAL or (model.basis == BASIS_UNRATED and model.grade is not None):
        return f"reference {ref.id!r} (no accuracy data: the typical {model.grade.name} grade's figures are assumed)"
    return f"reference {ref.id!r}"


def _board_error(board: "Board", key: str, message: str, hint: str) -> BoardError:
    present = "board" in board.lines
    if not present:
        hint = hint.replace("to [board]", "in a [board] section")
    return BoardError(message, file=board.source_file, key=key, line=board.lines.get("board"), hint=hint)


def require_conditions(board: "Board", models: Sequence["ReferenceModel"], links: Sequence["ConsumerLink"]) -> None:
    """Refuse a board whose frequency-error models need a condition its file does not state.

    The temperature range is needed when a reference with a consumer budget
    downstream has a temperature curve or point table; the lifetime when such
    a reference ages, or when a reference states a ``trim`` and ages (the
    trim is checked against the aging over the lifetime).

    Raises
    ------
    BoardError
        Located at ``board.temperature`` or ``board.lifetime`` (the ``[board]``
        line), naming the reference whose model needs it, with the key to add.
    """
    if not board.unstated:
        return
    judged = {link.reference for link in links if link.budget is not None}
    for model in models:
        spec = model.spec  # figures set aside as unrated are not used, so they need no condition
        if spec is None:
            continue
        ref = model.reference
        if "temperature" in board.unstated and ref.id in judged and depends_on_temperature(spec):
            raise _board_error(
                board, "board.temperature",
                f"{_whose(model)} has a temperature curve, but the board states no operating temperature: "
                "its consumers would be judged at 25 °C only",
                TEMPERATURE_HINT,
            )
        trimmed = spec.trim is not None and model.basis == BASIS_BOARD
        if "lifetime" in board.unstated and (ref.id in judged or trimmed) and ages(spec):
            first = format_limits(spec.aging.first_year)
            what = "its consumers would be judged" if ref.id in judged else "its trim would be checked"
            raise _board_error(
                board, "board.lifetime",
                f"{_whose(model)} ages ({first} in the first year), but the board states no lifetime: "
                f"{what} on a part that never ages (0 years)",
                LIFETIME_HINT,
            )


def trim_need(spec: OscillatorSpec, lifetime_s: float) -> tuple[Number, Number]:
    """The correction a trim must be able to apply: minus (initial tolerance plus aging over the lifetime).

    The trim exists to cancel the part's static offsets: its initial
    tolerance and its drift with age. Temperature, supply and load vary in
    operation and a one-time trim cannot follow them, so they are not in it.

    Examples
    --------
    >>> from clockplan.ppm.aging import AgingLinear
    >>> from clockplan.units import parse_ppm
    >>> spec = OscillatorSpec("ocxo", parse_ppm("±0.3 ppm"), aging=AgingLinear(parse_ppm("±0.3 ppm"), parse_ppm("±0.1 ppm")))
    >>> [float(x) * 1e6 for x in trim_need(spec, 10 * SECONDS_PER_YEAR)]
    [-1.5, 1.5]
    """
    aging_low, aging_high = spec.aging.drift(lifetime_s)
    return -(spec.initial[1] + aging_high), -(spec.initial[0] + aging_low)


def _years(seconds: float) -> str:
    return f"{seconds / SECONDS_PER_YEAR:g} years"


def _judged_ids(model: "ReferenceModel", links: Sequence["ConsumerLink"]) -> list[str]:
    return [link.id for link in links if link.reference == model.reference.id and link.budget is not None]


def _unrated(model: "ReferenceModel", board: "Board", links: Sequence["ConsumerLink"]) -> list[Finding]:
    band = model.unrated.temperature
    assert isinstance(band, StabilityBand)
    low, high = board.temperature_c
    board_range = f"{low:g}..{high:g} °C" + (" (assumed: the board states no temperature)" if "temperature" in board.unstated else "")
    judged = _judged_ids(model, links)
    if band.rated_c is None:
        rated = "states no temperature range it is rated over"
    else:
        rated = f"is rated over {band.rated_c[0]:g}..{band.rated_c[1]:g} °C only"
    if model.grade is not None:
        what = f"the typical {model.grade.name} grade's stability {format_limits((band.lo, band.hi))} (assumed: no accuracy data)"
        ask = (
            "give the part's tolerance, stability with stability_range (or temperature_curve) and aging "
            "over the board's range, from its datasheet"
        )
    else:
        what = f"its stability band {format_limits((band.lo, band.hi))}"
        ask = (
            f"give the datasheet's stability over {low:g}..{high:g} °C (stability and stability_range), "
            "a temperature_curve, or a part rated over the board's range"
        )
    consumers = ", ".join(judged) if judged else "no consumer with a budget"
    findings = [Finding(
        Severity.ERROR, "ppm-stability-range", model.reference.id,
        f"{what} {rated}; the board runs {board_range}, where the band says nothing: the frequency error of "
        f"{consumers} is not computed; {ask}",
    )]
    for consumer in judged:
        findings.append(Finding(
            Severity.ERROR, "ppm-stability-range", consumer,
            f"frequency error not computed: reference {model.reference.id}'s stability band {rated}, "
            f"and the board runs {board_range}",
        ))
    return findings


def _trim(model: "ReferenceModel", board: "Board") -> list[Finding]:
    spec = model.spec
    if spec is None or spec.trim is None or model.basis != BASIS_BOARD:
        return []
    need_low, need_high = trim_need(spec, board.lifetime_s)
    trim_low, trim_high = spec.trim
    if trim_low <= need_low and need_high <= trim_high:
        return []
    life = "at delivery" if board.lifetime_s == 0 else f"over {_years(board.lifetime_s)}"
    message = (
        f"trim {format_limits(spec.trim)} cannot cancel the initial tolerance plus aging {life}: "
        f"that needs a correction of {format_error(need_low)}..{format_error(need_high)}, so a part at its "
        "limits cannot be set back to nominal; give the part's real trim range, choose a part with a wider "
        "trim or less aging, or plan a shorter service life"
    )
    return [Finding(Severity.ERROR, "ppm-trim", model.reference.id, message)]


def _no_temperature(model: "ReferenceModel", board: "Board", links: Sequence["ConsumerLink"]) -> list[Finding]:
    spec = model.spec
    low, high = board.temperature_c
    if spec is None or model.basis != BASIS_BOARD or spec.temperature != NO_TEMPERATURE_MODEL or low == high:
        return []
    if not _judged_ids(model, links):
        return []
    message = (
        f"no stability band or temperature curve: the frequency is taken as constant over {low:g}..{high:g} °C, "
        f"an assumption in the part's favour; give stability with stability_range, or temperature_curve, from "
        "the datasheet (if the tolerance already includes temperature, write that band as stability too)"
    )
    return [Finding(Severity.WARNING, "ppm-no-temperature", model.reference.id, message)]


def _no_aging(model: "ReferenceModel", board: "Board", links: Sequence["ConsumerLink"]) -> list[Finding]:
    spec = model.spec
    if spec is None or model.basis != BASIS_BOARD or spec.kind == "rc" or ages(spec) or board.lifetime_s <= 0:
        return []
    if not _judged_ids(model, links):
        return []
    message = (
        f"no aging figures: the frequency is taken as not drifting over {_years(board.lifetime_s)}, an assumption "
        "in the part's favour; give aging (first_year and per_year, or law = 'log') from the datasheet"
    )
    return [Finding(Severity.WARNING, "ppm-no-aging", model.reference.id, message)]


def _no_supply(model: "ReferenceModel", links: Sequence["ConsumerLink"]) -> list[Finding]:
    spec = model.spec
    if spec is None or model.basis != BASIS_BOARD or "supply_sensitivity" not in spec.unstated:
        return []
    if not _judged_ids(model, links):
        return []
    message = (
        f"no supply_sensitivity: the frequency of this {spec.kind} part moves with its supply, and the shift is taken "
        "as 0, an assumption "
        "in the part's favour; give supply_sensitivity from the datasheet (the shift over the board's supply "
        "tolerance), or write \"0 ppm\" where the supply is regulated well enough that it does not count"
    )
    return [Finding(Severity.WARNING, "ppm-no-supply", model.reference.id, message)]


def condition_findings(model: "ReferenceModel", board: "Board", links: Sequence["ConsumerLink"]) -> list[Finding]:
    """The findings on one reference's conditions: a band not rated over the board, a short trim, no temperature term.

    Codes (``docs/json-output.md``): ``ppm-stability-range`` (error, on the
    reference and on each consumer whose budget it leaves unchecked),
    ``ppm-trim`` (error), ``ppm-no-temperature``, ``ppm-no-aging`` and ``ppm-no-supply`` (warnings).
    """
    if model.basis == BASIS_UNRATED and model.unrated is not None:
        return _unrated(model, board, links)
    return (_trim(model, board) + _no_temperature(model, board, links) + _no_aging(model, board, links)
            + _no_supply(model, links))


def conditions_text(board: "Board") -> str:
    """The operating conditions in words, naming the stand-ins for keys the board file leaves out.

    Examples
    --------
    ``"-40 °C to 85 °C, 10 year(s) of aging"``, or ``"25 °C to 25 °C (assumed:
    [board] states no temperature and no lifetime, so 25 °C and 0 years)"``.
    """
    cold, hot = board.temperature_c
    years = board.lifetime_s / SECONDS_PER_YEAR
    life = f", {years:.3g} year(s) of aging" if years else ""
    text = f"{cold:g} °C to {hot:g} °C{life}"
    missing = [key for key in ("temperature", "lifetime") if key in board.unstated]
    if missing:
        stand_ins = {"temperature": "25 °C", "lifetime": "0 years"}
        text += (
            f" (assumed: [board] states no {' and no '.join(missing)}, so "
            f"{' and '.join(stand_ins[key] for key in missing)})"
        )
    return text
