"""Data-converter clocks: the signal-to-noise ratio that sampling-clock jitter allows.

Sampling a full-scale sine of frequency ``f_in`` at instants that wander by
``sigma_t`` RMS gives ``SNR = -20 log10(2 pi f_in sigma_t)`` (Kester's tutorial on
converter clock jitter); the clock's jitter and the converter's own aperture
jitter add in root-sum-square. The figure is an upper bound set by jitter alone:
quantisation and thermal noise lower it further.
"""

from __future__ import annotations

import math

from clockplan.errors import ClockplanError
from clockplan.jitter._checks import positive_number

__all__ = ["jitter_limited_snr_db", "max_jitter_for_snr", "total_jitter", "combine_snr_db"]


def _input_frequency(input_hz: float) -> float:
    return positive_number(input_hz, key="input_hz", what="input frequency", hint="give the analog input frequency in Hz")


def total_jitter(*jitters_s: float) -> float:
    """Root-sum-square of independent RMS jitters in seconds.

    Examples
    --------
    >>> round(total_jitter(300e-15, 400e-15) * 1e15, 6)
    500.0
    """
    seconds = [
        positive_number(j, key="jitter", what="jitter", hint="give RMS jitter in seconds, e.g. 150e-15", allow_zero=True)
        for j in jitters_s
    ]
    return math.sqrt(sum(s * s for s in seconds))


def jitter_limited_snr_db(input_hz: float, clock_jitter_s: float, aperture_jitter_s: float = 0.0) -> float:
    """Best SNR in dB for a full-scale sine at ``input_hz`` sampled with the given jitter.

    Parameters
    ----------
    input_hz
        Analog input frequency in Hz.
    clock_jitter_s
        RMS jitter of the sampling clock in seconds (over the band that matters to
        the converter).
    aperture_jitter_s
        The converter's own aperture jitter, added in root-sum-square.

    Examples
    --------
    >>> round(jitter_limited_snr_db(100e6, 1e-12), 2)
    64.04
    """
    f_in = _input_frequency(input_hz)
    sigma = total_jitter(clock_jitter_s, aperture_jitter_s)
    if sigma == 0:
        raise ClockplanError(
            "zero jitter gives no jitter limit on SNR",
            key="clock_jitter",
            hint="give the clock's RMS jitter in seconds",
        )
    return -20.0 * math.log10(2.0 * math.pi * f_in * sigma)


def max_jitter_for_snr(input_hz: float, snr_db: float, aperture_jitter_s: float = 0.0) -> float:
    """Largest clock RMS jitter in seconds that still allows ``snr_db`` at ``input_hz``.

    The inverse of :func:`jitter_limited_snr_db`; the converter's aperture jitter
    is taken out of the total in root-sum-square.

    Examples
    --------
    >>> round(max_jitter_for_snr(100e6, 64.04) * 1e12, 3)
    1.0
    """
    f_in = _input_frequency(input_hz)
    target = float(snr_db)
    if not math.isfinite(target):
        raise ClockplanError(f"SNR {snr_db!r} dB is not finite", key="snr_db", hint="give the SNR in dB, e.g. 70")
    allowed_total = 10.0 ** (-target / 20.0) / (2.0 * math.pi * f_in)
    aperture = total_jitter(aperture_jitter_s)
    if aperture >= allowed_total:
        raise ClockplanError(
            f"the converter's own aperture jitter ({aperture:.3g} s) already limits SNR below {target:g} dB",
            key="snr_db",
            hint="lower the SNR target or the input frequency, or choose a converter with less aperture jitter",
        )
    return math.sqrt(allowed_total**2 - aperture**2)


def combine_snr_db(*snr_db: float) -> float:
    """Total SNR in dB of independent noise sources each given as an SNR in dB.

    Examples
    --------
    >>> round(combine_snr_db(70.0, 70.0), 2)
    66.99
    """
    if not snr_db:
        raise ClockplanError("no SNR to combine", key="snr_db", hint="give at least one SNR in dB")
    return -10.0 * math.log10(sum(10.0 ** (-float(s) / 10.0) for s in snr_db))
