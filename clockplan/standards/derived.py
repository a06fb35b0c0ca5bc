"""Clock budgets derived from the design instead of looked up in a table.

* UART: how far the two ends' baud rates may differ, from the frame length and
  the receiver's oversampling, and the exact baud error a divider leaves.
* CAN: the oscillator tolerance a bit timing allows (the two conditions of
  F. Hartwich and A. Bassemir, "The Configuration of the CAN Bit Timing",
  6th International CAN Conference, 1999; segments of ISO 11898-1).
* RTC: the frequency error allowed by a timekeeping target.
* Data converters: the RMS clock jitter allowed by a target SNR at an input
  frequency, and the SNR a jitter gives.

Frequencies, ratios and frequency errors are exact fractions; jitter and SNR
are floats. All results are planning estimates: the part datasheet and the
governing standard decide.
"""

from __future__ import annotations

import math
import re
from fractions import Fraction

from clockplan.errors import ClockplanError

__all__ = [
    "SECONDS_PER_DAY",
    "uart_frame_bits",
    "uart_receiver_window",
    "uart_tolerance",
    "uart_baud_error",
    "uart_best_divider",
    "can_tolerance_conditions",
    "can_oscillator_tolerance",
    "rtc_ppm_for_drift",
    "rtc_drift_for_ppm",
    "converter_jitter_for_snr",
    "snr_for_jitter",
    "ideal_adc_snr_db",
]

SECONDS_PER_DAY = 86400

_FRAME_RE = re.compile(r"^\s*(?P<data>[5-9])\s*(?P<parity>[NEOMSneoms])\s*(?P<stop>1(?:\.5)?|2)\s*$")


def _positive_int(name: str, value: object) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        raise ClockplanError(f"{name} must be a whole number of at least 1, not {value!r}", key=name)
    return value


def _positive_fraction(name: str, value: object) -> Fraction:
    try:
        number = Fraction(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise ClockplanError(f"{name} must be a number, not {value!r}", key=name) from None
    if number <= 0:
        raise ClockplanError(f"{name} must be above zero, not {value!r}", key=name)
    return number


# --------------------------------------------------------------------------- UART


def uart_frame_bits(frame: str) -> int:
    """Bit times from the start edge to the end of the last stop bit of a frame like ``"8N1"``.

    Start bit + data bits + parity bit (none for ``N``) + stop bits. One and a
    half stop bits count as two, which is conservative.

    Examples
    --------
    >>> uart_frame_bits("8N1")
    10
    >>> uart_frame_bits("7E2")
    11
    """
    match = _FRAME_RE.match(frame) if isinstance(frame, str) else None
    if match is None:
        raise ClockplanError(
            f"UART frame {frame!r} is not of the form data-parity-stop",
            key="frame",
            hint="write e.g. '8N1', '7E1', '8O2' (data bits 5-9, parity N/E/O/M/S, stop 1, 1.5 or 2)",
        )
    parity = 0 if match["parity"].upper() == "N" else 1
    stop = math.ceil(float(match["stop"]))
    return 1 + int(match["data"]) + parity + stop


def _sample_window(oversampling: int, sample_ticks: tuple[int, int] | None) -> tuple[Fraction, Fraction]:
    if sample_ticks is None:
        # Mid-bit sampling after an edge detected up to one oversampling tick late.
        return Fraction(oversampling // 2, oversampling), Fraction(oversampling // 2 + 1, oversampling)
    early, late = sample_ticks
    if not 0 < early <= late < oversampling:
        raise ClockplanError(
            f"sample_ticks [{early}, {late}] must satisfy 0 < early <= late < oversampling ({oversampling})",
            key="sample_ticks",
        )
    return Fraction(early, oversampling), Fraction(late, oversampling)


def uart_receiver_window(
    frame_bits: int, oversampling: int = 16, *, sample_ticks: tuple[int, int] | None = None
) -> tuple[Fraction, Fraction]:
    """Slowest and fastest incoming baud rate a receiver accepts, as ratios to its own, exactly.

    Model: the receiver starts counting at the first oversampling tick after the
    start bit's falling edge, then samples each bit at a fixed tick of its own
    bit time. The earliest and latest sample points within a bit, in ticks, are
    ``sample_ticks``; by default mid-bit, ``(oversampling/2, oversampling/2 + 1)``,
    the extra tick being the edge-detection delay. A majority vote over three
    ticks widens the window by a tick on each side. Timing error accumulates
    over the frame, so the last sampled bit (the last stop bit, at bit index
    ``frame_bits - 1``) is the critical one: its sample must fall inside it::

        slowest = (N - 1) / (N - 1 + early)        fastest = N / (N - 1 + late)

    with ``N = frame_bits`` and ``early``, ``late`` as fractions of a bit.

    Parameters
    ----------
    frame_bits
        Bit times from the start edge to the end of the last sampled stop bit
        (``10`` for 8N1; see :func:`uart_frame_bits`).
    oversampling
        Receiver clock ticks per bit (16 for most UARTs, 8 for double-speed modes).
    sample_ticks
        ``(earliest, latest)`` sample tick within a bit, counted from the
        detected start edge.

    Examples
    --------
    >>> uart_receiver_window(10, 16)
    (Fraction(18, 19), Fraction(160, 153))
    """
    frames = _positive_int("frame_bits", frame_bits)
    if frames < 2:
        raise ClockplanError("frame_bits must be at least 2 (a start and a stop bit)", key="frame_bits")
    ticks = _positive_int("oversampling", oversampling)
    if ticks < 2:
        raise ClockplanError("oversampling must be at least 2", key="oversampling")
    early, late = _sample_window(ticks, sample_ticks)
    last = frames - 1
    return Fraction(last) / (last + early), Fraction(frames) / (last + late)


def uart_tolerance(
    frame_bits: int, oversampling: int = 16, *, sample_ticks: tuple[int, int] | None = None
) -> Fraction:
    """Frequency error each end of a UART link may have, exactly (a fraction, ± this value).

    Both ends are allowed the same error ``e`` in opposite directions, so the
    ratio of the rates reaches ``(1 + e) / (1 - e)``; ``e`` is the largest value
    keeping that ratio inside :func:`uart_receiver_window`. The divider's baud
    error (:func:`uart_baud_error`) counts against it.

    Examples
    --------
    >>> uart_tolerance(10, 16)   # 8N1, 16x oversampling, mid-bit sampling
    Fraction(7, 313)
    >>> round(float(uart_tolerance(10, 16)) * 100, 2)
    2.24
    """
    slowest, fastest = uart_receiver_window(frame_bits, oversampling, sample_ticks=sample_ticks)
    return min((fastest - 1) / (fastest + 1), (1 - slowest) / (1 + slowest))


def uart_baud_error(clock_hz: Fraction, divider: Fraction, oversampling: int, baud: Fraction) -> Fraction:
    """Exact fractional error of the baud rate ``clock / (divider * oversampling)``.

    Parameters
    ----------
    clock_hz
        The UART's kernel clock, exact Hz.
    divider
        Baud divider, whole or fractional (exact).
    oversampling
        Ticks per bit.
    baud
        Target baud rate.

    Examples
    --------
    >>> uart_baud_error(Fraction(16_000_000), 9, 16, 115200)   # a 16 MHz clock cannot make 115200 exactly
    Fraction(-23, 648)
    >>> uart_baud_error(Fraction(7_372_800), 4, 16, 115200)
    Fraction(0, 1)
    """
    clock = _positive_fraction("clock_hz", clock_hz)
    div = _positive_fraction("divider", divider)
    ticks = _positive_int("oversampling", oversampling)
    rate = _positive_fraction("baud", baud)
    return clock / (div * ticks) / rate - 1


def uart_best_divider(clock_hz: Fraction, oversampling: int, baud: Fraction, fraction_bits: int = 0) -> Fraction:
    """Divider nearest the ideal ``clock / (oversampling * baud)``, in steps of ``2**-fraction_bits``.

    Ties go to the larger divider (the slower, rounding-down rate). The result is at least one step.

    Examples
    --------
    >>> uart_best_divider(Fraction(16_000_000), 16, 115200)
    Fraction(9, 1)
    >>> uart_best_divider(Fraction(16_000_000), 16, 115200, fraction_bits=4)
    Fraction(139, 16)
    """
    clock = _positive_fraction("clock_hz", clock_hz)
    ticks = _positive_int("oversampling", oversampling)
    rate = _positive_fraction("baud", baud)
    if isinstance(fraction_bits, bool) or not isinstance(fraction_bits, int) or fraction_bits < 0:
        raise ClockplanError(f"fraction_bits must be a whole number >= 0, not {fraction_bits}", key="fraction_bits")
    steps = 2**fraction_bits
    ideal = clock / (ticks * rate) * steps
    nearest = math.floor(ideal + Fraction(1, 2))
    return Fraction(max(nearest, 1), steps)


# --------------------------------------------------------------------------- CAN


def can_tolerance_conditions(
    prop_seg: int, phase_seg1: int, phase_seg2: int, sjw: int, sync_seg: int = 1
) -> tuple[Fraction, Fraction]:
    """The two oscillator-tolerance bounds of a CAN bit timing, exactly.

    With the bit time ``T = sync_seg + prop_seg + phase_seg1 + phase_seg2`` in time quanta:

    1. resynchronisation across the worst gap between edges (10 bits of one
       polarity, stuff bits included, plus the error-flag case)::

           df <= min(phase_seg1, phase_seg2) / (2 * (13 * T - phase_seg2))

    2. the jump width must absorb the phase error accumulated over 10 bits::

           df <= sjw / (20 * T)

    ``df`` is the tolerance of each node's oscillator around nominal.

    Examples
    --------
    >>> can_tolerance_conditions(1, 4, 4, 4)
    (Fraction(1, 63), Fraction(1, 50))
    """
    prop = _positive_int("prop_seg", prop_seg)
    ps1 = _positive_int("phase_seg1", phase_seg1)
    ps2 = _positive_int("phase_seg2", phase_seg2)
    jump = _positive_int("sjw", sjw)
    sync = _positive_int("sync_seg", sync_seg)
    if jump > min(ps1, ps2):
        raise ClockplanError(
            f"sjw ({jump}) is longer than a phase segment (phase_seg1 {ps1}, phase_seg2 {ps2})",
            key="sjw",
            hint="the synchronisation jump width may not exceed min(phase_seg1, phase_seg2)",
        )
    bit_time = sync + prop + ps1 + ps2
    first = Fraction(min(ps1, ps2), 2 * (13 * bit_time - ps2))
    second = Fraction(jump, 20 * bit_time)
    return first, second


def can_oscillator_tolerance(prop_seg: int, phase_seg1: int, phase_seg2: int, sjw: int, sync_seg: int = 1) -> Fraction:
    """Largest oscillator tolerance (±, as a fraction) a classic CAN bit timing allows, exactly.

    The smaller of the two conditions of :func:`can_tolerance_conditions`.

    Examples
    --------
    >>> can_oscillator_tolerance(1, 4, 4, 4)   # 1.58 %, the largest possible
    Fraction(1, 63)
    """
    return min(can_tolerance_conditions(prop_seg, phase_seg1, phase_seg2, sjw, sync_seg))


# --------------------------------------------------------------------------- RTC


def rtc_ppm_for_drift(drift_s: Fraction, per_s: Fraction) -> Fraction:
    """Frequency error (a fraction) that gains or loses ``drift_s`` seconds every ``per_s`` seconds.

    Examples
    --------
    >>> rtc_ppm_for_drift(Fraction(864, 10000), SECONDS_PER_DAY)   # 86.4 ms a day is 1 ppm
    Fraction(1, 1000000)
    """
    drift = Fraction(drift_s)
    if drift < 0:
        raise ClockplanError(f"drift {drift_s} s must not be negative", key="drift")
    return drift / _positive_fraction("per", per_s)


def rtc_drift_for_ppm(fractional: Fraction, per_s: Fraction) -> Fraction:
    """Seconds gained or lost over ``per_s`` seconds at a frequency error (a fraction).

    Examples
    --------
    >>> rtc_drift_for_ppm(Fraction(1, 10**6), SECONDS_PER_DAY)
    Fraction(54, 625)
    """
    return abs(Fraction(fractional)) * _positive_fraction("per", per_s)


# --------------------------------------------------------------------------- data converters


def snr_for_jitter(jitter_rms_s: float, f_in_hz: float) -> float:
    """SNR (dB) a full-scale sine at ``f_in_hz`` keeps when sampled with RMS clock jitter.

    ``SNR = -20 log10(2 pi f_in sigma)``: the sampling error of a full-scale sine
    is its slope times the timing error. Jitter only; quantization and thermal
    noise add on top.

    Examples
    --------
    >>> round(snr_for_jitter(1e-12, 100e6), 2)
    64.04
    """
    sigma = float(jitter_rms_s)
    frequency = float(f_in_hz)
    if sigma <= 0 or frequency <= 0:
        raise ClockplanError("jitter and input frequency must be above zero", key="converter")
    return -20.0 * math.log10(2.0 * math.pi * frequency * sigma)


def converter_jitter_for_snr(snr_db: float, f_in_hz: float) -> float:
    """Largest RMS clock jitter (seconds) that keeps a target SNR at an input frequency.

    The inverse of :func:`snr_for_jitter`: ``sigma = 10**(-SNR/20) / (2 pi f_in)``.

    Examples
    --------
    >>> round(converter_jitter_for_snr(74.0, 100e6) * 1e15)   # 74 dB at 100 MHz
    318
    """
    frequency = float(f_in_hz)
    if frequency <= 0:
        raise ClockplanError("input frequency must be above zero", key="converter.f_in")
    return 10.0 ** (-float(snr_db) / 20.0) / (2.0 * math.pi * frequency)


def ideal_adc_snr_db(bits: int) -> float:
    """SNR (dB) of an ideal ``bits``-bit converter for a full-scale sine: about 6.02 N + 1.76.

    Exactly ``20 log10(2**N * sqrt(3/2))``.

    Examples
    --------
    >>> round(ideal_adc_snr_db(12), 2)
    74.01
    """
    count = _positive_int("bits", bits)
    return 20.0 * (count * math.log10(2.0) + 0.5 * math.log10(1.5))
