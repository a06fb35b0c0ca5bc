"""The summary of one jitter integration: total, per contributor, against a budget."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from clockplan.units import format_time

__all__ = ["PLANNING_NOTE", "JitterResult"]

PLANNING_NOTE = (
    "planning estimate from datasheet-style phase-noise figures; "
    "the part datasheets and the governing standard decide"
)


@dataclass(frozen=True)
class JitterResult:
    """RMS jitter of one clock over one integration band.

    Parameters
    ----------
    carrier_hz
        The clock frequency the phase noise is referred to.
    f_low_hz, f_high_hz
        The integration band (offsets from the carrier).
    rms_seconds
        Total RMS jitter: root-sum-square of the contributions.
    contributions
        ``(name, rms_seconds)`` of each contributor, largest first.
    budget_seconds
        The consumer's jitter budget, if one was given.
    note
        What the figure is (and is not) worth; reports print it.

    Examples
    --------
    >>> r = JitterResult(100e6, 12e3, 20e6, 5e-13, (("ref", 4e-13), ("vco", 3e-13)), 1e-12)
    >>> r.dominant, round(r.margin_seconds * 1e15)
    ('ref', 500)
    """

    carrier_hz: float
    f_low_hz: float
    f_high_hz: float
    rms_seconds: float
    contributions: tuple[tuple[str, float], ...]
    budget_seconds: float | None = None
    note: str = PLANNING_NOTE

    @property
    def rms_phase_rad(self) -> float:
        """RMS phase error in radians."""
        return 2.0 * math.pi * self.carrier_hz * self.rms_seconds

    @property
    def rms_phase_deg(self) -> float:
        """RMS phase error in degrees."""
        return math.degrees(self.rms_phase_rad)

    @property
    def integrated_dbc(self) -> float:
        """Integrated single-sideband phase noise in dBc (``sigma_phi**2 = 2 * 10**(A/10)``)."""
        half_variance = self.rms_phase_rad**2 / 2.0
        return 10.0 * math.log10(half_variance) if half_variance > 0 else -math.inf

    @property
    def dominant(self) -> str:
        """Name of the largest contributor (``"none"`` when there are none)."""
        return self.contributions[0][0] if self.contributions else "none"

    @property
    def margin_seconds(self) -> float | None:
        """Budget minus total jitter (negative when over budget); ``None`` without a budget."""
        return None if self.budget_seconds is None else self.budget_seconds - self.rms_seconds

    @property
    def passes(self) -> bool | None:
        """Whether the total is within the budget; ``None`` without a budget."""
        return None if self.budget_seconds is None else self.rms_seconds <= self.budget_seconds

    def shares(self) -> dict[str, float]:
        """Each contributor's fraction of the total jitter variance (they add up to 1)."""
        total = self.rms_seconds**2
        return {name: (s * s / total if total > 0 else 0.0) for name, s in self.contributions}

    def json_fields(self) -> dict[str, Any]:
        """Fields for the JSON report, all under ``"jitter"`` (SI units, no NaN or infinity).

        Examples
        --------
        >>> JitterResult(1e8, 12e3, 20e6, 2e-13, (("ref", 2e-13),)).json_fields()["jitter"]["dominant"]
        'ref'
        """
        dbc = self.integrated_dbc
        return {
            "jitter": {
                "rms_s": self.rms_seconds,
                "band_hz": [self.f_low_hz, self.f_high_hz],
                "carrier_hz": self.carrier_hz,
                "rms_phase_deg": self.rms_phase_deg,
                "integrated_dbc": dbc if math.isfinite(dbc) else None,
                "budget_s": self.budget_seconds,
                "margin_s": self.margin_seconds,
                "passes": self.passes,
                "dominant": self.dominant,
                "contributors": [
                    {"name": name, "rms_s": seconds, "share": self.shares()[name]}
                    for name, seconds in self.contributions
                ],
                "note": self.note,
            }
        }

    def table_cells(self) -> dict[str, str]:
        """Columns for the terminal table: jitter, budget, margin, dominant contributor.

        Examples
        --------
        >>> JitterResult(1e8, 12e3, 20e6, 2e-13, (("ref", 2e-13),), 1e-12).table_cells()["jitter margin"]
        '800 fs'
        """
        return {
            "jitter": format_time(self.rms_seconds),
            "jitter budget": "-" if self.budget_seconds is None else format_time(self.budget_seconds),
            "jitter margin": "-" if self.margin_seconds is None else format_time(self.margin_seconds),
            "dominant": self.dominant,
        }
