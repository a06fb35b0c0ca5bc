"""Spread-spectrum clocking: a deliberate, slow sweep of a clock's frequency.

A down-spread of depth ``d`` sweeps between ``-d`` and 0, a center-spread
between ``-d/2`` and ``+d/2``, an up-spread between 0 and ``+d``. With a
symmetric profile (triangle, or the usual shaped profiles), the mean shifts by
``-d/2``, 0 and ``+d/2`` respectively. Standards that allow spreading state a
mode, a largest depth and a modulation-rate window; PCI Express, for example,
allows a down-spread of up to 0.5 % (0..-5000 ppm) modulated at 30-33 kHz on
top of the reference's own ±300 ppm.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from clockplan.errors import BoardError

__all__ = ["SPREAD_MODES", "SpreadSpectrum", "SpreadAllowance", "spread_fits"]

SPREAD_MODES = ("down", "center", "up")


def _check_mode(mode: str) -> None:
    if mode not in SPREAD_MODES:
        raise BoardError(f"unknown spread mode {mode!r}", hint="use 'down', 'center' or 'up'")


@dataclass(frozen=True)
class SpreadSpectrum:
    """A spread clock output: mode, total depth (fractional, positive) and modulation rate.

    Examples
    --------
    >>> from clockplan.units import PPM
    >>> ssc = SpreadSpectrum("down", 5000 * PPM, Fraction(31500))
    >>> ssc.extremes == (-5000 * PPM, 0)
    True
    >>> ssc.mean_shift == -2500 * PPM
    True
    """

    mode: str
    depth: Fraction
    modulation_hz: Fraction | None = None

    def __post_init__(self) -> None:
        _check_mode(self.mode)
        if not 0 <= self.depth < 1:
            raise BoardError(f"spread depth {self.depth} is out of range", hint="write a depth such as '0.5 %' or '5000 ppm'")
        if self.modulation_hz is not None and self.modulation_hz <= 0:
            raise BoardError("spread modulation rate must be positive", hint="write e.g. '31.5 kHz'")

    @property
    def extremes(self) -> tuple[Fraction, Fraction]:
        """Lowest and highest instantaneous offset, exact."""
        if self.mode == "down":
            return -self.depth, Fraction(0)
        if self.mode == "up":
            return Fraction(0), self.depth
        return -self.depth / 2, self.depth / 2

    @property
    def mean_shift(self) -> Fraction:
        """Shift of the mean frequency for a symmetric profile, exact."""
        low, high = self.extremes
        return (low + high) / 2


@dataclass(frozen=True)
class SpreadAllowance:
    """What a standard allows a consumer's clock to spread.

    Examples
    --------
    >>> from clockplan.units import PPM
    >>> pcie = SpreadAllowance("down", 5000 * PPM, (Fraction(30000), Fraction(33000)))
    >>> spread_fits(SpreadSpectrum("down", 5000 * PPM, Fraction(31500)), pcie)
    (True, 'within the allowed down-spread')
    """

    mode: str
    max_depth: Fraction
    modulation_hz: tuple[Fraction, Fraction] | None = None

    def __post_init__(self) -> None:
        _check_mode(self.mode)


def spread_fits(spread: SpreadSpectrum, allowance: SpreadAllowance | None) -> tuple[bool, str]:
    """Whether a spread clock is within a consumer's allowance, and why not."""
    if allowance is None:
        return False, "the consumer allows no spread; the sweep counts as frequency error"
    if spread.mode != allowance.mode:
        return False, f"{spread.mode}-spread where the consumer allows {allowance.mode}-spread only"
    if spread.depth > allowance.max_depth:
        return False, f"spread depth {float(spread.depth) * 1e6:g} ppm exceeds the allowed {float(allowance.max_depth) * 1e6:g} ppm"
    if allowance.modulation_hz is not None:
        low, high = allowance.modulation_hz
        if spread.modulation_hz is None:
            return False, "the spread's modulation rate is not given; the consumer bounds it"
        if not low <= spread.modulation_hz <= high:
            return False, (
                f"modulation at {float(spread.modulation_hz):g} Hz is outside the allowed "
                f"{float(low):g}..{float(high):g} Hz"
            )
    return True, f"within the allowed {allowance.mode}-spread"
