"""Long-term frequency drift (aging) of a reference over the board's lifetime.

Datasheets state aging as a first-year figure plus a figure for each later
year (:class:`AgingLinear`), or the drift follows a logarithmic law
``A ln(1 + t/tau)`` fitted to the first-year figure (:class:`AgingLog`).
Either gives a ``(lo, hi)`` fractional range after a time ``t``, because the
sign of the drift is usually not guaranteed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from clockplan.errors import BoardError

__all__ = ["SECONDS_PER_YEAR", "AgingLinear", "AgingLog", "AgingModel", "NO_AGING"]

#: Julian year (365.25 days), the same year clockplan.units reads.
SECONDS_PER_YEAR = 31_557_600

_Range = tuple[Fraction, Fraction]


def _check_elapsed(seconds: float) -> None:
    if not math.isfinite(seconds) or seconds < 0:
        raise BoardError(f"lifetime {seconds} s is not a duration", hint="give the lifetime as e.g. '10 years'")


@dataclass(frozen=True)
class AgingLinear:
    """First-year drift, then a fixed drift per later year (each a ``(lo, hi)`` range).

    Within the first year the drift is taken as proportional to time, which
    understates the early months of a real part (aging is fastest when new) but
    is exact at the one-year mark that datasheets specify.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> aging = AgingLinear(parse_ppm("±3 ppm"), parse_ppm("±1 ppm"))
    >>> aging.drift(10 * SECONDS_PER_YEAR)[1]
    Fraction(3, 250000)
    """

    first_year: _Range
    per_year: _Range = (Fraction(0), Fraction(0))

    def drift(self, seconds: float) -> tuple[Fraction | float, Fraction | float]:
        """Drift range after ``seconds`` of operation; exact for exact inputs."""
        _check_elapsed(seconds)
        years = Fraction(seconds) / SECONDS_PER_YEAR
        if years <= 1:
            return self.first_year[0] * years, self.first_year[1] * years
        later = years - 1
        return (
            self.first_year[0] + self.per_year[0] * later,
            self.first_year[1] + self.per_year[1] * later,
        )


@dataclass(frozen=True)
class AgingLog:
    """Logarithmic aging ``A ln(1 + t/tau)``, scaled so one year gives ``first_year``.

    ``time_constant_s`` (tau) sets how fast the early drift settles; a day is a
    common choice for a fitted quartz aging curve.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> aging = AgingLog(parse_ppm("±1 ppm"), time_constant_s=86400)
    >>> round(aging.drift(SECONDS_PER_YEAR)[1] * 1e6, 9)
    1.0
    """

    first_year: _Range
    time_constant_s: float = 86400.0

    def __post_init__(self) -> None:
        if not (self.time_constant_s > 0 and math.isfinite(self.time_constant_s)):
            raise BoardError(
                f"aging time constant {self.time_constant_s} s is not positive",
                hint="give a positive time constant, e.g. '1 day'",
            )

    def drift(self, seconds: float) -> tuple[float, float]:
        _check_elapsed(seconds)
        scale = math.log1p(seconds / self.time_constant_s) / math.log1p(SECONDS_PER_YEAR / self.time_constant_s)
        return float(self.first_year[0]) * scale, float(self.first_year[1]) * scale


NO_AGING = AgingLinear((Fraction(0), Fraction(0)))

AgingModel = AgingLinear | AgingLog
