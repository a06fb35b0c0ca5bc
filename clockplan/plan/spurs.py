"""Integer-boundary spurs of fractional-N PLLs.

A fractional-N PLL whose VCO sits close to a whole multiple of its PFD
frequency shows a spur at that distance from the carrier (the
integer-boundary spur). Far outside the loop bandwidth the loop filter
attenuates it; inside the bandwidth it passes to the output. The offset is
``f_pfd * min(frac(N), 1 - frac(N))``.

Which bandwidth to compare with: a PLL's ``loop`` table may give one (read
with :func:`loop_bandwidth_of`); otherwise the planner uses the bandwidth the
caller passes (``--loop-bandwidth``, default :data:`DEFAULT_LOOP_BANDWIDTH_HZ`).
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any

from clockplan.findings import Finding, Severity
from clockplan.units import format_frequency

__all__ = ["DEFAULT_LOOP_BANDWIDTH_HZ", "boundary_spur_offset", "loop_bandwidth_of", "spur_in_band", "spur_findings"]

#: Loop bandwidth assumed when neither the part nor the user gives one: a
#: typical synthesizer loop of a few hundred kHz (common practice, from memory).
DEFAULT_LOOP_BANDWIDTH_HZ = Fraction(200_000)


def boundary_spur_offset(pfd_hz: Fraction, n: Fraction) -> Fraction | None:
    """Distance from the VCO frequency to the nearest whole multiple of the PFD frequency.

    None for an integer N (no integer-boundary spur).

    Examples
    --------
    A 100 MHz PFD and N = 29.4912 put the VCO 49.12 MHz from 2.9 GHz:

    >>> boundary_spur_offset(Fraction(100_000_000), Fraction(294912, 10000))
    Fraction(49120000, 1)
    """
    n = Fraction(n)
    if n.denominator == 1:
        return None
    fraction = n - n.numerator // n.denominator
    return Fraction(pfd_hz) * min(fraction, 1 - fraction)


def loop_bandwidth_of(pll: Any, default: Fraction | float | None = DEFAULT_LOOP_BANDWIDTH_HZ) -> Fraction | float | None:
    """The loop bandwidth of ``pll`` in Hz: from its ``loop`` data when it has one, else ``default``.

    Accepts a ``loop`` object with a ``bandwidth`` (or ``bandwidth_hz``)
    attribute or a mapping with such a key, a loop response with
    ``closed_loop_power(f)`` (its -3 dB frequency is taken), and a
    ``loop_bandwidth`` attribute on the part itself.
    """
    candidates = [getattr(pll, "loop_bandwidth", None)]
    loop = getattr(pll, "loop", None)
    if loop is not None:
        for name in ("bandwidth", "bandwidth_hz"):
            candidates.append(loop.get(name) if isinstance(loop, dict) else getattr(loop, name, None))
        if hasattr(loop, "closed_loop_power"):
            candidates.append(_three_db_bandwidth(loop))
    for value in candidates:
        if isinstance(value, (int, float, Fraction)) and not isinstance(value, bool) and value > 0:
            return value
    return default


def _three_db_bandwidth(loop: Any) -> float | None:
    """The highest frequency where the closed-loop power response is still at least one half (-3 dB)."""
    import numpy as np

    grid = np.logspace(-1, 11, 1201)
    power = np.asarray(loop.closed_loop_power(grid), dtype=float)
    above = np.nonzero(power >= 0.5)[0]
    if above.size == 0 or above[-1] == grid.size - 1:
        return None
    lo, hi = float(grid[above[-1]]), float(grid[above[-1] + 1])
    for _ in range(60):
        mid = (lo * hi) ** 0.5
        if float(np.asarray(loop.closed_loop_power(np.array([mid])))[0]) >= 0.5:
            lo = mid
        else:
            hi = mid
    return lo


def spur_in_band(offset_hz: Fraction | None, bandwidth_hz: Fraction | float | None) -> bool:
    """True if an integer-boundary spur at ``offset_hz`` falls inside the loop bandwidth.

    Examples
    --------
    >>> spur_in_band(Fraction(50_000), 200_000)
    True
    >>> spur_in_band(None, 200_000)
    False
    """
    if offset_hz is None or bandwidth_hz is None:
        return False
    return offset_hz < Fraction(bandwidth_hz)


def spur_findings(plls: Any, frequencies: Any, default_bandwidth: Fraction | float | None = DEFAULT_LOOP_BANDWIDTH_HZ) -> list[Finding]:
    """``spur-in-band`` warnings for every PLL whose integer-boundary spur falls inside its loop bandwidth.

    The one check both ``audit`` and ``plan`` run on a set of settings, so the
    two commands agree.

    Parameters
    ----------
    plls
        The board's PLLs (each with an ``id`` and maybe ``loop`` data).
    frequencies
        The exact frequencies of the settings (``frequencies.plls[id]`` has
        ``pfd_hz`` and ``setting.n``).
    default_bandwidth
        The bandwidth of a PLL that states none (``--loop-bandwidth``).
    """
    findings = []
    for pll in plls:
        point = frequencies.plls.get(pll.id)
        if point is None:
            continue
        offset = boundary_spur_offset(point.pfd_hz, point.setting.n)
        bandwidth = loop_bandwidth_of(pll, default_bandwidth)
        if spur_in_band(offset, bandwidth):
            assert offset is not None and bandwidth is not None
            findings.append(
                Finding(
                    Severity.WARNING,
                    "spur-in-band",
                    pll.id,
                    f"the integer-boundary spur of {pll.id} sits {format_frequency(offset)} from the carrier, inside the "
                    f"loop bandwidth of {format_frequency(Fraction(bandwidth))}; the loop will not filter it. "
                    "Pin another N or R, or check the part's spur figures",
                )
            )
    return findings
