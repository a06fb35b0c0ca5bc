"""Board-file tables (plain TOML-decoded dicts) into the ppm dataclasses.

Each function takes the table and the key path it sits at (e.g.
``"reference[0]"``) and raises :class:`~clockplan.errors.BoardError` with the
full key path of the offending value and a hint. The keys are described in
``docs/frequency-accuracy.md``.
"""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction
from typing import Any, TypeVar

from clockplan.errors import BoardError, ClockplanError, did_you_mean
from clockplan.ppm.accuracy import ConsumerBudget
from clockplan.ppm.aging import NO_AGING, AgingLinear, AgingLog, AgingModel
from clockplan.ppm.crystal_load import TYPICAL_STRAY_F, TYPICAL_STRAY_TOLERANCE_F, CrystalLoad
from clockplan.ppm.oscillator import DISTRIBUTIONS, OSCILLATOR_KINDS, OscillatorPower, OscillatorSpec, trim_range
from clockplan.ppm.spread import SpreadAllowance, SpreadSpectrum
from clockplan.ppm.temperature import (
    NO_TEMPERATURE_MODEL,
    AtCutCurve,
    PointTable,
    StabilityBand,
    TemperatureModel,
    TuningForkCurve,
)
from clockplan.units import (
    parse_duration,
    parse_frequency,
    parse_number,
    parse_ppm,
    parse_quantity,
    parse_temperature,
    parse_time,
)

__all__ = [
    "REFERENCE_KEYS",
    "SUPPLY_SENSITIVE",
    "STABILITY_RANGE_HINT",
    "parse_oscillator_spec",
    "parse_temperature_model",
    "parse_aging",
    "parse_crystal_load",
    "parse_spread",
    "parse_spread_allowance",
    "parse_consumer_budget",
    "parse_temperature_range",
]

T = TypeVar("T")

#: Keys of a reference table read here; the board loader owns the others
#: (``name``, ``frequency``, ...) and passes them through.
REFERENCE_KEYS = (
    "kind", "tolerance", "stability", "stability_range", "temperature_curve", "aging", "load",
    "supply_sensitivity", "load_sensitivity", "distribution", "trim", "power",
)


#: Kinds whose frequency moves with the supply, by a figure their datasheets give (packaged oscillators and
#: on-chip RC oscillators; a passive crystal's shift comes from the chip's oscillator circuit, and an external
#: reference's from the sending unit): without it, ``ppm-no-supply`` warns.
SUPPLY_SENSITIVE = ("xo", "vcxo", "tcxo", "ocxo", "mems", "rc")

def _read(parser: Callable[..., T], value: Any, key: str, *args: Any) -> T:
    """Run a unit parser and put the key path on its error."""
    try:
        return parser(value, *args)
    except ClockplanError as err:
        raise BoardError(err.message, key=key, hint=err.hint) from None


def _table(value: Any, key: str, example: str) -> dict:
    if not isinstance(value, dict):
        raise BoardError(f"expected a table, got {value!r}", key=key, hint=f"write e.g. {key.rsplit('.', 1)[-1]} = {example}")
    return value


def _require(table: dict, name: str, key: str, hint: str) -> Any:
    if name not in table:
        raise BoardError(f"missing key {name!r}", key=f"{key}.{name}", hint=hint)
    return table[name]


def _check_keys(table: dict, allowed: tuple[str, ...], key: str) -> None:
    for name in table:
        if name not in allowed:
            suggestion = did_you_mean(name, allowed)
            raise BoardError(
                f"unknown key {name!r}",
                key=f"{key}.{name}",
                hint=suggestion or "allowed keys: " + ", ".join(allowed),
            )


def _signed_ppm(value: Any, key: str) -> Fraction:
    """One signed error such as ``"-8 ppm"`` (not a ± range)."""
    if isinstance(value, str) and ".." not in value:
        try:
            return parse_ppm(f"{value}..{value}")[0]
        except ClockplanError:
            pass
    raise BoardError(
        f"expected one signed error such as '-8 ppm', got {value!r}",
        key=key,
        hint="a point has one value, e.g. '+12 ppm', not a range",
    )


def _magnitude(value: Any, key: str) -> Fraction:
    """A positive size written as an error: ``"0.5 %"``, ``"±5000 ppm"``, ``"0..-5000 ppm"``."""
    low, high = _read(parse_ppm, value, key)
    return high if low == -high else high - low


#: What the error for a band without its rated range tells the user to add (docs/board-format.md).
STABILITY_RANGE_HINT = (
    'add stability_range = "-40..85 C" beside it, with the temperature range the datasheet rates this band over '
    "(board files written before stability_range: copy the range from the datasheet line that gives the band; "
    "docs/board-format.md, 'Stability bands')"
)


def parse_temperature_model(table: dict, key: str) -> TemperatureModel:
    """Read ``stability`` with its ``stability_range``, or ``temperature_curve``, of a reference table.

    A band must state the temperature range it is rated over: a figure such
    as ``±0.5 ppm`` says nothing about where it holds.

    Examples
    --------
    >>> band = parse_temperature_model({"stability": "±0.5 ppm", "stability_range": "-40..85 C"}, "reference[0]")
    >>> band.hi, band.rated_c
    (Fraction(1, 2000000), (-40.0, 85.0))
    >>> parse_temperature_model({"temperature_curve": {"model": "tuning-fork"}}, "reference[0]").coefficient
    -3.4e-08
    """
    if "stability" in table and "temperature_curve" in table:
        raise BoardError(
            "both 'stability' and 'temperature_curve' are given",
            key=f"{key}.temperature_curve",
            hint="a reference has a stability band or a temperature curve, not both",
        )
    if "stability_range" in table and "stability" not in table:
        raise BoardError(
            "'stability_range' without a 'stability' band",
            key=f"{key}.stability_range",
            hint="stability_range is the temperature range a stability band is rated over: give the band "
            "(e.g. stability = '±0.5 ppm'), or remove stability_range",
        )
    if "stability" in table:
        low, high = _read(parse_ppm, table["stability"], f"{key}.stability")
        if "stability_range" not in table:
            raise BoardError(
                f"the stability band {table['stability']!r} does not say over which temperatures it holds",
                key=f"{key}.stability",
                hint=STABILITY_RANGE_HINT,
            )
        rated = parse_temperature_range(table["stability_range"], f"{key}.stability_range")
        return StabilityBand(low, high, rated)
    if "temperature_curve" not in table:
        return NO_TEMPERATURE_MODEL
    where = f"{key}.temperature_curve"
    curve = _table(table["temperature_curve"], where, '{ model = "at-cut", angle_offset_arcmin = 4 }')
    model = _require(curve, "model", where, "model is 'at-cut', 'tuning-fork' or 'points'")
    if model == "at-cut":
        return _parse_at_cut(curve, where)
    if model == "tuning-fork":
        _check_keys(curve, ("model", "coefficient_ppm", "turnover"), where)
        coefficient = float(_read(parse_number, curve.get("coefficient_ppm", -0.034), f"{where}.coefficient_ppm")) * 1e-6
        turnover = _read(parse_temperature, curve.get("turnover", 25), f"{where}.turnover")
        return TuningForkCurve(coefficient, turnover)
    if model == "points":
        _check_keys(curve, ("model", "points"), where)
        return _parse_points(_require(curve, "points", where, "points = [[-40, '+12 ppm'], [25, '0 ppm'], [85, '-8 ppm']]"), where)
    raise BoardError(
        f"unknown temperature model {model!r}",
        key=f"{where}.model",
        hint=did_you_mean(str(model), ("at-cut", "tuning-fork", "points")) or "use 'at-cut', 'tuning-fork' or 'points'",
    )


def _parse_at_cut(curve: dict, where: str) -> AtCutCurve:
    _check_keys(curve, ("model", "angle_offset_arcmin", "coefficients_ppm", "reference"), where)
    reference = _read(parse_temperature, curve.get("reference", 25), f"{where}.reference")
    if "coefficients_ppm" in curve:
        coefficients = curve["coefficients_ppm"]
        if not isinstance(coefficients, list) or len(coefficients) != 3:
            raise BoardError(
                "coefficients_ppm needs three numbers",
                key=f"{where}.coefficients_ppm",
                hint="give [ppm/°C, ppm/°C², ppm/°C³], e.g. [-0.3, -0.00045, 0.0001095]",
            )
        a1, a2, a3 = (
            float(_read(parse_number, c, f"{where}.coefficients_ppm[{i}]")) * 1e-6 for i, c in enumerate(coefficients)
        )
        return AtCutCurve(a1, a2, a3, reference)
    offset = _require(curve, "angle_offset_arcmin", where, "give the cut-angle offset in minutes of arc, or coefficients_ppm")
    base = AtCutCurve.from_angle(float(_read(parse_number, offset, f"{where}.angle_offset_arcmin")))
    return AtCutCurve(base.a1, base.a2, base.a3, reference)


def _parse_points(points: Any, where: str) -> PointTable:
    if not isinstance(points, list):
        raise BoardError("points must be a list of [temperature, error] pairs", key=f"{where}.points", hint="points = [[-40, '+12 ppm'], [85, '-8 ppm']]")
    parsed = []
    for i, point in enumerate(points):
        here = f"{where}.points[{i}]"
        if not isinstance(point, list) or len(point) != 2:
            raise BoardError("a point is a [temperature, error] pair", key=here, hint="write e.g. [-40, '+12 ppm']")
        parsed.append((_read(parse_temperature, point[0], f"{here}[0]"), float(_signed_ppm(point[1], f"{here}[1]"))))
    try:
        return PointTable(tuple(parsed))
    except BoardError as err:
        raise err.located(key=f"{where}.points") from None


def parse_aging(value: Any, key: str) -> AgingModel:
    """Read an ``aging`` table: ``first_year`` and ``per_year``, or ``law = "log"``.

    Examples
    --------
    >>> parse_aging({"first_year": "±3 ppm", "per_year": "±1 ppm"}, "reference[0].aging").per_year[1]
    Fraction(1, 1000000)
    """
    table = _table(value, key, '{ first_year = "±3 ppm", per_year = "±1 ppm" }')
    _check_keys(table, ("first_year", "per_year", "law", "time_constant"), key)
    first_year = _read(parse_ppm, _require(table, "first_year", key, "write e.g. first_year = '±3 ppm'"), f"{key}.first_year")
    law = table.get("law", "linear")
    if law == "log":
        tau = _read(parse_duration, table.get("time_constant", "1 day"), f"{key}.time_constant")
        try:
            return AgingLog(first_year, tau)
        except BoardError as err:
            raise err.located(key=f"{key}.time_constant") from None
    if law != "linear":
        raise BoardError(f"unknown aging law {law!r}", key=f"{key}.law", hint="use 'linear' (first year plus per year) or 'log'")
    per_year = _require(
        table, "per_year", key, "give the drift per later year, e.g. per_year = '±1 ppm', or use law = 'log'"
    )
    return AgingLinear(first_year, _read(parse_ppm, per_year, f"{key}.per_year"))


def parse_crystal_load(value: Any, key: str) -> CrystalLoad:
    """Read a passive crystal's ``load`` table.

    Examples
    --------
    >>> load = parse_crystal_load({"specified": "12 pF", "c1": "5 fF", "c0": "2 pF",
    ...                            "capacitors": ["18 pF", "18 pF"], "stray": "3 pF"}, "reference[0].load")
    >>> load.actual_load * 10**12
    Fraction(12, 1)
    """
    table = _table(value, key, '{ specified = "12 pF", c1 = "5 fF", c0 = "2 pF", capacitors = ["18 pF", "18 pF"] }')
    allowed = ("specified", "c1", "c0", "capacitors", "stray", "stray_tolerance", "capacitor_tolerance")
    _check_keys(table, allowed, key)

    def farads(name: str, default: Any = None) -> Fraction:
        raw = table.get(name, default)
        if raw is None:
            raise BoardError(f"missing key {name!r}", key=f"{key}.{name}", hint="write it in farads, e.g. '8 pF' or '5 fF'")
        return _read(parse_quantity, raw, f"{key}.{name}", "F")

    capacitors = _require(table, "capacitors", key, "capacitors = ['18 pF', '18 pF']")
    if not isinstance(capacitors, list) or len(capacitors) != 2:
        raise BoardError("capacitors needs the two load capacitors", key=f"{key}.capacitors", hint="capacitors = ['18 pF', '18 pF']")
    caps = [_read(parse_quantity, c, f"{key}.capacitors[{i}]", "F") for i, c in enumerate(capacitors)]
    tolerance = _magnitude(table.get("capacitor_tolerance", "0 %"), f"{key}.capacitor_tolerance")
    # No stray given: a typical board's few pF (never 0 pF), with a warning from the accuracy stage.
    assumed = "stray" not in table
    stray = TYPICAL_STRAY_F if assumed else farads("stray")
    stray_tolerance = (
        farads("stray_tolerance")
        if "stray_tolerance" in table
        else (TYPICAL_STRAY_TOLERANCE_F if assumed else Fraction(0))
    )
    try:
        return CrystalLoad(
            specified_load=farads("specified"),
            motional_c1=farads("c1"),
            shunt_c0=farads("c0"),
            cap_a=caps[0],
            cap_b=caps[1],
            stray=stray,
            cap_tolerance=tolerance,
            stray_tolerance=stray_tolerance,
            stray_assumed=assumed,
        )
    except BoardError as err:
        raise err.located(key=key) from None


def _parse_power(value: Any, key: str) -> OscillatorPower:
    table = _table(value, key, '{ supply = "12 V", warmup_current = "0.7 A", steady = "2 W", warmup_time = "5 min" }')
    _check_keys(table, ("supply", "warmup", "warmup_current", "steady", "steady_current", "warmup_time"), key)

    def watts(stem: str) -> Fraction:
        if stem in table:
            return _read(parse_quantity, table[stem], f"{key}.{stem}", "W")
        current = _require(table, f"{stem}_current", key, f"give {stem} = '2 W', or supply and {stem}_current")
        volts = _read(parse_quantity, _require(table, "supply", key, "give supply = '12 V'"), f"{key}.supply", "V")
        return volts * _read(parse_quantity, current, f"{key}.{stem}_current", "A")

    raw_time = _require(table, "warmup_time", key, "give warmup_time, e.g. '5 min' or '10 ms'")
    try:
        warmup_s = parse_duration(raw_time)
    except ClockplanError:
        warmup_s = _read(parse_time, raw_time, f"{key}.warmup_time")
    return OscillatorPower(watts("warmup"), watts("steady"), warmup_s)


def _parse_trim(value: Any, key: str, frequency: Fraction | None) -> tuple[Fraction, Fraction]:
    if isinstance(value, str) and value.rstrip().endswith("Hz"):
        if frequency is None:
            raise BoardError("a trim range in Hz needs the reference frequency", key=key, hint="write the trim in ppm, e.g. '±1 ppm'")
        magnitude = _read(parse_frequency, value.strip().lstrip("±").lstrip("+-/").strip(), key)
        return trim_range(frequency, (-magnitude, magnitude))
    return _read(parse_ppm, value, key)


def parse_oscillator_spec(table: dict, key: str, frequency: Fraction | None = None) -> OscillatorSpec:
    """Read the accuracy keys of a ``[[reference]]`` table into an :class:`OscillatorSpec`.

    Keys other than :data:`REFERENCE_KEYS` are left for the board loader.

    Parameters
    ----------
    table
        The TOML-decoded reference table.
    key
        Its key path, e.g. ``"reference[0]"``, for error messages.
    frequency
        The reference's nominal frequency, needed only for a trim given in Hz.

    Examples
    --------
    >>> spec = parse_oscillator_spec({"kind": "tcxo", "tolerance": "±1 ppm", "stability": "±0.5 ppm",
    ...                               "stability_range": "-40..85 C",
    ...                               "aging": {"first_year": "±1 ppm", "per_year": "±0.5 ppm"}}, "reference[0]")
    >>> spec.kind, spec.initial[1]
    ('tcxo', Fraction(1, 1000000))
    """
    kind = _choice(table, "kind", OSCILLATOR_KINDS, key, "xo")
    distribution = _choice(table, "distribution", DISTRIBUTIONS, key, "uniform")
    if "load" in table and kind != "crystal":
        raise BoardError(
            f"a load network belongs to a passive crystal, not to a {kind!r}",
            key=f"{key}.load",
            hint="set kind = 'crystal' or remove the load table",
        )
    initial = _read(parse_ppm, _require(table, "tolerance", key, "give the tolerance at 25 °C, e.g. '±20 ppm'"), f"{key}.tolerance")
    temperature = parse_temperature_model(table, key)
    aging = parse_aging(table["aging"], f"{key}.aging") if "aging" in table else NO_AGING
    zero = "0 ppm"  # a supply sensitivity left out is named by a finding (ppm-no-supply), never zero in silence
    supply = _read(parse_ppm, table.get("supply_sensitivity", zero), f"{key}.supply_sensitivity")
    load_sens = _read(parse_ppm, table.get("load_sensitivity", zero), f"{key}.load_sensitivity")
    load = parse_crystal_load(table["load"], f"{key}.load") if "load" in table else None
    trim = _parse_trim(table["trim"], f"{key}.trim", frequency) if "trim" in table else None
    power = _parse_power(table["power"], f"{key}.power") if "power" in table else None
    try:
        return OscillatorSpec(
            kind=kind,
            initial=initial,
            temperature=temperature,
            aging=aging,
            supply_sensitivity=supply,
            load_sensitivity=load_sens,
            distribution=distribution,
            crystal_load=load,
            trim=trim,
            power=power,
            unstated=("supply_sensitivity",) if "supply_sensitivity" not in table and kind in SUPPLY_SENSITIVE else (),
        )
    except BoardError as err:
        raise err.located(key=key) from None


def _choice(table: dict, name: str, choices: tuple[str, ...], key: str, default: str | None) -> str:
    """A key whose value is one word out of ``choices``."""
    if default is None:
        value = _require(table, name, key, f"{name} is one of " + ", ".join(choices))
    else:
        value = table.get(name, default)
    if value not in choices:
        raise BoardError(
            f"unknown {name} {value!r}",
            key=f"{key}.{name}",
            hint=did_you_mean(str(value), choices) or f"{name} is one of " + ", ".join(choices),
        )
    return value


def parse_spread(value: Any, key: str) -> SpreadSpectrum:
    """Read a PLL output's ``spread`` table: ``mode`` and ``depth``, or a ``range``; ``rate``.

    Examples
    --------
    >>> parse_spread({"range": "0..-5000 ppm", "rate": "31.5 kHz"}, "pll[0].outputs.out1.spread").mode
    'down'
    """
    table = _table(value, key, '{ mode = "down", depth = "0.5 %", rate = "31.5 kHz" }')
    _check_keys(table, ("mode", "depth", "range", "rate"), key)
    rate = _read(parse_frequency, table["rate"], f"{key}.rate") if "rate" in table else None
    if "range" in table:
        if "mode" in table or "depth" in table:
            raise BoardError("give a range, or a mode and depth, not both", key=f"{key}.range", hint="e.g. range = '0..-5000 ppm'")
        low, high = _read(parse_ppm, table["range"], f"{key}.range")
        if high == 0 and low < 0:
            mode = "down"
        elif low == 0 and high > 0:
            mode = "up"
        elif low == -high:
            mode = "center"
        else:
            raise BoardError(
                "a spread range starts at 0 (down or up) or is symmetric (center)",
                key=f"{key}.range",
                hint="write '0..-5000 ppm', '0..+5000 ppm' or '±2500 ppm'",
            )
        return _spread(mode, high - low, rate, key)
    mode = _require(table, "mode", key, "mode is 'down', 'center' or 'up'")
    depth = _magnitude(_require(table, "depth", key, "write e.g. depth = '0.5 %'"), f"{key}.depth")
    return _spread(mode, depth, rate, key)


def _spread(mode: str, depth: Fraction, rate: Fraction | None, key: str) -> SpreadSpectrum:
    try:
        return SpreadSpectrum(mode, depth, rate)
    except BoardError as err:
        raise err.located(key=key) from None


def parse_spread_allowance(value: Any, key: str) -> SpreadAllowance:
    """Read a consumer's ``spread_allowance``: ``mode``, ``depth``, optional ``rate = [lo, hi]``.

    Examples
    --------
    >>> allowance = parse_spread_allowance({"mode": "down", "depth": "5000 ppm", "rate": ["30 kHz", "33 kHz"]}, "c")
    >>> allowance.max_depth * 10**6
    Fraction(5000, 1)
    """
    table = _table(value, key, '{ mode = "down", depth = "5000 ppm", rate = ["30 kHz", "33 kHz"] }')
    _check_keys(table, ("mode", "depth", "rate"), key)
    mode = _require(table, "mode", key, "mode is 'down', 'center' or 'up'")
    depth = _magnitude(_require(table, "depth", key, "write e.g. depth = '5000 ppm'"), f"{key}.depth")
    rate = None
    if "rate" in table:
        raw = table["rate"]
        if not isinstance(raw, list) or len(raw) != 2:
            raise BoardError("rate is the allowed modulation range [min, max]", key=f"{key}.rate", hint="rate = ['30 kHz', '33 kHz']")
        rate = tuple(sorted(_read(parse_frequency, r, f"{key}.rate[{i}]") for i, r in enumerate(raw)))
    try:
        return SpreadAllowance(mode, depth, rate)
    except BoardError as err:
        raise err.located(key=f"{key}.mode") from None


def parse_consumer_budget(table: dict, key: str) -> ConsumerBudget:
    """Read a consumer's ``ppm`` budget and optional ``spread_allowance``.

    Examples
    --------
    >>> parse_consumer_budget({"ppm": "±300 ppm"}, "consumer[2]").tolerance[1] * 10**6
    Fraction(300, 1)
    """
    tolerance = _read(parse_ppm, _require(table, "ppm", key, "write e.g. ppm = '±100 ppm'"), f"{key}.ppm")
    allowance = None
    if "spread_allowance" in table:
        allowance = parse_spread_allowance(table["spread_allowance"], f"{key}.spread_allowance")
    try:
        return ConsumerBudget(tolerance, allowance)
    except BoardError as err:
        raise err.located(key=f"{key}.ppm") from None


def parse_temperature_range(value: Any, key: str) -> tuple[float, float]:
    """Read an operating range: ``"-40..85 C"`` or ``["-40 C", "85 C"]``.

    Examples
    --------
    >>> parse_temperature_range("-40..85 C", "board.temperature")
    (-40.0, 85.0)
    """
    if isinstance(value, str) and ".." in value:
        low_text, high_text = value.split("..", 1)
        unit = "C" if high_text.strip().endswith("C") and not low_text.strip().endswith("C") else ""
        value = [low_text.strip() + (f" {unit}" if unit else ""), high_text.strip()]
    if not isinstance(value, list) or len(value) != 2:
        raise BoardError("expected a temperature range", key=key, hint="write e.g. '-40..85 C' or ['-40 C', '85 C']")
    low, high = (_read(parse_temperature, v, f"{key}[{i}]") for i, v in enumerate(value))
    if low > high:
        raise BoardError(f"temperature range {low:g}..{high:g} °C runs backwards", key=key, hint="write min..max")
    return low, high

