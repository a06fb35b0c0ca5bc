"""Reading a PLL's ``loop_filter`` table from a board file.

The table is the plain dict a TOML reader gives; keys are listed in
:data:`LOOP_FILTER_KEYS` and documented in ``docs/loop-filter.md``.  Two
uses:

- **design**: give ``bandwidth`` and ``phase_margin`` (and optionally
  ``order``, ``pole_ratio``, ``gamma``, the E-series); the filter is designed
  and snapped;
- **existing filter**: give every part of the order (``r1``, ``c1``, ``c2``
  and, for order 3, ``r3``, ``c3``); the filter is analysed as built, and
  ``bandwidth``/``phase_margin``, if present, are shown as targets.

N and the PFD frequency are not here: they come from the frequency plan
(:meth:`LoopFilterConfig.spec`).
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction

from clockplan.errors import BoardError, ClockplanError, UnitError, did_you_mean
from clockplan.eseries import SERIES_NAMES
from clockplan.loopfilter.design import DEFAULT_POLE_RATIO, FilterDesign, LoopSpec
from clockplan.loopfilter.closed_form import COMPONENT_NAMES
from clockplan.units import parse_frequency, parse_number, parse_quantity

__all__ = ["LOOP_FILTER_KEYS", "LoopFilterConfig", "parse_loop_filter"]

LOOP_FILTER_KEYS: dict[str, str] = {
    "order": "2 or 3 (default 3)",
    "charge_pump": "charge-pump current, e.g. '2.5 mA'",
    "kvco": "VCO gain, e.g. '30 MHz/V'",
    "bandwidth": "target loop bandwidth (open-loop 0 dB crossover), e.g. '100 kHz'",
    "phase_margin": "target phase margin in degrees, e.g. 55",
    "pole_ratio": f"T3/T1 of the third-order filter (default {DEFAULT_POLE_RATIO})",
    "gamma": "zero placement factor of the design method (default 1)",
    "resistor_series": "IEC 60063 series for resistors (default 'E24')",
    "capacitor_series": "IEC 60063 series for capacitors (default 'E12')",
    "lock_step": "frequency jump for the lock-time estimate, e.g. '10 MHz' (default: one PFD step)",
    "lock_tolerance": "lock when within this of the new frequency, e.g. '1 kHz' (default: 1 ppm of the VCO)",
    "r1": "existing filter: zero resistor, e.g. '910 Ω'",
    "c1": "existing filter: zero capacitor, e.g. '5.6 nF'",
    "c2": "existing filter: shunt capacitor at the charge pump, e.g. '270 pF'",
    "r3": "existing filter (order 3): third-pole resistor, e.g. '6.2 kΩ'",
    "c3": "existing filter (order 3): capacitor at the VCO tuning pin, e.g. '39 pF'",
}

_EXAMPLES = {
    "charge_pump": "'2.5 mA'",
    "kvco": "'30 MHz/V'",
    "r1": "'910 Ω'",
    "c1": "'5.6 nF'",
    "c2": "'270 pF'",
    "r3": "'6.2 kΩ'",
    "c3": "'39 pF'",
}
_OHM_WORD = re.compile(r"ohms?$", re.IGNORECASE)


@dataclass(frozen=True)
class LoopFilterConfig:
    """A PLL's loop-filter request from the board file (SI units).

    ``fixed`` holds an existing filter to analyse; otherwise the filter is
    designed for ``bandwidth_hz`` and ``phase_margin_deg``.
    """

    order: int
    charge_pump_a: float
    kvco_hz_per_v: float
    bandwidth_hz: float | None = None
    phase_margin_deg: float | None = None
    pole_ratio: float = DEFAULT_POLE_RATIO
    gamma: float = 1.0
    resistor_series: str = "E24"
    capacitor_series: str = "E12"
    fixed: FilterDesign | None = None
    lock_step_hz: float | None = None
    lock_tolerance_hz: float | None = None

    def spec(self, n: Fraction | float, f_pfd_hz: Fraction | float) -> LoopSpec:
        """Complete the loop with N and the PFD frequency from the plan.

        Examples
        --------
        >>> config = parse_loop_filter({"charge_pump": "2.5 mA", "kvco": "30 MHz/V",
        ...                             "bandwidth": "100 kHz", "phase_margin": 55})
        >>> config.spec(100, 25_000_000).loop_constant
        750.0
        """
        return LoopSpec(self.charge_pump_a, self.kvco_hz_per_v, n, f_pfd_hz)


def _located(error: ClockplanError, key: str) -> BoardError:
    return BoardError(error.message, key=key, hint=error.hint)


def _positive(value: Fraction | float, key: str, what: str, example: str) -> float:
    number = float(value)
    if not (math.isfinite(number) and number > 0):
        raise BoardError(f"{what} must be above zero, not {value}", key=key, hint=f"write e.g. {example}")
    return number


def _read_quantity(raw: object, unit: str, key: str, what: str, example: str) -> float:
    try:
        if unit == "Ω" and isinstance(raw, str):
            raw = _OHM_WORD.sub("Ω", raw.strip())
        if unit == "Hz":
            value: Fraction | float = parse_frequency(raw)
        else:
            value = parse_quantity(raw, unit)
    except UnitError as error:
        raise _located(error, key) from None
    return _positive(value, key, what, example)


def _read_number(raw: object, key: str, what: str, example: str) -> float:
    text = raw
    if isinstance(raw, str):
        text = raw.strip().removesuffix("°").removesuffix("deg").strip()
    try:
        value = parse_number(text)
    except UnitError as error:
        raise _located(error, key) from None
    return _positive(value, key, what, example)


def _read_series(raw: object, key: str) -> str:
    name = str(raw).strip().upper()
    if name not in SERIES_NAMES:
        raise BoardError(
            f"unknown preferred-number series {raw!r}",
            key=key,
            hint="use one of " + ", ".join(SERIES_NAMES) + " (IEC 60063)",
        )
    return name


def _read_order(raw: object, key: str) -> int:
    if isinstance(raw, bool) or raw not in COMPONENT_NAMES:
        raise BoardError(f"loop filter order must be 2 or 3, not {raw!r}", key=key, hint="write order = 2 or order = 3")
    return int(raw)  # type: ignore[arg-type]


def _read_fixed(table: Mapping[str, object], order: int, prefix: str) -> FilterDesign | None:
    given = [name for name in COMPONENT_NAMES[3] if name in table]
    if not given:
        return None
    wanted = COMPONENT_NAMES[order]
    extra = [name for name in given if name not in wanted]
    if extra:
        raise BoardError(
            f"{extra[0]} belongs to a third-order filter but order is {order}",
            key=f"{prefix}.{extra[0]}",
            hint="set order = 3, or remove r3 and c3",
        )
    missing = [name for name in wanted if name not in table]
    if missing:
        raise BoardError(
            "an existing filter needs every part; missing " + ", ".join(missing),
            key=f"{prefix}.{missing[0]}",
            hint="give all of " + ", ".join(wanted) + ", or none of them to have the filter designed",
        )
    values = {}
    for name in wanted:
        unit = "Ω" if name.startswith("r") else "F"
        values[name] = _read_quantity(table[name], unit, f"{prefix}.{name}", name, _EXAMPLES[name])
    return FilterDesign(order, **values)


def _require(table: Mapping[str, object], name: str, prefix: str, message: str, hint: str) -> None:
    if name not in table:
        raise BoardError(f"{message} {name}", key=f"{prefix}.{name}", hint=hint)


def parse_loop_filter(table: Mapping[str, object], key: str = "loop_filter") -> LoopFilterConfig:
    """Turn a TOML-decoded ``loop_filter`` table into a :class:`LoopFilterConfig`.

    Parameters
    ----------
    table
        The decoded table (plain dict of str/int/float).
    key
        Its key path in the board file, used in error messages, e.g.
        ``"pll[1].loop_filter"``.

    Raises
    ------
    BoardError
        With ``key`` set to the offending entry and a ``hint``.

    Examples
    --------
    >>> config = parse_loop_filter({"charge_pump": "2.5 mA", "kvco": "30 MHz/V",
    ...                             "bandwidth": "100 kHz", "phase_margin": 55})
    >>> config.order, config.charge_pump_a, config.kvco_hz_per_v, config.bandwidth_hz
    (3, 0.0025, 30000000.0, 100000.0)
    """
    if not isinstance(table, Mapping):
        raise BoardError("loop_filter must be a table", key=key, hint="write [pll.loop_filter] with keys below it")
    for name in table:
        if name not in LOOP_FILTER_KEYS:
            suggestion = did_you_mean(str(name), LOOP_FILTER_KEYS)
            raise BoardError(
                f"unknown loop-filter key {name!r}",
                key=f"{key}.{name}",
                hint=suggestion or "known keys: " + ", ".join(LOOP_FILTER_KEYS),
            )
    for required in ("charge_pump", "kvco"):
        _require(table, required, key, "the loop filter needs", f"add {required} = {_EXAMPLES[required]}")
    order = _read_order(table.get("order", 3), f"{key}.order")
    fixed = _read_fixed(table, order, key)
    if fixed is None:
        for required in ("bandwidth", "phase_margin"):
            hint = f"add {required} ({LOOP_FILTER_KEYS[required]}), or give an existing filter's parts"
            _require(table, required, key, "designing a loop filter needs", hint)

    def optional(name: str, reader, *args):
        return reader(table[name], f"{key}.{name}", *args) if name in table else None

    return LoopFilterConfig(
        order=order,
        charge_pump_a=_read_quantity(table["charge_pump"], "A", f"{key}.charge_pump", "charge-pump current", _EXAMPLES["charge_pump"]),
        kvco_hz_per_v=_read_quantity(table["kvco"], "Hz/V", f"{key}.kvco", "VCO gain", _EXAMPLES["kvco"]),
        bandwidth_hz=optional("bandwidth", lambda raw, k: _read_quantity(raw, "Hz", k, "bandwidth", "'100 kHz'")),
        phase_margin_deg=optional("phase_margin", _read_number, "phase margin", "55"),
        pole_ratio=optional("pole_ratio", _read_number, "pole ratio", "0.5") or DEFAULT_POLE_RATIO,
        gamma=optional("gamma", _read_number, "gamma", "1.0") or 1.0,
        resistor_series=optional("resistor_series", _read_series) or "E24",
        capacitor_series=optional("capacitor_series", _read_series) or "E12",
        fixed=fixed,
        lock_step_hz=optional("lock_step", lambda raw, k: _read_quantity(raw, "Hz", k, "lock step", "'10 MHz'")),
        lock_tolerance_hz=optional(
            "lock_tolerance", lambda raw, k: _read_quantity(raw, "Hz", k, "lock tolerance", "'1 kHz'")
        ),
    )
