"""The physical range of every numeric key: one table, checked when a file is loaded.

A value can be a perfectly good number and still no physical quantity: a jitter
budget of 1e400 ps, a lifetime of 1e300 years, a VCO gain of 1e308 Hz/V. Such
values used to pass the parsers and overflow a float much later (an internal
error). :data:`LIMITS` gives each numeric key of the board file, the synthesis
consumer list and the parts library a generous but physical range;
:func:`check_limits` walks a loaded TOML document once, before the section
readers run, and refuses the first value outside its range with a located
error naming the key, its range and the value (cut short).

The ranges are wide on purpose: they refuse only what no real board has (a
prefix mix-up, an exponent typo, a fuzzed value). Each row says whether the
range is our choice or common practice; ``docs/board-format.md`` lists them.
A value that does not parse at all is left to the section reader, whose error
explains the syntax.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

from clockplan.errors import BoardError, ClockplanError
from clockplan.units import (
    parse_duration,
    parse_number,
    parse_ppm,
    parse_quantity,
    parse_temperature,
    parse_time,
)

__all__ = ["Limit", "LIMITS", "check_limits", "limit_for", "limits_markdown"]

_YEAR_S = 365.25 * 86400


@dataclass(frozen=True)
class Limit:
    """The range of one key (SI values; ``shown`` is the range as the docs and messages say it).

    ``path`` is the key's path with array indices written ``[]`` (any index), ``*``
    standing for any one name (``"*.load.c1"`` is a crystal's motional capacitance
    wherever it appears);
    it matches the end of a value's path. ``read`` turns the raw value into the
    numbers to check (several for a pair or a table of choices); ``allow_zero``
    admits an exact zero below ``low``.
    """

    path: str
    read: Callable[[Any], list[float | Fraction]]
    low: float | Fraction
    high: float | Fraction
    shown: str
    basis: str
    allow_zero: bool = False

    def matches(self, parts: tuple[str, ...]) -> bool:
        """True if the key path ``parts`` (indices removed) ends with this row's path."""
        pattern = self.path.replace("[]", "").split(".")
        if len(parts) < len(pattern):
            return False
        return all(p == "*" or p == q for p, q in zip(pattern, parts[-len(pattern):]))

    def inside(self, value: float | Fraction) -> bool:
        """True if ``value`` lies in the range (ends included)."""
        return (self.allow_zero and value == 0) or self.low <= value <= self.high


# --------------------------------------------------------------------------- readers


def _scalars(value: Any) -> Iterator[Any]:
    """Every scalar inside ``value`` (through arrays and tables)."""
    stack = [value]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            stack.extend(item.values())
        elif isinstance(item, list):
            stack.extend(item)
        else:
            yield item


def _each(parse: Callable[[Any], Any]) -> Callable[[Any], list[float | Fraction]]:
    """A reader applying ``parse`` to every scalar of the value."""

    def read(value: Any) -> list[float | Fraction]:
        return [parse(item) for item in _scalars(value) if not isinstance(item, bool)]

    return read


def _strip_units(*units: str) -> Callable[[Any], Fraction]:
    def parse(value: Any) -> Fraction:
        if isinstance(value, str):
            text = value.strip()
            for unit in sorted(units, key=len, reverse=True):
                if text.lower().endswith(unit.lower()):
                    text = text[: -len(unit)].strip()
                    break
            return parse_number(text)
        return parse_number(value)

    return parse


def _quantity(unit: str) -> Callable[[Any], list[float | Fraction]]:
    return _each(lambda value: parse_quantity(value, unit))


def _ohms(value: Any) -> Fraction:
    if isinstance(value, str):
        return parse_quantity(value.replace("ohms", "Ω").replace("ohm", "Ω"), "Ω")
    return parse_number(value)


def _duration_or_time(value: Any) -> float:
    try:
        return parse_duration(value)
    except ClockplanError:
        return parse_time(value)


def _ppm(value: Any) -> list[float | Fraction]:
    """The magnitudes of both ends of a frequency-error range (zero, or 1e-18 .. 1)."""
    return [abs(end) for end in parse_ppm(value)]


def _point_temperatures(value: Any) -> list[float | Fraction]:
    return [parse_temperature(point[0]) for point in value if isinstance(point, list) and point]


def _levels_of_points(value: Any) -> list[float | Fraction]:
    """The levels of ``[[offset, level], ...]`` (or of ``{ points = [...] }``)."""
    points = value.get("points", []) if isinstance(value, dict) else value
    if not isinstance(points, list):
        return []
    return [_LEVEL(point[1]) for point in points if isinstance(point, list) and len(point) == 2]


_NUMBER = _each(parse_number)
_TEMPERATURE = _each(parse_temperature)
_DURATION = _each(parse_duration)
_TIME = _each(parse_time)
_LEVEL = _strip_units("dBc/Hz", "dBc", "dB")
_LEVELS = _each(_LEVEL)
_DEGREES = _each(_strip_units("degrees", "degree", "deg", "°"))
_DECIBELS = _each(_strip_units("dBFS", "dBc", "dB"))

_OURS = "our choice"
#: The smallest frequency error read apart from zero: 1e-18 (1e-12 ppm), below the best optical clocks' figures.
_PPM_LOW = Fraction(1, 10**18)
_PRACTICE = "common practice"

#: Every numeric key and its range. Frequencies (``frequency``, ``vco``, ``pfd``,
#: ``bandwidth``, ``rate``, ...) are bounded by :func:`clockplan.units.parse_frequency`
#: itself (1 mHz .. 1 THz); frequency errors by :func:`clockplan.units.parse_ppm` (±100 %).
LIMITS: tuple[Limit, ...] = (
    # --- [board] and the consumer list's [board]
    Limit("board.lifetime", _DURATION, 0, 100 * _YEAR_S, "0 .. 100 years", _OURS),
    Limit("board.temperature", _TEMPERATURE, -273.15, 1000, "-273.15 .. 1000 °C", _OURS),
    # --- references: accuracy (ppm/parse.py)
    Limit("*.tolerance", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±1e6 ppm (±100 %)", _OURS, allow_zero=True),
    Limit("*.stability", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±1e6 ppm (±100 %)", _OURS, allow_zero=True),
    Limit("*.stability_range", _TEMPERATURE, -273.15, 1000, "-273.15 .. 1000 °C", _OURS),
    Limit("*.supply_sensitivity", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±1e6 ppm (±100 %)", _OURS, allow_zero=True),
    Limit("*.load_sensitivity", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±1e6 ppm (±100 %)", _OURS, allow_zero=True),
    Limit("*.aging.first_year", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±1e6 ppm (±100 %)", _OURS, allow_zero=True),
    Limit("*.aging.per_year", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±1e6 ppm (±100 %)", _OURS, allow_zero=True),
    Limit("*.aging.time_constant", _DURATION, 1e-3, 100 * _YEAR_S, "1 ms .. 100 years", _OURS),
    Limit("*.temperature_curve.angle_offset_arcmin", _NUMBER, -600, 600, "-600 .. 600 arcmin (±10°)", _OURS),
    Limit("*.temperature_curve.coefficients_ppm", _NUMBER, -1000, 1000, "-1000 .. 1000 ppm/°C^k each", _OURS),
    Limit("*.temperature_curve.coefficient_ppm", _NUMBER, -1000, 1000, "-1000 .. 1000 ppm/°C²", _OURS),
    Limit("*.temperature_curve.turnover", _TEMPERATURE, -273.15, 1000, "-273.15 .. 1000 °C", _OURS),
    Limit("*.temperature_curve.reference", _TEMPERATURE, -273.15, 1000, "-273.15 .. 1000 °C", _OURS),
    Limit("*.temperature_curve.points", _point_temperatures, -273.15, 1000, "-273.15 .. 1000 °C (temperatures)", _OURS),
    Limit("*.load.c1", _quantity("F"), Fraction(1, 10**18), Fraction(1, 10**9), "1 aF .. 1 nF", _OURS),
    Limit("*.load.c0", _quantity("F"), 0, Fraction(1, 10**6), "0 .. 1 µF", _OURS),
    Limit("*.load.specified", _quantity("F"), 0, Fraction(1, 10**6), "0 .. 1 µF", _OURS),
    Limit("*.load.capacitors", _quantity("F"), 0, Fraction(1, 10**6), "0 .. 1 µF", _OURS),
    Limit("*.load.stray", _quantity("F"), 0, Fraction(1, 10**6), "0 .. 1 µF", _OURS),
    Limit("*.load.stray_tolerance", _quantity("F"), 0, Fraction(1, 10**6), "0 .. 1 µF", _OURS),
    Limit("*.load.capacitor_tolerance", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±100 %", _OURS, allow_zero=True),
    Limit("*.trim", lambda v: _ppm(v) if not (isinstance(v, str) and v.rstrip().endswith("Hz")) else [],
          _PPM_LOW, 1, "0, or 1e-12 ppm .. ±100 %", _OURS, allow_zero=True),
    Limit("*.power.supply", _quantity("V"), 0, 1000, "0 .. 1 kV", _OURS),
    Limit("*.power.warmup_current", _quantity("A"), 0, 100, "0 .. 100 A", _OURS),
    Limit("*.power.steady_current", _quantity("A"), 0, 100, "0 .. 100 A", _OURS),
    Limit("*.power.warmup", _quantity("W"), 0, 1000, "0 .. 1 kW", _OURS),
    Limit("*.power.steady", _quantity("W"), 0, 1000, "0 .. 1 kW", _OURS),
    Limit("*.power.warmup_time", _each(_duration_or_time), 0, 86400, "0 .. 1 day", _OURS),
    Limit("*.spread.depth", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±100 %", _OURS, allow_zero=True),
    Limit("*.spread.range", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±100 %", _OURS, allow_zero=True),
    # --- phase noise (jitter/parse.py): levels relative to the carrier
    Limit("*.phase_noise", _levels_of_points, -400, 50, "-400 .. +50 dBc/Hz (levels)", _OURS),
    Limit("*.phase_noise.floor", _LEVELS, -400, 50, "-400 .. +50 dBc/Hz", _OURS),
    Limit("*.phase_noise.spurs", _levels_of_points, -400, 50, "-400 .. +50 dBc (levels)", _OURS),
    Limit("*.vco_phase_noise", _levels_of_points, -400, 50, "-400 .. +50 dBc/Hz (levels)", _OURS),
    Limit("*.vco_phase_noise.floor", _LEVELS, -400, 50, "-400 .. +50 dBc/Hz", _OURS),
    Limit("*.additive_noise", _LEVELS, -400, 50, "-400 .. +50 dBc/Hz", _OURS),
    Limit("*.noise.fom", _LEVELS, -400, 0, "-400 .. 0 dBc/Hz", _OURS),
    Limit("*.noise.flicker_fom", _LEVELS, -400, 0, "-400 .. 0 dBc/Hz", _OURS),
    Limit("*.noise.output_floor", _LEVELS, -400, 50, "-400 .. +50 dBc/Hz", _OURS),
    Limit("*.noise.modulator_order", _NUMBER, 0, 10, "0 .. 10", _OURS),
    Limit("*.additive_jitter", _TIME, Fraction(1, 10**18), 1, "0, or 1 as .. 1 s", _OURS, allow_zero=True),
    # --- PLLs: ratios and dividers (boardfile.py, synth/library.py)
    Limit("*.n", _NUMBER, Fraction(1, 1000), 10**12, "0.001 .. 1e12", _OURS),
    Limit("*.r", _NUMBER, 1, 10**12, "1 .. 1e12", _OURS),
    Limit("pll[].settings.n", _NUMBER, Fraction(1, 1000), 10**12, "0.001 .. 1e12", _OURS),
    Limit("pll[].settings.r", _NUMBER, 1, 10**12, "1 .. 1e12", _OURS),
    Limit("pll[].settings.outputs", _NUMBER, 1, 10**12, "1 .. 1e12", _OURS),
    Limit("pll[].outputs.*.divider", _NUMBER, 1, 10**12, "1 .. 1e12", _OURS),
    Limit("pll[].output_divider", _NUMBER, 1, 10**12, "1 .. 1e12", _OURS),
    Limit("pll[].denominator", _NUMBER, 1, 2**64, "1 .. 2^64", _OURS),
    Limit("pll[].max_denominator", _NUMBER, 1, 2**64, "1 .. 2^64", _OURS),
    Limit("divider[].ratio", _NUMBER, 1, 10**12, "1 .. 1e12", _OURS),
    Limit("divider[].settings.ratio", _NUMBER, 1, 10**12, "1 .. 1e12", _OURS),
    Limit("buffer[].outputs", _NUMBER, 1, 10**6, "1 .. 1e6", _OURS),
    # --- loop response (jitter/parse.py) and loop filter (loopfilter/board.py)
    Limit("*.loop.damping", _NUMBER, Fraction(1, 1000), 1000, "0.001 .. 1000", _OURS),
    Limit("*.loop.phase_margin", _DEGREES, 0, 180, "0 .. 180°", _PRACTICE),
    Limit("*.loop.open_loop_numerator", _NUMBER, -1e100, 1e100, "each within ±1e100", _OURS),
    Limit("*.loop.open_loop_denominator", _NUMBER, -1e100, 1e100, "each within ±1e100", _OURS),
    Limit("*.loop_filter.charge_pump", _quantity("A"), Fraction(1, 10**9), 1, "1 nA .. 1 A", _OURS),
    Limit("*.loop_filter.kvco", _quantity("Hz/V"), 1, 10**12, "1 Hz/V .. 1 THz/V", _OURS),
    Limit("*.loop_filter.phase_margin", _DEGREES, 0, 180, "0 .. 180°", _PRACTICE),
    Limit("*.loop_filter.pole_ratio", _NUMBER, Fraction(1, 1000), 1000, "0.001 .. 1000", _OURS),
    Limit("*.loop_filter.gamma", _NUMBER, Fraction(1, 1000), 1000, "0.001 .. 1000", _OURS),
    Limit("*.loop_filter.order", _NUMBER, 1, 10, "1 .. 10", _OURS),
    Limit("*.loop_filter.r1", _each(_ohms), Fraction(1, 1000), 10**12, "1 mΩ .. 1 TΩ", _OURS),
    Limit("*.loop_filter.r3", _each(_ohms), Fraction(1, 1000), 10**12, "1 mΩ .. 1 TΩ", _OURS),
    Limit("*.loop_filter.c1", _quantity("F"), Fraction(1, 10**18), 1, "1 aF .. 1 F", _OURS),
    Limit("*.loop_filter.c2", _quantity("F"), Fraction(1, 10**18), 1, "1 aF .. 1 F", _OURS),
    Limit("*.loop_filter.c3", _quantity("F"), Fraction(1, 10**18), 1, "1 aF .. 1 F", _OURS),
    # --- consumers: budgets (standards/resolve.py, jitter/parse.py)
    Limit("consumer[].max_synthesis_error", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±100 %", _OURS, allow_zero=True),
    Limit("consumer[].ppm", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±100 %", _OURS, allow_zero=True),
    Limit("consumer[].jitter", _TIME, Fraction(1, 10**18), 1, "1 as .. 1 s", _OURS),
    Limit("consumer[].spread", _ppm, _PPM_LOW, 1, "0, or 1e-12 ppm .. ±100 %", _OURS, allow_zero=True),
    Limit("consumer[].jitter_pp", _TIME, Fraction(1, 10**18), 1, "1 as .. 1 s", _OURS),
    Limit("consumer[].converter.snr", _DECIBELS, 0, 300, "0 .. 300 dB", _OURS),
    Limit("consumer[].rtc.drift", _quantity("s"), Fraction(1, 10**18), 86400, "1 as .. 1 day", _OURS),
    Limit("consumer[].rtc.per", _each(lambda v: parse_duration(("1 " + v) if isinstance(v, str) and v.strip()[:1].isalpha() else v)),
          1, 100 * _YEAR_S, "1 s .. 100 years", _OURS),
    Limit("consumer[].uart.baud", _NUMBER, Fraction(1, 1000), 10**12, "0.001 .. 1e12 baud", _OURS),
    Limit("consumer[].uart.divider", _NUMBER, Fraction(1, 1000), 10**12, "0.001 .. 1e12", _OURS),
    Limit("consumer[].uart.oversampling", _NUMBER, 1, 10**6, "1 .. 1e6", _OURS),
    Limit("consumer[].uart.frame_bits", _NUMBER, 1, 1000, "1 .. 1000", _OURS),
    Limit("consumer[].uart.sample_ticks", _NUMBER, 0, 10**6, "0 .. 1e6", _OURS),
    Limit("consumer[].can.*", _NUMBER, 0, 1000, "0 .. 1000 time quanta", _OURS),
    # --- parts library (synth/library.py)
    Limit("*.cost", _NUMBER, 0, 10**9, "0 .. 1e9", _OURS),
    Limit("*.power", lambda v: [] if isinstance(v, dict) else _quantity("W")(v), 0, 1000, "0 .. 1 kW", _OURS),
)


def limit_for(parts: tuple[str, ...]) -> Limit | None:
    """The most specific row of :data:`LIMITS` for a key path (indices removed), or None."""
    best: Limit | None = None
    for limit in LIMITS:
        if limit.matches(parts) and (best is None or _specificity(limit) > _specificity(best)):
            best = limit
    return best


def _specificity(limit: Limit) -> tuple[int, int]:
    names = limit.path.replace("[]", "").split(".")
    return (len(names), -names.count("*"))


def _shorten(value: Any, limit: int = 40) -> str:
    text = repr(value) if isinstance(value, str) else str(value)
    return text if len(text) <= limit else f"{text[:limit]}... ({len(text)} characters)"


def check_limits(doc: dict[str, Any], error: Callable[[str, str, str], BoardError]) -> None:
    """Refuse the first value of ``doc`` outside its key's range in :data:`LIMITS`.

    Parameters
    ----------
    doc
        A TOML document as loaded.
    error
        ``error(key_path, message, hint)`` makes the located error (a locator's ``error``).

    Raises
    ------
    BoardError
        Located at the key, naming its range and the value (cut short).
    """
    stack: list[tuple[Any, str, tuple[str, ...]]] = [(value, name, (name,)) for name, value in reversed(doc.items())]
    while stack:
        value, key, parts = stack.pop()
        limit = limit_for(parts)
        if limit is not None:
            _check(limit, value, key, error)
        if isinstance(value, dict):
            stack += [(item, f"{key}.{name}", parts + (name,)) for name, item in reversed(value.items())]
        elif isinstance(value, list) and limit is None:
            stack += [(item, f"{key}[{index}]", parts) for index, item in reversed(list(enumerate(value)))]


def _check(limit: Limit, value: Any, key: str, error: Callable[[str, str, str], BoardError]) -> None:
    try:
        numbers = limit.read(value)
    except OverflowError:
        numbers = [math.nan]  # too large for a float: far outside any range
    except (ClockplanError, ValueError, ArithmeticError, TypeError, AttributeError, IndexError):
        return  # not a number at all: the section reader says why
    for number in numbers:
        if not limit.inside(number):
            name = key.rsplit(".", 1)[-1]
            if number != number:
                side = "far beyond"
            else:
                side = "negative, below" if number < 0 <= limit.low else ("below" if number < limit.low else "above")
            raise error(
                key,
                f"{name} = {_shorten(value)} is {side} its range {limit.shown}",
                f"the range is {limit.basis} for a physical {name.replace('_', ' ')} "
                "(docs/board-format.md, 'Ranges of numeric keys'); check the value, its unit and exponent",
            )


def limits_markdown() -> str:
    """The table of ranges as Markdown (for ``docs/board-format.md``)."""
    rows = ["| key | range | basis |", "|---|---|---|"]
    rows += [f"| `{limit.path}` | {limit.shown} | {limit.basis} |" for limit in LIMITS]
    return "\n".join(rows)
