"""Exact integration of piecewise power-law phase noise, and RMS jitter from it.

Between two points ``(f1, p1)`` and ``(f2, p2)`` (linear density ``p = 10**(L/10)``)
the curve is the power law ``p1 * (f / f1)**b``. Its integral has the closed form

    p1 * f1 * ln(r) * (exp(x) - 1) / x,   r = f2 / f1,   x = ln(p2 * f2 / (p1 * f1)),

which is ``(p2 f2 - p1 f1) / (b + 1)`` in general and ``p1 f1 ln r`` in the
``b = -1`` (-10 dB/decade) case where ``x = 0``; writing it with ``expm1(x)/x`` keeps
both cases, and the ones near them, exact to rounding. Every segment is computed
at once with numpy.

The RMS phase over a band is ``sigma_phi = sqrt(2 * integral of L)`` (both
sidebands) and the RMS jitter ``sigma_t = sigma_phi / (2 pi f0)``.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

import numpy as np

from clockplan.errors import ClockplanError
from clockplan.jitter._checks import positive_number
from clockplan.jitter.profile import (
    Extrapolation,
    PhaseNoiseProfile,
    Spur,
    check_extrapolation,
    interpolate_log,
)
from clockplan.jitter.result import JitterResult

__all__ = [
    "check_band",
    "check_carrier",
    "integrate_log_curve",
    "integrated_power",
    "profile_jitter",
    "rms_jitter",
    "rms_phase",
    "segment_powers",
]

def check_band(f_low_hz: object, f_high_hz: object) -> tuple[float, float]:
    """Return the band as floats, or raise :class:`ClockplanError` if it is not ``0 < low < high``.

    Examples
    --------
    >>> check_band(12e3, 20e6)
    (12000.0, 20000000.0)
    """
    try:
        low, high = float(f_low_hz), float(f_high_hz)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise ClockplanError(
            f"integration band ({f_low_hz!r}, {f_high_hz!r}) is not numeric",
            key="band",
            hint="give the band limits in Hz, e.g. 12e3 and 20e6",
        ) from None
    if not (math.isfinite(low) and math.isfinite(high) and 0 < low < high):
        raise ClockplanError(
            f"integration band {low!r} Hz .. {high!r} Hz is not 0 < low < high",
            key="band",
            hint="the lower limit must be above 0 Hz and below the upper limit",
        )
    return low, high


def check_carrier(carrier_hz: object) -> float:
    """Return the carrier frequency as a float, or raise if it is not a positive finite number."""
    return positive_number(
        carrier_hz,
        key="carrier_hz",
        what="carrier frequency",
        hint="give the clock frequency the phase noise was measured at, in Hz",
    )


def _segment_sum(ln_f: np.ndarray, ln_p: np.ndarray) -> np.ndarray | float:
    """Sum of the exact power-law integrals over consecutive points (axis 0)."""
    return np.sum(segment_powers(ln_f, ln_p), axis=0)


def segment_powers(ln_f: np.ndarray, ln_p: np.ndarray) -> np.ndarray:
    """The exact power-law integral over each pair of consecutive points (axis 0), shape ``(n - 1, ...)``.

    Examples
    --------
    >>> segment_powers(np.log([1.0, 2.0, 4.0]), np.log([1.0, 1.0, 1.0])).round(12).tolist()  # flat: widths
    [1.0, 2.0]
    """
    ln_f_col = ln_f.reshape(ln_f.shape + (1,) * (ln_p.ndim - 1))
    ln_pf = ln_p + ln_f_col  # ln(p * f) at each point
    x = np.diff(ln_pf, axis=0)
    # expm1 keeps full relative precision for tiny x, so expm1(x)/x is exact to
    # rounding right up to the -10 dB/decade case; only x == 0 itself needs its limit.
    zero = x == 0
    ratio = np.expm1(x)
    with np.errstate(invalid="ignore"):
        np.divide(ratio, x, out=ratio)
    ratio[zero] = 1.0
    # The rest works in place: on 100,000 points fresh temporaries cost more than the maths.
    segment = np.exp(ln_pf[:-1], out=x)
    segment *= ratio
    segment *= np.subtract(ln_f_col[1:], ln_f_col[:-1], out=ratio)
    return segment


def integrate_log_curve(
    ln_f: np.ndarray,
    ln_p: np.ndarray,
    f_low_hz: float,
    f_high_hz: float,
    extrapolation: Extrapolation = "flat",
) -> np.ndarray | float:
    """Integrate the power-law curve through ``(ln f, ln p)`` points from ``f_low`` to ``f_high``.

    Parameters
    ----------
    ln_f
        Natural log of strictly increasing frequencies, shape ``(n,)``.
    ln_p
        Natural log of the linear density, shape ``(n,)`` or frequency-first ``(n, k)``
        for ``k`` curves on the same frequencies.
    f_low_hz, f_high_hz
        The band, ``0 < f_low < f_high``; it may extend past the points.
    extrapolation
        How to extend the curve past the points: ``"flat"``, ``"slope"`` or
        ``"conservative"`` (:mod:`clockplan.jitter.profile`).

    Returns
    -------
    The integral (linear power), a float or an array of ``k`` values.

    Examples
    --------
    >>> ln_f = np.log([1e3, 1e5]); ln_p = np.log([1e-10, 1e-14])  # -20 dB/decade
    >>> round(float(integrate_log_curve(ln_f, ln_p, 1e3, 1e5)) * 1e8, 12)  # 1e-10 * 1e3 * (1 - 1e-2)
    9.9
    """
    check_extrapolation(extrapolation)
    low, high = check_band(f_low_hz, f_high_hz)
    a, b = math.log(low), math.log(high)
    lo = int(np.searchsorted(ln_f, a, side="right"))
    hi = int(np.searchsorted(ln_f, b, side="left"))
    ends = interpolate_log(ln_f, ln_p, np.array([a, b]), extrapolation)
    if hi == lo:  # no listed point strictly inside the band: one segment
        return _segment_sum(np.array([a, b]), ends)
    # Points strictly inside the band, then the two partial segments at its edges;
    # summing them apart avoids copying the (possibly long) interior.
    inner = _segment_sum(ln_f[lo:hi], ln_p[lo:hi])
    left = _segment_sum(np.array([a, ln_f[lo]]), np.stack((ends[0], ln_p[lo])))
    right = _segment_sum(np.array([ln_f[hi - 1], b]), np.stack((ln_p[hi - 1], ends[1])))
    return inner + left + right


def _in_band_spur_power(spurs: Iterable[Spur], f_low: float, f_high: float) -> float:
    return sum(s.power for s in spurs if f_low <= s.offset_hz <= f_high)


def integrated_power(
    profile: PhaseNoiseProfile,
    f_low_hz: float,
    f_high_hz: float,
    *,
    extrapolation: Extrapolation = "flat",
) -> float:
    """Single-sideband integrated phase noise over the band, as a linear power ratio.

    The curve's exact integral, plus the additive floor times the bandwidth, plus
    every spur whose offset lies in ``[f_low, f_high]``. ``10*log10`` of it is the
    "integrated phase noise" in dBc.

    Examples
    --------
    >>> round(integrated_power(PhaseNoiseProfile.flat(-100), 1e3, 2e3) * 1e7, 12)  # 1e-10 * 1000 Hz
    1.0
    """
    low, high = check_band(f_low_hz, f_high_hz)
    curve = float(integrate_log_curve(profile.ln_offsets, profile.ln_density, low, high, extrapolation))
    floor = profile.floor_power * (high - low)
    return curve + floor + _in_band_spur_power(profile.spurs, low, high)


def _as_profile(
    points: PhaseNoiseProfile | Sequence[tuple[float, float]] | np.ndarray,
    floor_dbc_hz: float | None,
    spurs: Iterable[Spur | tuple[float, float]],
) -> PhaseNoiseProfile:
    if isinstance(points, PhaseNoiseProfile):
        if floor_dbc_hz is not None or tuple(spurs):
            raise ClockplanError(
                "floor and spurs were given twice",
                key="points",
                hint="put the floor and spurs in the PhaseNoiseProfile, or pass plain points",
            )
        return points
    return PhaseNoiseProfile.from_points(points, floor_dbc_hz=floor_dbc_hz, spurs=spurs)


def rms_phase(
    points: PhaseNoiseProfile | Sequence[tuple[float, float]] | np.ndarray,
    f_low_hz: float,
    f_high_hz: float,
    *,
    floor_dbc_hz: float | None = None,
    spurs: Iterable[Spur | tuple[float, float]] = (),
    extrapolation: Extrapolation = "flat",
) -> float:
    """RMS phase error in radians over the band: ``sqrt(2 * integral of L)``.

    Examples
    --------
    >>> round(rms_phase([(1.0, -100.0)], 1e4, 1e7), 6)  # flat: sqrt(2e-10 * (1e7 - 1e4))
    0.044699
    """
    profile = _as_profile(points, floor_dbc_hz, spurs)
    return math.sqrt(2.0 * integrated_power(profile, f_low_hz, f_high_hz, extrapolation=extrapolation))


def rms_jitter(
    points: PhaseNoiseProfile | Sequence[tuple[float, float]] | np.ndarray,
    carrier_hz: float,
    f_low_hz: float,
    f_high_hz: float,
    *,
    floor_dbc_hz: float | None = None,
    spurs: Iterable[Spur | tuple[float, float]] = (),
    extrapolation: Extrapolation = "flat",
) -> float:
    """RMS jitter in seconds of a phase-noise profile over a band.

    ``sigma_t = sqrt(2 * integral of 10**(L/10) df) / (2 pi f0)``, with L read as
    straight lines in dB against log frequency between the points and integrated
    exactly. This signature is stable for other tools.

    Parameters
    ----------
    points
        ``(offset_hz, dBc_per_hz)`` pairs with increasing offsets, an ``(n, 2)``
        array, or a :class:`PhaseNoiseProfile`.
    carrier_hz
        The carrier the phase noise is referred to, in Hz.
    f_low_hz, f_high_hz
        The integration band, offsets in Hz.
    floor_dbc_hz
        Optional additive white floor in dBc/Hz.
    spurs
        Optional ``(offset_hz, dBc)`` tones, counted when inside the band.
    extrapolation
        ``"flat"`` (default) holds the end values past the listed offsets;
        ``"slope"`` continues the end segments; ``"conservative"`` (what the
        board path reads) rises at least 20 dB/decade toward the carrier below
        the first offset and holds the last level, or keeps rising, beyond the
        last.

    Returns
    -------
    RMS jitter in seconds (a planning estimate: the datasheet decides).

    Examples
    --------
    >>> sigma = rms_jitter([(1e4, -100), (1e7, -100)], 100e6, 1e4, 1e7)
    >>> round(sigma * 1e12, 2)  # flat -100 dBc/Hz over 10 kHz..10 MHz at 100 MHz
    71.14
    """
    carrier = check_carrier(carrier_hz)
    phase = rms_phase(
        points, f_low_hz, f_high_hz, floor_dbc_hz=floor_dbc_hz, spurs=spurs, extrapolation=extrapolation
    )
    return phase / (2.0 * math.pi * carrier)


def profile_jitter(
    profile: PhaseNoiseProfile,
    carrier_hz: float,
    f_low_hz: float,
    f_high_hz: float,
    *,
    name: str = "source",
    budget_seconds: float | None = None,
    extrapolation: Extrapolation = "flat",
) -> JitterResult:
    """The full summary (phase, degrees, dBc, margin) for one profile over a band.

    Examples
    --------
    >>> r = profile_jitter(PhaseNoiseProfile.flat(-150), 156.25e6, 12e3, 20e6, budget_seconds=1e-12)
    >>> r.passes, round(r.rms_seconds * 1e15, 1)
    (True, 203.7)
    """
    carrier = check_carrier(carrier_hz)
    low, high = check_band(f_low_hz, f_high_hz)
    seconds = rms_jitter(profile, carrier, low, high, extrapolation=extrapolation)
    return JitterResult(carrier, low, high, seconds, ((name, seconds),), budget_seconds)
