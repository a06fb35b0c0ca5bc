"""PLL loop responses: how a loop passes reference noise and suppresses VCO noise.

A loop is described by its open-loop gain ``G(s) = num(s) / den(s)`` (polynomials
in ``s`` in rad/s, highest power first, as :mod:`scipy.signal` writes them), with
the feedback divider's ``1/N`` inside ``G``. Then

- ``H(s) = G / (1 + G) = num / (num + den)`` is the closed-loop low-pass, normalised
  to unity gain in band: noise referred to the loop input (reference, phase
  detector, charge pump) reaches the output as ``N**2 * |H|**2``;
- ``E(s) = 1 - H = 1 / (1 + G) = den / (num + den)`` is the complementary high-pass
  that shapes the VCO's own noise.

``E`` is evaluated from ``den`` directly rather than as ``1 - H``, so it stays
accurate deep inside the loop bandwidth where ``H`` is within rounding of 1.

Two ways to get a loop:

- :func:`second_order_loop` -- the classic type-II second-order loop
  ``G = (2 zeta wn s + wn**2) / s**2`` from a bandwidth and a damping factor or a
  phase margin;
- :func:`loop_from_open_loop` -- any open-loop polynomials, e.g. from a
  loop-filter design.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import cached_property, lru_cache
from typing import Literal

import numpy as np

from clockplan.errors import ClockplanError
from clockplan.jitter._checks import positive_number
from clockplan.units import format_frequency

__all__ = [
    "BandwidthDefinition",
    "LoopResponse",
    "loop_from_open_loop",
    "LOOP_MODELS",
    "second_order_loop",
    "passive_filter_loop",
    "damping_from_phase_margin",
    "phase_margin_from_damping",
]

BandwidthDefinition = Literal["closed_loop_3db", "crossover"]

#: What a loop given by its bandwidth may be: the usual third-order passive
#: filter loop (the default) or the idealised type-II second-order loop.
LOOP_MODELS = ("third-order", "second-order")

_BANDWIDTH_TEXT = {"closed_loop_3db": "closed-loop -3 dB", "crossover": "open-loop crossover"}


def _coefficients(values: object, key: str) -> np.ndarray:
    try:
        array = np.atleast_1d(np.asarray(values, dtype=float))
    except (TypeError, ValueError):
        raise ClockplanError(
            f"{key} polynomial {values!r} is not a list of numbers",
            key=key,
            hint="give the coefficients of s, highest power first, e.g. [2.0e5, 1.0e10]",
        ) from None
    if array.ndim != 1 or not np.all(np.isfinite(array)):
        raise ClockplanError(
            f"{key} polynomial must be a flat list of finite numbers",
            key=key,
            hint="give the coefficients of s, highest power first, e.g. [1, 0, 0] for s**2",
        )
    nonzero = np.flatnonzero(array)
    if nonzero.size == 0:
        raise ClockplanError(
            f"{key} polynomial is zero",
            key=key,
            hint="an open-loop gain needs a non-zero numerator and denominator",
        )
    trimmed = array[nonzero[0] :].copy()
    trimmed.flags.writeable = False
    return trimmed


@dataclass(frozen=True, eq=False)
class LoopResponse:
    """A PLL's open-loop gain and the closed-loop responses derived from it.

    Parameters
    ----------
    open_num, open_den
        Coefficients of ``G(s) = open_num(s) / open_den(s)``, highest power first.
    model
        What the loop is, for reports: ``"open-loop polynomials"``,
        ``"second-order"``, ``"third-order (assumed)"``, ``"loop_filter"``.
    summary
        The loop in words (bandwidth, margin, what was assumed).

    Examples
    --------
    >>> loop = LoopResponse([2.0, 1.0], [1.0, 0.0, 0.0])
    >>> loop.closed_den.tolist(), loop.error_num.tolist()
    ([1.0, 2.0, 1.0], [1.0, 0.0, 0.0])
    """

    open_num: np.ndarray
    open_den: np.ndarray
    model: str = "open-loop polynomials"
    summary: str = ""

    def __post_init__(self) -> None:
        num = _coefficients(self.open_num, "open_loop_numerator")
        den = _coefficients(self.open_den, "open_loop_denominator")
        if num.size > den.size:
            raise ClockplanError(
                f"open-loop numerator has degree {num.size - 1} above the denominator's {den.size - 1}",
                key="open_loop_numerator",
                hint="a physical loop gain falls off at high frequency: the denominator's degree must be at least the numerator's",
            )
        object.__setattr__(self, "open_num", num)
        object.__setattr__(self, "open_den", den)
        poles = np.roots(self.closed_den)
        if poles.size and np.max(poles.real) >= 0:
            worst = poles[np.argmax(poles.real)]
            raise ClockplanError(
                f"the closed loop is unstable (pole at s = {worst:.4g})",
                key="loop",
                hint="check the loop-filter values and the gain; all closed-loop poles must have negative real part",
            )

    @cached_property
    def closed_num(self) -> np.ndarray:
        """Numerator of ``H = G / (1 + G)``."""
        return self.open_num

    @cached_property
    def closed_den(self) -> np.ndarray:
        """Denominator of ``H`` and of ``E = 1 - H``: ``num + den``."""
        return np.polyadd(self.open_num, self.open_den)

    @cached_property
    def error_num(self) -> np.ndarray:
        """Numerator of ``E = 1 / (1 + G)``: the open-loop denominator."""
        return self.open_den

    @property
    def error_den(self) -> np.ndarray:
        """Denominator of ``E``; the same as :attr:`closed_den`."""
        return self.closed_den

    @staticmethod
    def _s(f_hz: object) -> np.ndarray:
        return 2j * math.pi * np.asarray(f_hz, dtype=float)

    def open_loop(self, f_hz: object) -> np.ndarray:
        """``G(j 2 pi f)``, complex."""
        s = self._s(f_hz)
        return np.polyval(self.open_num, s) / np.polyval(self.open_den, s)

    def closed_loop(self, f_hz: object) -> np.ndarray:
        """``H(j 2 pi f)``, complex: the low-pass seen by input-referred noise."""
        s = self._s(f_hz)
        return np.polyval(self.closed_num, s) / np.polyval(self.closed_den, s)

    def error(self, f_hz: object) -> np.ndarray:
        """``E(j 2 pi f) = 1 - H``, complex: the high-pass seen by VCO noise."""
        s = self._s(f_hz)
        return np.polyval(self.error_num, s) / np.polyval(self.error_den, s)

    def closed_loop_power(self, f_hz: object) -> np.ndarray:
        """``|H|**2`` at the given frequencies in Hz."""
        return np.abs(self.closed_loop(f_hz)) ** 2

    def error_power(self, f_hz: object) -> np.ndarray:
        """``|1 - H|**2`` at the given frequencies in Hz."""
        return np.abs(self.error(f_hz)) ** 2


def loop_from_open_loop(numerator: Sequence[float], denominator: Sequence[float]) -> LoopResponse:
    """A loop from explicit open-loop polynomials in ``s`` (rad/s), highest power first.

    ``G`` must include the feedback divider's ``1/N`` (so ``H`` has unity in-band gain).

    Examples
    --------
    >>> loop = loop_from_open_loop([1e5, 1e10], [1.0, 0.0, 0.0])
    >>> round(float(loop.closed_loop_power([1.0])[0]), 6)
    1.0
    """
    return LoopResponse(np.asarray(numerator, dtype=float), np.asarray(denominator, dtype=float))


def damping_from_phase_margin(phase_margin_deg: float) -> float:
    """Damping factor of the type-II second-order loop with the given phase margin.

    With ``G = (2 zeta wn s + wn**2) / s**2`` the phase margin is
    ``atan(2 zeta wc / wn)`` at the crossover ``wc``; solving gives
    ``zeta = sqrt(sin(PM) * tan(PM)) / 2``.

    Examples
    --------
    >>> round(damping_from_phase_margin(65.53), 3)
    0.707
    """
    pm = float(phase_margin_deg)
    if not (math.isfinite(pm) and 0.0 < pm < 90.0):
        raise ClockplanError(
            f"phase margin {phase_margin_deg!r} degrees is outside 0..90",
            key="phase_margin",
            hint="a type-II second-order loop has a phase margin strictly between 0 and 90 degrees; 45 to 70 is usual",
        )
    rad = math.radians(pm)
    return math.sqrt(math.sin(rad) * math.tan(rad)) / 2.0


def phase_margin_from_damping(damping: float) -> float:
    """Phase margin in degrees of the type-II second-order loop with damping ``zeta``.

    Examples
    --------
    >>> round(phase_margin_from_damping(0.5), 2)
    51.83
    """
    zeta = _check_damping(damping)
    return math.degrees(math.atan(2.0 * zeta * _crossover_ratio(zeta)))


def _check_damping(damping: float) -> float:
    return positive_number(
        damping,
        key="damping",
        what="damping factor",
        hint="give a damping factor above 0; 0.7 to 1 is usual for clock PLLs",
    )


def _crossover_ratio(zeta: float) -> float:
    """``wc / wn`` where ``|G(j wc)| = 1``: root of ``y**2 - 4 zeta**2 y - 1`` in ``y = (w/wn)**2``."""
    return math.sqrt(2.0 * zeta**2 + math.sqrt(4.0 * zeta**4 + 1.0))


def _three_db_ratio(zeta: float) -> float:
    """``w3dB / wn`` where ``|H|**2 = 1/2``: root of ``y**2 - (2 + 4 zeta**2) y - 1``."""
    a = 1.0 + 2.0 * zeta**2
    return math.sqrt(a + math.sqrt(a * a + 1.0))


def second_order_loop(
    bandwidth_hz: float,
    *,
    damping: float | None = None,
    phase_margin_deg: float | None = None,
    bandwidth_is: BandwidthDefinition = "closed_loop_3db",
) -> LoopResponse:
    """The type-II second-order loop ``G = (2 zeta wn s + wn**2) / s**2``.

    Parameters
    ----------
    bandwidth_hz
        The loop bandwidth in Hz.
    damping, phase_margin_deg
        Exactly one of them: the damping factor ``zeta`` or the phase margin.
    bandwidth_is
        What the bandwidth means: ``"closed_loop_3db"`` (default; where
        ``|H|`` is 3 dB down, as clock datasheets quote jitter transfer) or
        ``"crossover"`` (where ``|G| = 1``, as loop-filter designs quote it).

    Examples
    --------
    >>> loop = second_order_loop(100e3, damping=0.707)
    >>> round(float(10 * np.log10(loop.closed_loop_power([100e3])[0])), 3)
    -3.01
    """
    if (damping is None) == (phase_margin_deg is None):
        raise ClockplanError(
            "give exactly one of damping and phase margin",
            key="loop",
            hint="e.g. damping = 0.707, or phase_margin = 60 (degrees)",
        )
    zeta = damping_from_phase_margin(phase_margin_deg) if damping is None else _check_damping(damping)
    bandwidth = positive_number(
        bandwidth_hz, key="bandwidth", what="loop bandwidth", hint="give the loop bandwidth in Hz, e.g. 100e3"
    )
    if bandwidth_is == "closed_loop_3db":
        ratio = _three_db_ratio(zeta)
    elif bandwidth_is == "crossover":
        ratio = _crossover_ratio(zeta)
    else:
        raise ClockplanError(
            f"unknown bandwidth definition {bandwidth_is!r}",
            key="bandwidth_is",
            hint="use 'closed_loop_3db' or 'crossover'",
        )
    wn = 2.0 * math.pi * bandwidth / ratio
    summary = f"type-II second-order loop, {format_frequency(bandwidth)} ({_BANDWIDTH_TEXT[bandwidth_is]}), damping {zeta:.3g}"
    return LoopResponse(np.array([2.0 * zeta * wn, wn * wn]), np.array([1.0, 0.0, 0.0]), "second-order", summary)


def _unit_passive_open_loop(crossover_hz: float, phase_margin_deg: float, pole_ratio: float) -> tuple[np.ndarray, np.ndarray]:
    """Open loop of the third-order passive filter designed for a crossover and margin, scaled so ``den(0)`` terms are O(1)."""
    from clockplan.loopfilter.design import LoopSpec, design_filter
    from clockplan.loopfilter.response import open_loop_polynomials

    # The loop's shape does not depend on the charge pump, VCO gain or N (they
    # only scale the capacitors): a unit loop constant gives the same G(s).
    spec = LoopSpec(1.0, 1.0, 1, 1.0)
    design = design_filter(spec, crossover_hz, phase_margin_deg, order=3, pole_ratio=pole_ratio)
    num, den = open_loop_polynomials(design, spec)
    scale = float(den[-3])  # A0: divide through so the s**2 coefficient is 1
    return num / scale, den / scale


def _closed_loop_3db_hz(num: np.ndarray, den: np.ndarray, crossover_hz: float) -> float:
    """The highest frequency where ``|H|**2 >= 1/2`` (above any peaking), by bisection."""
    loop = LoopResponse(num, den)
    grid = np.geomspace(crossover_hz / 1e3, crossover_hz * 1e3, 6001)
    above = np.flatnonzero(loop.closed_loop_power(grid) >= 0.5)
    low, high = float(grid[above[-1]]), float(grid[above[-1] + 1])
    for _ in range(80):
        middle = math.sqrt(low * high)
        if float(loop.closed_loop_power([middle])[0]) >= 0.5:
            low = middle
        else:
            high = middle
    return math.sqrt(low * high)


@lru_cache(maxsize=256)
def _unit_3db_ratio(margin_deg: float, pole_ratio: float) -> float:
    """Closed-loop -3 dB frequency over the crossover of the passive-filter loop (it depends on the shape only)."""
    return _closed_loop_3db_hz(*_unit_passive_open_loop(1.0, margin_deg, pole_ratio), 1.0)


def passive_filter_loop(
    bandwidth_hz: float,
    *,
    damping: float | None = None,
    phase_margin_deg: float | None = None,
    bandwidth_is: BandwidthDefinition = "closed_loop_3db",
    pole_ratio: float | None = None,
) -> LoopResponse:
    """The loop of a charge-pump PLL with the usual third-order passive filter.

    ``G(s) = K (1 + s Tz) / (s**2 (1 + s T1) (1 + s T3))``: the type-II
    second-order loop with the filter's shunt capacitor pole ``T1`` and an
    extra RC pole ``T3 = pole_ratio * T1``, designed by
    :func:`clockplan.loopfilter.design.design_filter` for the phase margin at
    the crossover. Unlike :func:`second_order_loop`, whose ``|H|`` falls only
    20 dB/decade, this loop falls 60 dB/decade above its bandwidth: the
    difference decides a fractional-N modulator's noise, which rises with
    offset.

    Parameters
    ----------
    bandwidth_hz
        The loop bandwidth in Hz.
    damping, phase_margin_deg
        Exactly one: the phase margin, or a damping factor read as the phase
        margin of the second-order loop with that damping
        (:func:`phase_margin_from_damping`; 0.707 gives 65.5 degrees).
    bandwidth_is
        ``"closed_loop_3db"`` (default: where ``|H|`` is 3 dB down) or
        ``"crossover"`` (where ``|G| = 1``, the design method's bandwidth).
    pole_ratio
        ``T3 / T1``; :data:`clockplan.loopfilter.design.DEFAULT_POLE_RATIO` by default.

    Examples
    --------
    >>> loop = passive_filter_loop(100e3, phase_margin_deg=60)
    >>> round(float(10 * np.log10(loop.closed_loop_power([100e3])[0])), 3)
    -3.01
    >>> loop.open_den.size - 1  # s**2 (1 + s T1) (1 + s T3)
    4
    """
    from clockplan.loopfilter.design import DEFAULT_POLE_RATIO

    if (damping is None) == (phase_margin_deg is None):
        raise ClockplanError(
            "give exactly one of damping and phase margin",
            key="loop",
            hint="e.g. damping = 0.707, or phase_margin = 60 (degrees)",
        )
    margin = phase_margin_from_damping(damping) if damping is not None else float(phase_margin_deg)  # type: ignore[arg-type]
    if not (math.isfinite(margin) and 0.0 < margin < 90.0):
        raise ClockplanError(
            f"phase margin {phase_margin_deg!r} degrees is outside 0..90",
            key="phase_margin",
            hint="a passive-filter loop has a phase margin strictly between 0 and 90 degrees; 45 to 70 is usual",
        )
    bandwidth = positive_number(
        bandwidth_hz, key="bandwidth", what="loop bandwidth", hint="give the loop bandwidth in Hz, e.g. 100e3"
    )
    ratio = DEFAULT_POLE_RATIO if pole_ratio is None else float(pole_ratio)
    if bandwidth_is == "crossover":
        crossover = bandwidth
    elif bandwidth_is == "closed_loop_3db":
        # The shape scales with the crossover: find the 3 dB point of a unit design, then rescale.
        crossover = bandwidth / _unit_3db_ratio(margin, ratio)
    else:
        raise ClockplanError(
            f"unknown bandwidth definition {bandwidth_is!r}",
            key="bandwidth_is",
            hint="use 'closed_loop_3db' or 'crossover'",
        )
    summary = (
        f"third-order passive-filter loop designed for {format_frequency(bandwidth)} ({_BANDWIDTH_TEXT[bandwidth_is]}), "
        f"{margin:.1f}° phase margin, extra pole at T3/T1 = {ratio:g}"
    )
    return LoopResponse(*_unit_passive_open_loop(crossover, margin, ratio), "third-order (assumed)", summary)
