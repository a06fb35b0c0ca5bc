"""Thermal noise of the loop-filter resistors at the PLL output.

Each resistor ``R`` carries a thermal noise voltage of one-sided density
``4*k*T*R`` V²/Hz (Johnson-Nyquist).  It reaches the VCO tuning input through
the filter network, charge pump open
(:func:`clockplan.loopfilter.closed_form.resistor_noise_transfer`, derived in
:func:`clockplan.loopfilter.symbolic.resistor_noise_transfer`); the VCO turns
tuning voltage into phase with ``2*pi*Kvco / s``, and the loop removes what
lies inside its bandwidth with the error function ``1 / (1 + G)``::

    S_phi(f) = 4*k*T*R * |T_R(j*w)|**2 * (Kvco / f)**2 * |E(j*w)|**2    [rad²/Hz, one-sided]

The single-sideband phase noise is ``L(f) = 10*log10(S_phi / 2)`` dBc/Hz
(small-angle approximation, as in IEEE Std 1139).  The noise is band-pass
shaped: suppressed far inside the loop, falling at 40 dB/decade or more far
outside it, largest around the loop bandwidth.
"""

from __future__ import annotations

import math

import numpy as np

from clockplan.errors import ClockplanError
from clockplan.loopfilter.closed_form import resistor_noise_transfer
from clockplan.loopfilter.design import FilterDesign, LoopSpec
from clockplan.loopfilter.response import error_polynomials, frequency_response

__all__ = [
    "BOLTZMANN",
    "resistor_phase_noise",
    "loop_filter_phase_noise",
    "loop_filter_phase_noise_dbc",
]

BOLTZMANN = 1.380649e-23  # J/K, exact since the 2019 SI redefinition
_ZERO_CELSIUS = 273.15


def _kelvin(temperature_c: float) -> float:
    kelvin = float(temperature_c) + _ZERO_CELSIUS
    if not (math.isfinite(kelvin) and kelvin > 0):
        raise ClockplanError(
            f"temperature {temperature_c} °C is below absolute zero",
            key="temperature",
            hint="give the filter temperature in °C, e.g. 25",
        )
    return kelvin


def _offsets(offsets_hz) -> np.ndarray:
    offsets = np.asarray(offsets_hz, dtype=float)
    if offsets.size == 0 or not np.all(np.isfinite(offsets)) or np.any(offsets <= 0):
        raise ClockplanError(
            "phase-noise offsets must be finite frequencies above 0 Hz",
            key="offsets",
            hint="give offsets such as 1e3, 1e4, 1e5 Hz",
        )
    return offsets


def resistor_phase_noise(
    design: FilterDesign, spec: LoopSpec, resistor: str, offsets_hz, *, temperature_c: float = 25.0
) -> np.ndarray:
    """Return the output phase-noise density ``S_phi(f)`` from one resistor, rad²/Hz one-sided.

    Parameters
    ----------
    design, spec
        The filter and its loop.
    resistor
        ``"r1"`` or ``"r3"`` (order 3 only).
    offsets_hz
        Offset frequencies from the carrier, Hz.
    temperature_c
        Resistor temperature in °C.

    Examples
    --------
    >>> from clockplan.loopfilter.design import design_filter
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> s_phi = resistor_phase_noise(design_filter(spec, 100e3, 55), spec, "r1", [1e5])
    >>> -160 < 10 * math.log10(s_phi[0] / 2) < -100
    True
    """
    if resistor not in design.components() or not resistor.startswith("r"):
        raise ClockplanError(
            f"no resistor {resistor!r} in this order-{design.order} filter",
            key=resistor,
            hint="the resistors are " + ", ".join(n for n in design.components() if n.startswith("r")),
        )
    offsets = _offsets(offsets_hz)
    s = 2j * np.pi * offsets
    to_tune = resistor_noise_transfer(design.order, resistor, s, *design.components().values())
    error = frequency_response(*error_polynomials(design, spec), offsets)
    density = 4 * BOLTZMANN * _kelvin(temperature_c) * getattr(design, resistor)
    return density * np.abs(to_tune) ** 2 * (float(spec.kvco_hz_per_v) / offsets) ** 2 * np.abs(error) ** 2


def loop_filter_phase_noise(
    design: FilterDesign, spec: LoopSpec, offsets_hz, *, temperature_c: float = 25.0
) -> np.ndarray:
    """Return ``S_phi(f)`` of all filter resistors together (uncorrelated, so powers add).

    Examples
    --------
    >>> from clockplan.loopfilter.design import design_filter
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> loop_filter_phase_noise(design_filter(spec, 100e3, 55), spec, [1e3, 1e5]).shape
    (2,)
    """
    resistors = [name for name in design.components() if name.startswith("r")]
    return sum(
        resistor_phase_noise(design, spec, name, offsets_hz, temperature_c=temperature_c) for name in resistors
    )


def loop_filter_phase_noise_dbc(
    design: FilterDesign, spec: LoopSpec, offsets_hz, *, temperature_c: float = 25.0
) -> np.ndarray:
    """Return the single-sideband phase noise ``L(f)`` of the filter resistors, dBc/Hz.

    Examples
    --------
    >>> from clockplan.loopfilter.design import design_filter
    >>> spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    >>> level = loop_filter_phase_noise_dbc(design_filter(spec, 100e3, 55), spec, [1e5])[0]
    >>> bool(-160 < level < -100)
    True
    """
    s_phi = loop_filter_phase_noise(design, spec, offsets_hz, temperature_c=temperature_c)
    return 10 * np.log10(s_phi / 2)
