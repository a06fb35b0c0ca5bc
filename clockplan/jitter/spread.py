"""The time deviation of a spread-spectrum clock: closed forms for a triangular profile, and its harmonics.

A spread sweeps the clock's fractional frequency ``y(t)`` in a triangle of
peak-to-peak depth ``d`` (the spread's depth, whatever its mode) at the
modulation rate ``f_m``. Around the mean frequency (the mean shift of a down-
or up-spread is a frequency error, counted by the ppm budget, not jitter) the
clock's time deviation ``x(t) = integral of y dt`` is a chain of parabolic arcs
(docs/jitter.md, "Spread spectrum in the jitter budget", derives it):

- peak ``x_peak = d / (16 f_m)`` (peak-to-peak ``d / (8 f_m)``);
- RMS ``x_rms = x_peak * sqrt(8/15) = d / (f_m sqrt(480))``;
- odd harmonics only, ``n = 1, 3, 5...`` at ``n f_m``, with peak amplitude
  ``2 d / (pi**3 n**3 f_m)`` (the triangle's ``1/n**2`` Fourier series of the
  frequency, integrated: ``1/n**3`` in time).

A 0.5 % spread at 31.5 kHz has ``x_rms`` of 7.25 ns: nanoseconds, where clock
jitter budgets are picoseconds. Time deviation is the same at every clock the
spread reaches (a divider or a multiplier scales phase and frequency alike); a
PLL downstream filters it by its closed-loop response at each harmonic.

The profile is assumed triangular. A profile that dwells near its extremes
has more time deviation for the same depth, at most the square-wave bound
``d / (8 sqrt(3) f_m)`` RMS, 1.58 times the triangle's.
"""

from __future__ import annotations

import math

import numpy as np

from clockplan.errors import ClockplanError

__all__ = [
    "MAX_HARMONIC",
    "SQUARE_WAVE_FACTOR",
    "triangle_peak_time_deviation",
    "triangle_rms_time_deviation",
    "triangle_harmonics",
    "spread_tones",
]

#: Highest harmonic kept as its own line; the tail beyond it (under 1e-17 of the
#: variance) is added to the last line kept, so no variance is dropped.
MAX_HARMONIC = 4001

#: How much more RMS time deviation the worst profile of the same depth and rate has (a square
#: wave of frequency: RMS d / (8 sqrt(3) f_m)) than the triangle: sqrt(480) / (8 sqrt(3)).
SQUARE_WAVE_FACTOR = math.sqrt(480.0) / (8.0 * math.sqrt(3.0))


def _check(depth: float, rate_hz: float) -> tuple[float, float]:
    d, fm = float(depth), float(rate_hz)
    if not (math.isfinite(d) and 0.0 <= d < 1.0):
        raise ClockplanError(f"spread depth {depth!r} is out of range", key="depth", hint="give a fraction such as 0.005 for 0.5 %")
    if not (math.isfinite(fm) and fm > 0.0):
        raise ClockplanError(f"modulation rate {rate_hz!r} must be a positive frequency", key="rate", hint="e.g. 31.5e3")
    return d, fm


def triangle_peak_time_deviation(depth: float, rate_hz: float) -> float:
    """Peak time deviation (seconds, from the mean) of a triangular spread: ``d / (16 f_m)``.

    Examples
    --------
    >>> round(triangle_peak_time_deviation(0.005, 31.5e3) * 1e9, 3)
    9.921
    """
    d, fm = _check(depth, rate_hz)
    return d / (16.0 * fm)


def triangle_rms_time_deviation(depth: float, rate_hz: float) -> float:
    """RMS time deviation (seconds) of a triangular spread over all frequencies: ``d / (f_m sqrt(480))``.

    Examples
    --------
    >>> round(triangle_rms_time_deviation(0.005, 31.5e3) * 1e9, 3)
    7.245
    """
    d, fm = _check(depth, rate_hz)
    return d / (fm * math.sqrt(480.0))


def triangle_harmonics(depth: float, rate_hz: float, max_offset_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """The odd harmonics of a triangular spread up to ``max_offset_hz``: offsets and RMS time deviation of each.

    Harmonic ``n`` (odd) sits at ``n f_m`` with RMS ``sqrt(2) d / (pi**3 n**3 f_m)``.
    At most :data:`MAX_HARMONIC`; the variance of every harmonic beyond the last
    kept (up to ``max_offset_hz`` or not) is added to the last kept, so the lines
    always carry the whole variance ``x_rms**2`` when the fundamental is kept.
    Empty when the fundamental is above ``max_offset_hz``.

    Examples
    --------
    >>> offsets, rms = triangle_harmonics(0.005, 31.5e3, 100e3)
    >>> offsets.tolist()
    [31500.0, 94500.0]
    >>> bool(abs(float(np.sum(rms**2)) - triangle_rms_time_deviation(0.005, 31.5e3) ** 2) < 1e-30)
    True
    """
    d, fm = _check(depth, rate_hz)
    top = min(MAX_HARMONIC, int(math.floor(float(max_offset_hz) / fm)) if math.isfinite(float(max_offset_hz)) else MAX_HARMONIC)
    n = np.arange(1, top + 1, 2, dtype=float)
    if n.size == 0:
        return np.empty(0), np.empty(0)
    variance = 2.0 * (d / (math.pi**3 * fm)) ** 2 / n**6
    # The whole variance is (d / f_m)**2 / 480; what the lines kept miss goes on the last one.
    total = (d / fm) ** 2 / 480.0
    variance[-1] += max(0.0, total - float(np.sum(variance)))
    return n * fm, np.sqrt(variance)


def spread_tones(depth: float, rate_hz: float, carrier_hz: float, max_offset_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """A triangular spread's harmonics as phase-modulation lines on a clock at ``carrier_hz``.

    Returns offsets and the single-sideband line power (ratio) that a noise
    chain integrates as ``sigma_phi**2 = 2 * power``: a line of RMS time
    deviation ``x`` has ``power = 2 (pi f0 x)**2``. The small-angle reading of
    the power as dBc does not hold for a spread (its phase deviation is
    radians); the bookkeeping of phase variance does, which is all jitter needs.

    Examples
    --------
    >>> offsets, power = spread_tones(0.005, 31.5e3, 100e6, 40e3)
    >>> seconds = math.sqrt(2 * power[0]) / (2 * math.pi * 100e6)
    >>> round(seconds * 1e9, 3)
    7.245
    """
    offsets, rms = triangle_harmonics(depth, rate_hz, max_offset_hz)
    return offsets, 2.0 * (math.pi * float(carrier_hz) * rms) ** 2
