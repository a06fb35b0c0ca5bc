"""A consumer's budget: its standard's figures, with the board's own fields merged over them.

A consumer table in a board file may name a standard, override any of its
figures, or write a whole budget inline, including budgets derived from the
design (UART frame, CAN bit timing, RTC drift target, converter SNR)::

    [[consumer]]
    name = "nic"
    frequency = "25 MHz"
    standard = "1000BASE-T"
    ppm = "±50 ppm"                       # tighter than the standard's ±100 ppm

    [[consumer]]
    name = "debug_uart"
    frequency = "48 MHz"
    uart = { frame = "8N1", oversampling = 16, baud = 115200 }

:func:`resolve_budget` reads only the fields in :data:`BUDGET_FIELDS` and
ignores the rest of the table, so the board loader can pass the whole consumer.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from fractions import Fraction
from typing import Any

from clockplan.errors import BoardError, ClockplanError, InfeasibleError, did_you_mean
from clockplan.standards import derived
from clockplan.standards.model import StandardBudget
from clockplan.standards.table import get_standard
from clockplan.units import (
    format_frequency,
    format_ppm,
    format_time,
    parse_duration,
    parse_frequency,
    parse_number,
    parse_ppm,
    parse_quantity,
    parse_time,
)

__all__ = ["BUDGET_FIELDS", "DERIVED_FIELDS", "resolve_budget"]

#: Inline fields that replace a standard's figure of the same meaning.
_FIGURE_FIELDS = ("ppm", "spread", "spread_rate", "jitter", "jitter_pp", "jitter_band")
#: Inline tables from which a figure is derived.
DERIVED_FIELDS = ("uart", "can", "rtc", "converter")
#: Every consumer field :func:`resolve_budget` reads.
BUDGET_FIELDS = _FIGURE_FIELDS + DERIVED_FIELDS

_DERIVED_KEYS = {
    "uart": ("frame", "frame_bits", "oversampling", "sample_ticks", "baud", "divider"),
    "can": ("prop_seg", "phase_seg1", "phase_seg2", "sjw", "sync_seg"),
    "rtc": ("drift", "per"),
    "converter": ("snr", "f_in", "jitter_band"),
}
_DERIVED_TARGET = {"uart": "ppm", "can": "ppm", "rtc": "ppm", "converter": "jitter"}
_BOARD_TEXT = "board"


def _call(path: str, function: Any, *args: Any, **kwargs: Any) -> Any:
    """Run a parser or formula, re-raising its error as a BoardError located at ``path``."""
    try:
        return function(*args, **kwargs)
    except InfeasibleError:
        raise
    except ClockplanError as err:
        raise BoardError(err.message, key=f"{path}.{err.key}" if err.key else path, hint=err.hint) from None


def _pair(path: str, parse: Any, value: Any) -> tuple[Any, Any]:
    if not isinstance(value, list) or len(value) != 2:
        raise BoardError(f"{value!r} is not a pair", key=path, hint='write two values, e.g. ["12 kHz", "20 MHz"]')
    low = _call(f"{path}[0]", parse, value[0])
    high = _call(f"{path}[1]", parse, value[1])
    if low > high:
        raise BoardError(f"{value!r} runs backwards", key=path, hint="write the lower value first")
    return low, high


def _figure(name: str, value: Any, path: str) -> tuple[str, Any]:
    """Parse one inline figure into (StandardBudget field name, value)."""
    if name == "ppm":
        return "ppm", _call(path, parse_ppm, value)
    if name == "spread":
        if value is False or (isinstance(value, str) and value.strip().lower() == "none"):
            return "spread", None
        return "spread", _call(path, parse_ppm, value)
    if name == "spread_rate":
        return "spread_rate_hz", _pair(path, parse_frequency, value)
    if name == "jitter":
        return "jitter_rms_s", _call(path, parse_time, value)
    if name == "jitter_pp":
        return "jitter_pp_s", _call(path, parse_time, value)
    return "jitter_band_hz", _pair(path, parse_frequency, value)


def _check_table(kind: str, table: Any, path: str) -> Mapping[str, Any]:
    if not isinstance(table, Mapping):
        raise BoardError(f"{kind} must be a table", key=path, hint=f"e.g. {kind} = {{ ... }}")
    allowed = _DERIVED_KEYS[kind]
    for name in table:
        if name not in allowed:
            close = did_you_mean(name, allowed)
            raise BoardError(
                f"unknown field {name!r} in {kind}",
                key=f"{path}.{name}",
                hint=close or "known fields: " + ", ".join(allowed),
            )
    return table


def _require(table: Mapping[str, Any], name: str, path: str) -> Any:
    if name not in table:
        raise BoardError(f"missing field {name!r}", key=path, hint=f"add {name} = ...")
    return table[name]


def _whole(value: Any, path: str) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        raise BoardError(f"{value!r} is not a whole number of at least 1", key=path)
    return value


def _percent(fraction: Fraction) -> str:
    return f"{float(fraction) * 100:+.3g} %"


def _symmetric(tolerance: Fraction) -> tuple[Fraction, Fraction]:
    return -tolerance, tolerance


def _uart(table: Mapping[str, Any], path: str, consumer: Mapping[str, Any]) -> tuple[Any, str]:
    if "frame" in table:
        frame_bits = _call(path, derived.uart_frame_bits, table["frame"])
        described = f"{table['frame']} frame"
    else:
        frame_bits = _whole(_require(table, "frame_bits", path), f"{path}.frame_bits")
        described = f"{frame_bits}-bit frame"
    oversampling = _whole(table.get("oversampling", 16), f"{path}.oversampling")
    ticks = table.get("sample_ticks")
    if ticks is not None:
        if not isinstance(ticks, list) or len(ticks) != 2:
            raise BoardError(f"{ticks!r} is not a pair", key=f"{path}.sample_ticks", hint="e.g. [7, 9]")
        ticks = (_whole(ticks[0], f"{path}.sample_ticks[0]"), _whole(ticks[1], f"{path}.sample_ticks[1]"))
    tolerance = _call(path, derived.uart_tolerance, frame_bits, oversampling, sample_ticks=ticks)
    note = f"UART {described}, {oversampling}x oversampling: each end may err by ±{_percent(tolerance)[1:]}"
    if "baud" not in table:
        return _symmetric(tolerance), note + "; the divider's baud error counts against it."
    baud = _call(f"{path}.baud", parse_number, table["baud"])
    clock = _call(f"{path.rsplit('.', 1)[0]}.frequency", parse_frequency, _require(consumer, "frequency", path))
    if "divider" in table:
        divider = _call(f"{path}.divider", parse_number, table["divider"])
    else:
        divider = derived.uart_best_divider(clock, oversampling, baud)
    baud_error = _call(path, derived.uart_baud_error, clock, divider, oversampling, baud)
    if abs(baud_error) >= tolerance:
        raise InfeasibleError(
            f"divider {divider} makes {baud} baud off by {_percent(baud_error)}, "
            f"beyond the ±{_percent(tolerance)[1:]} each end may have",
            key=f"{path}.baud",
            hint="choose a clock that divides to the baud rate (or a fractional divider)",
        )
    # The clock's own error compounds with the divider's: (1 + e_clock)(1 + e_divider) must stay in 1 ± tolerance.
    ppm = ((1 - tolerance) / (1 + baud_error) - 1, (1 + tolerance) / (1 + baud_error) - 1)
    return ppm, note + f"; divider {divider} leaves {format_ppm(baud_error)} of baud error, taken out of the clock's range."


def _can(table: Mapping[str, Any], path: str, consumer: Mapping[str, Any]) -> tuple[Any, str]:
    names = ("prop_seg", "phase_seg1", "phase_seg2", "sjw")
    segments = [_whole(_require(table, n, path), f"{path}.{n}") for n in names]
    sync = _whole(table.get("sync_seg", 1), f"{path}.sync_seg")
    tolerance = _call(path, derived.can_oscillator_tolerance, *segments, sync_seg=sync)
    bit_time = sync + sum(segments[:3])
    note = (
        f"CAN bit timing of {bit_time} quanta (prop {segments[0]}, phase {segments[1]}/{segments[2]}, "
        f"sjw {segments[3]}): each node's oscillator may err by ±{_percent(tolerance)[1:]}."
    )
    return _symmetric(tolerance), note


def _duration(text: Any) -> Fraction:
    if isinstance(text, str) and text.strip() and text.strip()[0].isalpha():
        text = "1 " + text.strip()
    return Fraction(parse_duration(text))


def _rtc(table: Mapping[str, Any], path: str, consumer: Mapping[str, Any]) -> tuple[Any, str]:
    drift = _call(f"{path}.drift", lambda v: parse_quantity(v, "s"), _require(table, "drift", path))
    per = _call(f"{path}.per", _duration, table.get("per", "1 day"))
    tolerance = _call(path, derived.rtc_ppm_for_drift, drift, per)
    note = f"RTC target {table['drift']} per {table.get('per', '1 day')}: ±{format_ppm(tolerance)[1:]}."
    return _symmetric(tolerance), note


def _converter(table: Mapping[str, Any], path: str, consumer: Mapping[str, Any]) -> tuple[Any, str]:
    snr = _call(f"{path}.snr", _decibels, _require(table, "snr", path))
    f_in = _call(f"{path}.f_in", parse_frequency, _require(table, "f_in", path))
    jitter = derived.converter_jitter_for_snr(snr, float(f_in))
    note = (f"Converter SNR {snr:g} dB at {format_frequency(f_in)} input: jitter at most {format_time(jitter)} RMS "
            "(10^(-SNR/20) / (2 pi f_in), the SNR jitter alone would allow).")
    return jitter, note


def _decibels(value: Any) -> float:
    if isinstance(value, str):
        text = value.strip()
        for unit in ("dBFS", "dBc", "dB"):
            if text.endswith(unit):
                text = text[: -len(unit)]
                break
        return float(parse_number(text.strip()))
    return float(parse_number(value))


_DERIVERS = {"uart": _uart, "can": _can, "rtc": _rtc, "converter": _converter}


def _error_text(pair: tuple[Fraction, Fraction]) -> str:
    low, high = pair
    if low == -high:
        return "±" + format_ppm(high).lstrip("+")
    return f"{format_ppm(low)}..{format_ppm(high)}"


def _spread_text(pair: tuple[Fraction, Fraction] | None) -> str:
    return "no spread" if pair is None else _error_text(pair)


def _band_text(band: tuple[Fraction, Fraction]) -> str:
    return f"{format_frequency(band[0])}..{format_frequency(band[1])}"


def _loosened(base: StandardBudget, merged: StandardBudget) -> list[tuple[str, str]]:
    """Fields a board made looser than its standard, with the two figures: a product built to them may not comply."""
    looser = []
    if base.ppm and merged.ppm and (merged.ppm[0] < base.ppm[0] or merged.ppm[1] > base.ppm[1]):
        looser.append(("ppm", f"ppm {_error_text(merged.ppm)} (the standard: {_error_text(base.ppm)})"))
    if merged.spread and (base.spread is None or merged.spread[0] < base.spread[0] or merged.spread[1] > base.spread[1]):
        looser.append(("spread", f"spread {_spread_text(merged.spread)} (the standard: {_spread_text(base.spread)})"))
    for name, board_name, kind in (("jitter_rms_s", "jitter", "RMS"), ("jitter_pp_s", "jitter_pp", "peak-to-peak")):
        limit, mine = getattr(base, name), getattr(merged, name)
        if limit is not None and (mine is None or mine > limit):
            shown = "none" if mine is None else format_time(mine)
            looser.append((board_name, f"{board_name} {shown} {kind} (the standard: {format_time(limit)})"))
    band, mine = base.jitter_band_hz, merged.jitter_band_hz
    if band and mine and (mine[0] > band[0] or mine[1] < band[1]):
        looser.append(("jitter_band", f"jitter_band {_band_text(mine)} (the standard: {_band_text(band)}, a narrower "
                                      "band counts less noise)"))
    return looser


def _inline_base(key: str) -> StandardBudget:
    return StandardBudget(
        key="inline",
        title=f"budget written in the board ({key})",
        family="Board",
        nominal_hz=(),
        ppm=None,
        source=f"board file, {key}",
        confidence=_BOARD_TEXT,
    )


def resolve_budget(standard_key: str | None, overrides: Mapping[str, Any], key: str) -> StandardBudget | None:
    """Merge a consumer's inline budget fields over its standard's figures.

    Parameters
    ----------
    standard_key
        What the consumer wrote as ``standard`` (any alias), or ``None``.
    overrides
        The consumer's table; only :data:`BUDGET_FIELDS` are read:
        ``ppm``, ``spread`` (text or ``false``), ``spread_rate``, ``jitter`` (RMS),
        ``jitter_pp``, ``jitter_band``, and the derived tables ``uart``, ``can``,
        ``rtc``, ``converter``. A UART with ``baud`` also reads the consumer's
        ``frequency``.
    key
        Key path of the consumer, e.g. ``"consumer[3]"``, for error messages.

    Returns
    -------
    StandardBudget or None
        ``None`` when the consumer has neither a standard nor budget fields.

    Raises
    ------
    BoardError
        Unknown standard (with the closest keys), unreadable value, or a figure
        given twice (e.g. both ``ppm`` and ``uart``); the key path names the field.
    InfeasibleError
        A UART divider whose baud error alone exceeds the frame's tolerance.

    Examples
    --------
    >>> b = resolve_budget("PCIe Gen4", {"ppm": "±100 ppm"}, "consumer[0]")
    >>> b.key, b.overridden, float(b.ppm[1]) * 1e6
    ('pcie-gen4', ('ppm',), 100.0)
    >>> resolve_budget(None, {"can": {"prop_seg": 1, "phase_seg1": 4, "phase_seg2": 4, "sjw": 4}}, "c").ppm[1]
    Fraction(1, 63)
    """
    if not isinstance(overrides, Mapping):
        raise BoardError(f"consumer must be a table, not {type(overrides).__name__}", key=key)
    base = get_standard(standard_key, key=f"{key}.standard") if standard_key is not None else None
    fields: dict[str, Any] = {}
    given: dict[str, str] = {}
    notes: list[str] = []
    for name in _FIGURE_FIELDS:
        if name in overrides:
            field, value = _figure(name, overrides[name], f"{key}.{name}")
            fields[field] = value
            given[name] = name
    for kind in DERIVED_FIELDS:
        if kind not in overrides:
            continue
        path = f"{key}.{kind}"
        target = _DERIVED_TARGET[kind]
        if target in given:
            raise BoardError(
                f"{kind} derives {target}, which is also given by {given[target]}",
                key=path,
                hint=f"keep either {kind} or {given[target]}",
            )
        value, note = _DERIVERS[kind](_check_table(kind, overrides[kind], path), path, overrides)
        fields["ppm" if target == "ppm" else "jitter_rms_s"] = value
        if kind == "converter":
            fields["sampling_clock"] = True
            if "jitter_band" in overrides[kind]:
                fields["jitter_band_hz"] = _pair(f"{path}.jitter_band", parse_frequency, overrides[kind]["jitter_band"])
            elif "jitter_band" not in overrides and base is not None and base.jitter_band_hz is not None:
                # The standard's band belongs to its own limit, not to the converter's SNR:
                # the jitter stage derives the converter's band from its sample rate.
                fields["jitter_band_hz"] = None
        given[target] = kind
        notes.append(note)
    if base is None and not fields:
        return None
    start = base or _inline_base(key)
    band_given = fields.get("jitter_band_hz") is not None
    changed = tuple(sorted(set(given.values()) | ({"jitter_band"} if band_given else set())))
    merged = dataclasses.replace(start, **fields, overridden=changed if base else ())
    if base is not None and changed:
        looser = _loosened(base, merged)
        if looser:
            notes.append(
                f"The board loosens {', '.join(name for name, _ in looser)} beyond {base.key}: "
                "a product built to it may not comply."
            )
            merged = dataclasses.replace(merged, loosened=tuple(text for _, text in looser))
        merged = dataclasses.replace(merged, source=f"{base.source}; board overrides {', '.join(changed)} at {key}")
    if notes:
        merged = dataclasses.replace(merged, notes=" ".join(filter(None, [merged.notes, *notes])))
    return merged
