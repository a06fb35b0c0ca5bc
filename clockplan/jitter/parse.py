"""Board-file values (plain TOML-decoded data) into the jitter module's types.

Each function takes the value found under one key and that key's path, and raises
:class:`~clockplan.errors.BoardError` with the exact path of the bad item (for
example ``reference[0].phase_noise[3]``) and a hint. Quantities are read with
:mod:`clockplan.units`, so ``"10 kHz"``, ``"-140 dBc/Hz"``, ``"90 fs"`` and plain
SI numbers all work. The keys are described in ``docs/jitter.md``.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import TypeVar

import numpy as np

from clockplan.errors import BoardError, ClockplanError, UnitError, did_you_mean
from clockplan.jitter.chain import DEFAULT_BUFFER_BAND_HZ
from clockplan.jitter.loop import LOOP_MODELS, LoopResponse, loop_from_open_loop, passive_filter_loop, second_order_loop
from clockplan.jitter.profile import PhaseNoiseProfile, Spur, find_bad_point
from clockplan.units import parse_dbc, parse_frequency, parse_number, parse_time

__all__ = [
    "AdditiveJitter",
    "JitterBudget",
    "PllNoise",
    "parse_phase_noise",
    "parse_loop",
    "parse_pll_noise",
    "parse_additive_noise",
    "parse_additive_jitter",
    "parse_jitter_budget",
    "parse_band",
]

T = TypeVar("T")

_POINT_HINT = "write each point as [offset, level], e.g. [\"10 kHz\", \"-140 dBc/Hz\"] or [1e4, -140]"


@dataclass(frozen=True)
class AdditiveJitter:
    """A buffer's additive RMS jitter and the band it is specified over."""

    seconds: float
    band_hz: tuple[float, float] = DEFAULT_BUFFER_BAND_HZ


@dataclass(frozen=True)
class JitterBudget:
    """A consumer's RMS jitter budget over its standard's integration band."""

    seconds: float
    band_hz: tuple[float, float]


@dataclass(frozen=True)
class PllNoise:
    """A PLL's own noise: in-band figure of merit, flicker figure, VCO, modulator, output floor.

    ``output_floor_dbc_hz`` is the additive white floor of each output divider
    and driver, referred to that output (datasheets quote it as the output's
    far-out noise floor).
    """

    fom_dbc_hz: float | None = None
    flicker_fom_dbc_hz: float | None = None
    vco: PhaseNoiseProfile | None = None
    modulator_order: int | None = None
    output_floor_dbc_hz: float | None = None


def _read(parser: Callable[[object], T], value: object, key: str) -> T:
    """Run a units parser, turning its error into a located BoardError."""
    try:
        return parser(value)
    except UnitError as err:
        raise BoardError(err.message, key=key, hint=err.hint) from None


def _frequency(value: object, key: str) -> float:
    return float(_read(parse_frequency, value, key))


def _check_table(value: object, key: str, allowed: tuple[str, ...], example: str) -> Mapping[str, object]:
    if not isinstance(value, Mapping):
        raise BoardError(f"expected a table, got {type(value).__name__}", key=key, hint=f"write e.g. {example}")
    for name in value:
        if name not in allowed:
            suggestion = did_you_mean(str(name), allowed)
            raise BoardError(
                f"unknown key {name!r}",
                key=f"{key}.{name}",
                hint=suggestion or f"the keys here are {', '.join(allowed)}",
            )
    return value


def _pair(item: object, key: str) -> tuple[object, object]:
    if isinstance(item, (str, bytes)) or not isinstance(item, (list, tuple)) or len(item) != 2:
        raise BoardError(f"expected a pair [offset, level], got {item!r}", key=key, hint=_POINT_HINT)
    return item[0], item[1]


def _parse_points(value: object, key: str) -> tuple[np.ndarray, np.ndarray]:
    if not isinstance(value, (list, tuple)) or not value:
        raise BoardError("expected a non-empty list of [offset, level] points", key=key, hint=_POINT_HINT)
    offsets = np.empty(len(value))
    levels = np.empty(len(value))
    for i, item in enumerate(value):
        offset, level = _pair(item, f"{key}[{i}]")
        offsets[i] = _frequency(offset, f"{key}[{i}]")
        levels[i] = _read(parse_dbc, level, f"{key}[{i}]")
    bad = find_bad_point(offsets, levels)
    if bad is not None:
        index, message, hint = bad
        raise BoardError(message, key=f"{key}[{index}]", hint=hint)
    return offsets, levels


def _parse_spurs(value: object, key: str) -> tuple[Spur, ...]:
    if not isinstance(value, (list, tuple)):
        raise BoardError("expected a list of [offset, level] spurs", key=key, hint='e.g. [["250 kHz", "-95 dBc"]]')
    spurs = []
    for i, item in enumerate(value):
        offset, level = _pair(item, f"{key}[{i}]")
        spurs.append(Spur(_frequency(offset, f"{key}[{i}]"), _read(parse_dbc, level, f"{key}[{i}]")))
    return tuple(spurs)


def parse_phase_noise(value: object, key: str) -> PhaseNoiseProfile:
    """Read a phase-noise profile: a list of points, or a table with points, floor and spurs.

    Parameters
    ----------
    value
        ``[[offset, level], ...]`` or ``{points = [...], floor = "-165 dBc/Hz",
        spurs = [[offset, "-90 dBc"], ...]}``; offsets as frequencies (``"10 kHz"``
        or Hz), levels in dBc/Hz.
    key
        The key path, used in error messages.

    Examples
    --------
    >>> p = parse_phase_noise([["1 kHz", "-120 dBc/Hz"], ["1 MHz", -150]], "reference[0].phase_noise")
    >>> p.offsets_hz.tolist(), p.dbc_hz.tolist()
    ([1000.0, 1000000.0], [-120.0, -150.0])
    """
    if isinstance(value, Mapping):
        table = _check_table(value, key, ("points", "floor", "spurs"), 'points = [["1 kHz", -120], ...]')
        if "points" not in table:
            raise BoardError("missing the phase-noise points", key=f"{key}.points", hint=_POINT_HINT)
        offsets, levels = _parse_points(table["points"], f"{key}.points")
        floor = None if "floor" not in table else _read(parse_dbc, table["floor"], f"{key}.floor")
        spurs = _parse_spurs(table.get("spurs", []), f"{key}.spurs")
    else:
        offsets, levels = _parse_points(value, key)
        floor, spurs = None, ()
    try:
        return PhaseNoiseProfile(offsets, levels, floor, spurs)
    except ClockplanError as err:
        raise BoardError(err.message, key=key, hint=err.hint) from None


def _parse_degrees(value: object, key: str) -> float:
    text = value.strip() if isinstance(value, str) else value
    if isinstance(text, str):
        for unit in ("degrees", "degree", "deg", "°"):
            if text.endswith(unit):
                text = text[: -len(unit)].strip()
                break
    return float(_read(parse_number, text, key))


def _parse_polynomial(value: object, key: str) -> list[float]:
    if not isinstance(value, (list, tuple)) or not value:
        raise BoardError(
            "expected a list of coefficients of s, highest power first",
            key=key,
            hint="e.g. [1.0, 0.0, 0.0] for s**2",
        )
    return [float(_read(parse_number, c, f"{key}[{i}]")) for i, c in enumerate(value)]


_LOOP_KEYS = (
    "bandwidth",
    "damping",
    "phase_margin",
    "bandwidth_is",
    "model",
    "open_loop_numerator",
    "open_loop_denominator",
)


def parse_loop(value: object, key: str) -> LoopResponse:
    """Read a PLL loop: bandwidth with damping or phase margin, or open-loop polynomials.

    A bandwidth-style loop is modelled by ``model``: ``"third-order"`` (the
    default: the usual third-order passive filter designed for that bandwidth
    and margin, :func:`~clockplan.jitter.loop.passive_filter_loop`) or
    ``"second-order"`` (the idealised type-II loop,
    :func:`~clockplan.jitter.loop.second_order_loop`).

    Examples
    --------
    >>> loop = parse_loop({"bandwidth": "100 kHz", "phase_margin": "60 deg"}, "pll[0].loop")
    >>> loop.model, loop.closed_den.size
    ('third-order (assumed)', 5)
    >>> parse_loop({"bandwidth": "100 kHz", "damping": 0.707, "model": "second-order"}, "pll[0].loop").model
    'second-order'
    >>> parse_loop({"bandwidth": "100 kHz", "damping": 0.707, "model": "third-order"}, "pll[0].loop").model
    'third-order'
    """
    table = _check_table(value, key, _LOOP_KEYS, 'bandwidth = "100 kHz", damping = 0.707')
    explicit = "open_loop_numerator" in table or "open_loop_denominator" in table
    try:
        if explicit:
            for name in ("bandwidth", "damping", "phase_margin", "bandwidth_is", "model"):
                if name in table:
                    raise BoardError(
                        f"{name!r} cannot go with explicit open-loop polynomials",
                        key=f"{key}.{name}",
                        hint="give either the polynomials or bandwidth with damping/phase_margin",
                    )
            missing = [n for n in ("open_loop_numerator", "open_loop_denominator") if n not in table]
            if missing:
                raise BoardError("missing half of the open loop", key=f"{key}.{missing[0]}", hint="give both polynomials")
            return loop_from_open_loop(
                _parse_polynomial(table["open_loop_numerator"], f"{key}.open_loop_numerator"),
                _parse_polynomial(table["open_loop_denominator"], f"{key}.open_loop_denominator"),
            )
        if "bandwidth" not in table:
            raise BoardError("missing the loop bandwidth", key=f"{key}.bandwidth", hint='write e.g. bandwidth = "100 kHz"')
        bandwidth = _frequency(table["bandwidth"], f"{key}.bandwidth")
        damping = None if "damping" not in table else float(_read(parse_number, table["damping"], f"{key}.damping"))
        margin = None if "phase_margin" not in table else _parse_degrees(table["phase_margin"], f"{key}.phase_margin")
        definition = table.get("bandwidth_is", "closed_loop_3db")
        model = table.get("model", LOOP_MODELS[0])
        if model not in LOOP_MODELS:
            raise BoardError(
                f"unknown loop model {model!r}",
                key=f"{key}.model",
                hint=did_you_mean(str(model), LOOP_MODELS)
                or "use 'third-order' (the usual passive filter, default) or 'second-order' (idealised)",
            )
        build = passive_filter_loop if model == "third-order" else second_order_loop
        loop = build(
            bandwidth,
            damping=damping,
            phase_margin_deg=margin,
            bandwidth_is=definition,  # type: ignore[arg-type]
        )
        # A model the board names is stated, not assumed.
        return dataclasses.replace(loop, model=model) if "model" in table else loop
    except BoardError:
        raise
    except ClockplanError as err:
        sub = err.key if err.key in _LOOP_KEYS else None
        raise BoardError(err.message, key=f"{key}.{sub}" if sub else key, hint=err.hint) from None


_PLL_NOISE_KEYS = ("fom", "flicker_fom", "vco_phase_noise", "modulator_order", "output_floor")


def parse_pll_noise(value: object, key: str) -> PllNoise:
    """Read a PLL's noise table.

    Keys: ``fom``, ``flicker_fom``, ``vco_phase_noise``, ``modulator_order``,
    ``output_floor``.

    Examples
    --------
    >>> parse_pll_noise({"fom": "-226 dBc/Hz", "modulator_order": 3}, "pll[0].noise").fom_dbc_hz
    -226.0
    """
    table = _check_table(value, key, _PLL_NOISE_KEYS, 'fom = "-226 dBc/Hz"')

    def level(name: str) -> float | None:
        return None if name not in table else _read(parse_dbc, table[name], f"{key}.{name}")

    fom, flicker = level("fom"), level("flicker_fom")
    vco = None if "vco_phase_noise" not in table else parse_phase_noise(table["vco_phase_noise"], f"{key}.vco_phase_noise")
    order = table.get("modulator_order")
    if order is not None and (isinstance(order, bool) or not isinstance(order, int) or not 1 <= order <= 6):
        raise BoardError(
            f"modulator order {order!r} is not a whole number from 1 to 6",
            key=f"{key}.modulator_order",
            hint="a fractional-N modulator's order is usually 2, 3 or 4; leave it out for integer-N",
        )
    return PllNoise(fom, flicker, vco, order, level("output_floor"))


def parse_additive_noise(value: object, key: str) -> float:
    """Read a divider's ``additive_noise``: its additive phase-noise floor in dBc/Hz.

    Examples
    --------
    >>> parse_additive_noise("-160 dBc/Hz", "divider[1].additive_noise")
    -160.0
    """
    return _read(parse_dbc, value, key)


def parse_band(value: object, key: str) -> tuple[float, float]:
    """Read an integration band ``[low, high]``.

    Examples
    --------
    >>> parse_band(["12 kHz", "20 MHz"], "consumer[0].jitter_band")
    (12000.0, 20000000.0)
    """
    if isinstance(value, (str, bytes)) or not isinstance(value, (list, tuple)) or len(value) != 2:
        raise BoardError(
            f"expected a band [low, high], got {value!r}", key=key, hint='write e.g. ["12 kHz", "20 MHz"]'
        )
    low = _frequency(value[0], f"{key}[0]")
    high = _frequency(value[1], f"{key}[1]")
    if not low < high:
        raise BoardError(
            f"band low limit {low:g} Hz is not below the high limit {high:g} Hz",
            key=key,
            hint='write the lower offset first, e.g. ["12 kHz", "20 MHz"]',
        )
    return low, high


def _jitter_seconds(value: object, key: str) -> float:
    seconds = _read(parse_time, value, key)
    if not math.isfinite(seconds):
        raise BoardError(f"jitter {value!r} is not finite", key=key, hint='write e.g. "90 fs"')
    return seconds


def parse_additive_jitter(value: object, key: str, band: object | None = None, band_key: str | None = None) -> AdditiveJitter:
    """Read a buffer's ``additive_jitter`` (and optionally its ``additive_jitter_band``).

    Examples
    --------
    >>> parse_additive_jitter("90 fs", "buffer[0].additive_jitter").band_hz
    (12000.0, 20000000.0)
    """
    seconds = _jitter_seconds(value, key)
    if band is None:
        return AdditiveJitter(seconds)
    return AdditiveJitter(seconds, parse_band(band, band_key or f"{key}_band"))


def parse_jitter_budget(value: object, key: str, band: object, band_key: str) -> JitterBudget:
    """Read a consumer's jitter budget (key ``jitter``) with its ``jitter_band``.

    Examples
    --------
    >>> b = parse_jitter_budget("1 ps", "consumer[0].jitter", ["12 kHz", "20 MHz"], "consumer[0].jitter_band")
    >>> b.seconds, b.band_hz
    (1e-12, (12000.0, 20000000.0))
    """
    seconds = _jitter_seconds(value, key)
    if seconds <= 0:
        raise BoardError("a jitter budget must be above zero", key=key, hint='write e.g. "1 ps"')
    return JitterBudget(seconds, parse_band(band, band_key))
