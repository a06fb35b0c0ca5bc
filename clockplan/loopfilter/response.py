"""Open- and closed-loop responses of a PLL with a passive loop filter.

Polynomial convention (shared with the jitter model): every transfer function
is a pair ``(num, den)`` of real numpy coefficient arrays in the Laplace
variable ``s`` **in rad/s**, highest power first -- the convention of
``numpy.polyval`` and ``scipy.signal.freqs``.  Evaluate at ``s = 2j*pi*f``.

- open loop ``G(s) = Icp*Kvco*Z(s) / (N*s)`` (:func:`open_loop_polynomials`);
- closed loop ``H(s) = G / (1 + G)``, normalised to ``H(0) = 1``
  (:func:`closed_loop_polynomials`).  It carries reference (and PFD,
  charge-pump, divider) phase noise to the output *after* the factor ``N``:
  output phase = ``N * H(s) * reference phase``;
- error ``E(s) = 1 / (1 + G) = 1 - H(s)`` (:func:`error_polynomials`): the
  high-pass that carries VCO phase noise to the output.

Phase margin and crossover are measured on the polynomials themselves
(:func:`loop_margins`), so a snapped or hand-entered filter is judged by what
it really does, not by the targets it was designed for.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from clockplan.errors import ClockplanError
from clockplan.loopfilter._numeric import geometric_bisection
from clockplan.loopfilter.design import FilterDesign, LoopSpec

__all__ = [
    "LoopMargins",
    "open_loop_polynomials",
    "closed_loop_polynomials",
    "error_polynomials",
    "frequency_response",
    "loop_margins",
    "closed_loop_peaking_db",
    "closed_loop_bandwidth_hz",
    "frequency_error_step",
    "lock_time",
]


def _trim(coefficients: list[float]) -> np.ndarray:
    array = np.asarray(coefficients, dtype=float)
    nonzero = np.flatnonzero(array)
    return array[nonzero[0] :] if nonzero.size else array[-1:]


def open_loop_polynomials(design: FilterDesign, spec: LoopSpec) -> tuple[np.ndarray, np.ndarray]:
    """Return ``(num, den)`` of the open-loop gain ``G(s)`` (s in rad/s).

    ``G(s) = K*(Tz*s + 1) / (A2*s**4 + A1*s**3 + A0*s**2)`` with
    ``K = Icp*Kvco/N``.

    Examples
    --------
    >>> num, den = open_loop_polynomials(FilterDesign(2, 1e3, 1e-8, 1e-9), LoopSpec(1e-3, 1e7, 10, 1e7))
    >>> len(num), len(den)
    (2, 4)
    """
    a0, a1, a2, tz = design.coefficients()
    k = spec.loop_constant
    return _trim([k * tz, k]), _trim([a2, a1, a0, 0.0, 0.0])


def _normalised_parts(design: FilterDesign, spec: LoopSpec) -> tuple[np.ndarray, np.ndarray]:
    """Return ``(n, d)`` with ``G = n / d`` scaled so ``n(0) = 1``."""
    a0, a1, a2, tz = design.coefficients()
    k = spec.loop_constant
    return _trim([tz, 1.0]), _trim([a2 / k, a1 / k, a0 / k, 0.0, 0.0])


def closed_loop_polynomials(design: FilterDesign, spec: LoopSpec) -> tuple[np.ndarray, np.ndarray]:
    """Return ``(num, den)`` of ``H(s) = G/(1+G)``, the low-pass with ``H(0) = 1``.

    Output phase noise from the reference is ``|N * H(j*2*pi*f)|**2`` times
    the reference's.

    Examples
    --------
    >>> num, den = closed_loop_polynomials(FilterDesign(2, 1e3, 1e-8, 1e-9), LoopSpec(1e-3, 1e7, 10, 1e7))
    >>> float(num[-1] / den[-1])
    1.0
    """
    n, d = _normalised_parts(design, spec)
    return n, np.polyadd(d, n)


def error_polynomials(design: FilterDesign, spec: LoopSpec) -> tuple[np.ndarray, np.ndarray]:
    """Return ``(num, den)`` of ``E(s) = 1/(1+G) = 1 - H(s)``, the high-pass for VCO noise.

    Examples
    --------
    >>> num, den = error_polynomials(FilterDesign(2, 1e3, 1e-8, 1e-9), LoopSpec(1e-3, 1e7, 10, 1e7))
    >>> float(num[-1])
    0.0
    """
    n, d = _normalised_parts(design, spec)
    return d, np.polyadd(d, n)


def frequency_response(num: np.ndarray, den: np.ndarray, frequencies_hz) -> np.ndarray:
    """Evaluate ``num(s)/den(s)`` at ``s = 2j*pi*f`` for each frequency in Hz.

    Examples
    --------
    >>> complex(frequency_response([1.0], [1.0, 1.0], [0.0])[0])
    (1+0j)
    """
    s = 2j * np.pi * np.asarray(frequencies_hz, dtype=float)
    return np.polyval(num, s) / np.polyval(den, s)


@dataclass(frozen=True)
class LoopMargins:
    """Where the open-loop gain crosses 0 dB and the phase margin there."""

    crossover_hz: float
    phase_margin_deg: float


def _open_loop_magnitude(design: FilterDesign, spec: LoopSpec):
    num, den = open_loop_polynomials(design, spec)

    def magnitude(f_hz: float) -> float:
        return float(abs(frequency_response(num, den, [f_hz])[0]))

    return num, den, magnitude


def loop_margins(design: FilterDesign, spec: LoopSpec) -> LoopMargins:
    """Measure the 0 dB crossover and the phase margin of the open-loop gain.

    ``|G(j*w)|`` of a type-2 loop with a passive RC filter falls at least
    20 dB/decade everywhere (the RC poles are real), so the crossover is
    unique and bisection finds it.

    Examples
    --------
    >>> from clockplan.loopfilter.design import design_filter
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> margins = loop_margins(design_filter(spec, 100e3, 55), spec)
    >>> round(margins.crossover_hz), round(margins.phase_margin_deg, 6)
    (100000, 55.0)
    """
    num, den, magnitude = _open_loop_magnitude(design, spec)
    a0 = design.coefficients()[0]
    guess = math.sqrt(spec.loop_constant / a0) / (2 * math.pi)  # crossover without zero and poles
    low, high = guess, guess
    while magnitude(low) <= 1:
        low /= 10
    while magnitude(high) >= 1:
        high *= 10
    crossover = geometric_bisection(lambda f: magnitude(f) > 1, low, high)
    gain = frequency_response(num, den, [crossover])[0]
    # -G = G * e^{j*pi}: its angle is the phase margin.
    return LoopMargins(crossover_hz=crossover, phase_margin_deg=math.degrees(float(np.angle(-gain))))


def _closed_loop_grid(design: FilterDesign, spec: LoopSpec, points: int = 4001) -> tuple[np.ndarray, np.ndarray]:
    crossover = loop_margins(design, spec).crossover_hz
    frequencies = np.geomspace(crossover / 1e3, crossover * 1e3, points)
    num, den = closed_loop_polynomials(design, spec)
    return frequencies, np.abs(frequency_response(num, den, frequencies))


def closed_loop_peaking_db(design: FilterDesign, spec: LoopSpec) -> float:
    """Return the peak of ``|H(j*w)|`` in dB (0 when there is no peaking).

    Measured on a dense logarithmic grid (4001 points over six decades around
    the crossover), so it is exact to a small fraction of a dB.

    Examples
    --------
    >>> from clockplan.loopfilter.design import design_filter
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> 0 < closed_loop_peaking_db(design_filter(spec, 100e3, 55), spec) < 3
    True
    """
    _, magnitude = _closed_loop_grid(design, spec)
    return max(0.0, 20 * math.log10(float(magnitude.max())))


def closed_loop_bandwidth_hz(design: FilterDesign, spec: LoopSpec) -> float:
    """Return the -3 dB frequency of the closed loop ``H`` (above any peaking).

    Examples
    --------
    >>> from clockplan.loopfilter.design import design_filter
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> 100e3 < closed_loop_bandwidth_hz(design_filter(spec, 100e3, 55), spec) < 300e3
    True
    """
    frequencies, magnitude = _closed_loop_grid(design, spec)
    num, den = closed_loop_polynomials(design, spec)
    half_power = 1 / math.sqrt(2)
    above = np.flatnonzero(magnitude >= half_power)
    last = int(above[-1])
    return geometric_bisection(
        lambda f: abs(frequency_response(num, den, [f])[0]) >= half_power,
        float(frequencies[last]),
        float(frequencies[last + 1]),
    )


def _scaled_roots(polynomial: np.ndarray, scale: float) -> np.ndarray:
    """Roots of ``p(s)`` computed as ``scale * roots of p(scale * x)`` (better conditioned)."""
    degree = len(polynomial) - 1
    scaled = polynomial * scale ** np.arange(degree, -1, -1)
    return np.roots(scaled / scaled[0]) * scale


def frequency_error_step(design: FilterDesign, spec: LoopSpec):
    """Return ``e(t)``: the output frequency error after a unit frequency step.

    A step of the target frequency by ``df`` leaves an error ``df * e(t)``
    with ``e(t)`` the step response of ``E(s) = 1 - H(s)`` (the same function
    carries phase and frequency, being linear). Computed from the poles and
    residues of ``E(s)/s``, which are simple for any realistic filter.

    Examples
    --------
    >>> from clockplan.loopfilter.design import design_filter
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> error = frequency_error_step(design_filter(spec, 100e3, 55), spec)
    >>> round(float(error(0.0)), 9), abs(float(error(1e-3))) < 1e-9
    (1.0, True)
    """
    num, den = error_polynomials(design, spec)
    scale = 2 * math.pi * loop_margins(design, spec).crossover_hz
    poles = _scaled_roots(den, scale)
    # E(s)/s: the numerator has the factor s**2, so dividing by s leaves num/s.
    reduced = num[:-1]
    derivative = np.polyder(den)
    residues = np.polyval(reduced, poles) / np.polyval(derivative, poles)

    def error(t):
        times = np.asarray(t, dtype=float)
        terms = residues[:, None] * np.exp(np.outer(poles, times.ravel()))
        return np.real(terms.sum(axis=0)).reshape(times.shape)

    error.poles = poles  # type: ignore[attr-defined]
    error.residues = residues  # type: ignore[attr-defined]
    return error


def lock_time(design: FilterDesign, spec: LoopSpec, *, frequency_step_hz: float, tolerance_hz: float) -> float:
    """Estimate the time for the output to settle within ``tolerance_hz`` after a jump of ``frequency_step_hz``.

    Formula: the last time ``|frequency_step_hz * e(t)| > tolerance_hz`` with
    ``e(t)`` from :func:`frequency_error_step`.  Assumptions: the loop stays
    linear (no cycle slips, no charge-pump or tuning-voltage saturation),
    the loop gain is the same at both frequencies, and no VCO band
    calibration or fast-lock mode is involved.  Real lock times are longer;
    this is a planning estimate.

    Examples
    --------
    >>> from clockplan.loopfilter.design import design_filter
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> t = lock_time(design_filter(spec, 100e3, 55), spec, frequency_step_hz=10e6, tolerance_hz=1e3)
    >>> 5e-6 < t < 100e-6
    True
    """
    step = abs(float(frequency_step_hz))
    tolerance = float(tolerance_hz)
    if not (math.isfinite(step) and math.isfinite(tolerance) and tolerance > 0):
        raise ClockplanError(
            f"cannot estimate lock time for a step of {frequency_step_hz} Hz within {tolerance_hz} Hz",
            hint="give a finite frequency step and a tolerance above 0 Hz",
        )
    if step <= tolerance:
        return 0.0
    error = frequency_error_step(design, spec)
    slowest = float(np.min(-error.poles.real))
    if slowest <= 0:
        raise ClockplanError("the loop is unstable: it never locks", hint="raise the phase margin")
    # Beyond this time the envelope sum(|residue|) * exp(-slowest*t) bounds the error.
    envelope = float(np.sum(np.abs(error.residues)))
    horizon = max(math.log(envelope * step / tolerance), 1.0) / slowest
    times = np.linspace(0.0, horizon, 20001)
    outside = np.flatnonzero(np.abs(step * error(times)) > tolerance)
    last = int(outside[-1])
    if last == len(times) - 1:  # pragma: no cover - the envelope bound forbids it
        return horizon
    low, high = float(times[last]), float(times[last + 1])
    for _ in range(60):
        middle = 0.5 * (low + high)
        if abs(step * float(error(middle))) > tolerance:
            low = middle
        else:
            high = middle
    return high
