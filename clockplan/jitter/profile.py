"""Phase-noise profiles: datasheet points, an optional white floor and discrete spurs.

A profile is the single-sideband phase noise L(f) of one source, in dBc/Hz, given
at a few offsets from the carrier (as a datasheet lists them). Between two points
the curve is a straight line in dB against log frequency, i.e. a power law
``L(f) = L1 * (f / f1) ** slope``; that is how such tables are meant to be read
(common practice) and it lets :mod:`clockplan.jitter.integrate` integrate each
segment exactly.

Outside the listed offsets the curve is extended in one of three documented ways:

``"flat"`` (the default of the API)
    hold the first value below the first offset and the last value beyond the
    last offset. Datasheets usually end on the far-out floor, so holding the last
    value is the natural reading there; below the first offset it is optimistic
    whenever the noise keeps rising toward the carrier, as an oscillator's does.
``"slope"``
    continue the first and last segments' power laws.
``"conservative"`` (what the board path uses)
    below the first offset, continue the first segment's slope but rise at
    least 20 dB/decade toward the carrier (:data:`CLOSE_IN_SLOPE_DB_PER_DECADE`):
    a free-running oscillator's phase noise rises toward its carrier, at
    20 dB/decade where white frequency noise dominates and 30 dB/decade below
    its flicker corner (Leeson, "A simple model of feedback oscillator noise
    spectrum", Proc. IEEE 54(2), 1966; the power-law noise types of IEEE Std
    1139), so it never flattens out close in; beyond the last offset, hold the
    last value (the far-out white floor every source settles on), or continue
    the last segment when it rises. Neither side ever reads less noise than the
    listed trend; it is still an assumption, and the jitter stage warns when it
    carries a material share of a consumer's jitter.

The optional ``floor_dbc_hz`` is an *additive* white noise: its power adds to the
curve everywhere (independent noise adds in power). Spurs are discrete tones at
an offset, in dBc; each one adds its power (no bandwidth) when its offset lies in
the integration band.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from typing import Literal

import numpy as np

from clockplan.errors import ClockplanError

__all__ = [
    "Extrapolation",
    "EXTRAPOLATIONS",
    "CLOSE_IN_SLOPE_DB_PER_DECADE",
    "Spur",
    "PhaseNoiseProfile",
    "find_bad_point",
    "check_extrapolation",
    "interpolate_log",
    "extension_pieces",
    "evaluate_pieces",
]

Extrapolation = Literal["flat", "slope", "conservative"]
EXTRAPOLATIONS: tuple[str, ...] = ("flat", "slope", "conservative")

#: The ``"conservative"`` extension's least rise toward the carrier below the first
#: listed offset, in dB per decade of offset (white frequency noise of a free-running
#: oscillator, 1/f**2; see the module docstring).
CLOSE_IN_SLOPE_DB_PER_DECADE = -20.0

# ln L per ln f is the slope in dB/decade divided by 10.
_CLOSE_IN_EXPONENT = CLOSE_IN_SLOPE_DB_PER_DECADE / 10.0
# Extended densities are kept below e**600 (~4e260) so they and their integrals stay
# finite; no real noise comes near, and such a figure fails any budget anyway.
_LN_CEILING = 600.0

_LN10_OVER_10 = math.log(10.0) / 10.0


@dataclass(frozen=True)
class Spur:
    """A discrete spurious tone at ``offset_hz`` from the carrier, ``dbc`` below it.

    Examples
    --------
    >>> Spur(1e6, -90.0).power
    1e-09
    """

    offset_hz: float
    dbc: float

    def __post_init__(self) -> None:
        if not (math.isfinite(self.offset_hz) and self.offset_hz > 0):
            raise ClockplanError(
                f"spur offset {self.offset_hz!r} Hz is not a positive finite frequency",
                key="spurs",
                hint="give the spur's offset from the carrier in Hz, above 0",
            )
        if not math.isfinite(self.dbc):
            raise ClockplanError(
                f"spur level {self.dbc!r} dBc is not a finite number",
                key="spurs",
                hint="give the spur level in dBc, e.g. -90",
            )

    @property
    def power(self) -> float:
        """Linear power relative to the carrier."""
        return 10.0 ** (self.dbc / 10.0)


def find_bad_point(offsets: np.ndarray, dbc: np.ndarray) -> tuple[int, str, str] | None:
    """Return ``(index, message, hint)`` for the first invalid point, or ``None``.

    Shared by the profile's own validation and the board-file reader, which
    reports the index inside the user's list.

    Examples
    --------
    >>> find_bad_point(np.array([10.0, 5.0]), np.array([-80.0, -90.0]))[0]
    1
    """
    bad_offset = ~np.isfinite(offsets) | (offsets <= 0)
    bad_level = ~np.isfinite(dbc)
    not_rising = np.zeros(offsets.shape, dtype=bool)
    not_rising[1:] = offsets[1:] <= offsets[:-1]
    problems = bad_offset | bad_level | not_rising
    if not problems.any():
        return None
    i = int(np.argmax(problems))
    if bad_offset[i]:
        return (
            i,
            f"offset {float(offsets[i])!r} Hz is not a positive finite frequency",
            "offsets are distances from the carrier in Hz and must be above 0",
        )
    if bad_level[i]:
        return (
            i,
            f"phase noise {float(dbc[i])!r} dBc/Hz is not a finite number",
            "give each level in dBc/Hz, e.g. -140",
        )
    return (
        i,
        f"offset {float(offsets[i])!r} Hz does not rise above the previous one ({float(offsets[i - 1])!r} Hz)",
        "list the points in order of increasing offset, each offset once",
    )


def check_extrapolation(extrapolation: str) -> None:
    """Raise :class:`ClockplanError` unless ``extrapolation`` is a known mode."""
    if extrapolation not in EXTRAPOLATIONS:
        raise ClockplanError(
            f"unknown extrapolation {extrapolation!r}",
            key="extrapolation",
            hint="use 'flat' (hold the end values), 'slope' (continue the end segments) "
            "or 'conservative' (rising at least 20 dB/decade below the first offset, held or rising beyond the last)",
        )


def _points_to_arrays(points: object) -> tuple[np.ndarray, np.ndarray]:
    try:
        table = np.asarray(points, dtype=float)
    except (TypeError, ValueError):
        raise ClockplanError(
            "phase-noise points must be numbers",
            key="points",
            hint="give a sequence of (offset_hz, dBc_per_hz) pairs, e.g. [(1e3, -120), (1e6, -150)]",
        ) from None
    if table.ndim != 2 or table.shape[1] != 2 or table.shape[0] == 0:
        raise ClockplanError(
            f"phase-noise points have shape {table.shape}, expected (n, 2) with n >= 1",
            key="points",
            hint="give a sequence of (offset_hz, dBc_per_hz) pairs, e.g. [(1e3, -120), (1e6, -150)]",
        )
    return table[:, 0], table[:, 1]


def _read_only(values: object, key: str) -> np.ndarray:
    try:
        array = np.array(values, dtype=float)
    except (TypeError, ValueError):
        raise ClockplanError(
            f"{key} must be numbers",
            key=key,
            hint="give offsets in Hz and levels in dBc/Hz as plain numbers",
        ) from None
    array.flags.writeable = False
    return array


def _as_spur(item: object) -> Spur:
    if isinstance(item, Spur):
        return item
    try:
        offset, level = item  # type: ignore[misc]
        return Spur(float(offset), float(level))
    except (TypeError, ValueError):
        raise ClockplanError(
            f"spur {item!r} is not an (offset_hz, dBc) pair",
            key="spurs",
            hint="give each spur as Spur(offset_hz, dbc) or a pair such as (250e3, -95)",
        ) from None


@dataclass(frozen=True, eq=False)
class PhaseNoiseProfile:
    """Single-sideband phase noise L(f) of one source.

    Parameters
    ----------
    offsets_hz
        Offsets from the carrier in Hz, strictly increasing, all above 0.
    dbc_hz
        L(f) at each offset in dBc/Hz.
    floor_dbc_hz
        Optional additive white floor in dBc/Hz (its power adds everywhere).
    spurs
        Discrete tones; each adds its power when inside the integration band.

    Examples
    --------
    >>> p = PhaseNoiseProfile.from_points([(1e3, -120), (1e6, -150)])
    >>> round(float(p.dbc_at([1e4])[0]), 6)
    -130.0
    """

    offsets_hz: np.ndarray
    dbc_hz: np.ndarray
    floor_dbc_hz: float | None = None
    spurs: tuple[Spur, ...] = field(default=())

    def __post_init__(self) -> None:
        offsets = _read_only(self.offsets_hz, "offsets_hz").reshape(-1)
        levels = _read_only(self.dbc_hz, "dbc_hz").reshape(-1)
        if offsets.shape != levels.shape or offsets.size == 0:
            raise ClockplanError(
                f"{offsets.size} offsets but {levels.size} levels",
                key="points",
                hint="give one dBc/Hz level per offset, at least one point",
            )
        bad = find_bad_point(offsets, levels)
        if bad is not None:
            index, message, hint = bad
            raise ClockplanError(message, key=f"points[{index}]", hint=hint)
        if self.floor_dbc_hz is not None and not math.isfinite(self.floor_dbc_hz):
            raise ClockplanError(
                f"noise floor {self.floor_dbc_hz!r} dBc/Hz is not a finite number",
                key="floor",
                hint="give the floor in dBc/Hz, e.g. -165, or leave it out",
            )
        spurs = tuple(_as_spur(s) for s in self.spurs)
        object.__setattr__(self, "offsets_hz", offsets)
        object.__setattr__(self, "dbc_hz", levels)
        object.__setattr__(self, "spurs", spurs)

    @classmethod
    def from_points(
        cls,
        points: Sequence[tuple[float, float]] | np.ndarray,
        *,
        floor_dbc_hz: float | None = None,
        spurs: Iterable[Spur | tuple[float, float]] = (),
    ) -> "PhaseNoiseProfile":
        """Build a profile from ``(offset_hz, dBc_per_hz)`` pairs.

        Examples
        --------
        >>> PhaseNoiseProfile.from_points([(10, -60), (1e4, -95)]).offsets_hz.tolist()
        [10.0, 10000.0]
        """
        offsets, levels = _points_to_arrays(points)
        return cls(offsets, levels, floor_dbc_hz, tuple(spurs))  # type: ignore[arg-type]

    @classmethod
    def flat(cls, dbc_hz: float) -> "PhaseNoiseProfile":
        """A white profile, the same level at every offset.

        Examples
        --------
        >>> PhaseNoiseProfile.flat(-150).dbc_at([1.0, 1e9]).round(9).tolist()
        [-150.0, -150.0]
        """
        return cls(np.array([1.0]), np.array([float(dbc_hz)]))

    # The logarithms are what the integrator works on; cache them once per profile.
    @cached_property
    def ln_offsets(self) -> np.ndarray:
        """Natural log of the offsets."""
        values = np.log(self.offsets_hz)
        values.flags.writeable = False
        return values

    @cached_property
    def ln_density(self) -> np.ndarray:
        """Natural log of the linear density 10**(L/10) at each offset."""
        values = self.dbc_hz * _LN10_OVER_10
        values.flags.writeable = False
        return values

    @property
    def floor_power(self) -> float:
        """Linear density of the additive floor (0 when there is none)."""
        return 0.0 if self.floor_dbc_hz is None else 10.0 ** (self.floor_dbc_hz / 10.0)

    def density_at(self, offsets_hz: object, extrapolation: Extrapolation = "flat") -> np.ndarray:
        """Linear L(f) (per Hz, floor included) at the given offsets.

        Examples
        --------
        >>> round(float(PhaseNoiseProfile.flat(-100).density_at([5.0])[0]) * 1e10, 12)
        1.0
        """
        check_extrapolation(extrapolation)
        f = np.asarray(offsets_hz, dtype=float)
        if np.any(~np.isfinite(f) | (f <= 0)):
            raise ClockplanError(
                "offsets to evaluate must be positive finite frequencies",
                key="offsets_hz",
                hint="evaluate the profile at offsets above 0 Hz",
            )
        return self.reader(extrapolation)(f)

    def reader(self, extrapolation: Extrapolation = "flat") -> Callable[[np.ndarray], np.ndarray]:
        """A fast :meth:`density_at` for many calls: offsets (positive, not checked) to linear L(f).

        Examples
        --------
        >>> p = PhaseNoiseProfile.from_points([(1e3, -100), (1e4, -110)])
        >>> (10 * np.log10(p.reader("conservative")(np.array([1e2, 1e5])))).round(6).tolist()
        [-80.0, -110.0]
        """
        check_extrapolation(extrapolation)
        if extrapolation not in self._readers:
            ln_x, floor = self.ln_offsets, self.floor_power
            pieces = extension_pieces(ln_x, self.ln_density, extrapolation)

            def density(offsets: np.ndarray) -> np.ndarray:
                return np.exp(evaluate_pieces(pieces, ln_x, np.log(offsets))) + floor

            self._readers[extrapolation] = density
        return self._readers[extrapolation]

    @cached_property
    def _readers(self) -> dict[str, Callable[[np.ndarray], np.ndarray]]:
        return {}

    def dbc_at(self, offsets_hz: object, extrapolation: Extrapolation = "flat") -> np.ndarray:
        """L(f) in dBc/Hz (floor included) at the given offsets."""
        return 10.0 * np.log10(self.density_at(offsets_hz, extrapolation))

    def shifted(self, delta_db: float) -> "PhaseNoiseProfile":
        """The same profile moved by ``delta_db`` (curve, floor and spurs alike).

        A multiplication of the carrier by N is ``shifted(20*log10(N))``; a
        division by D is ``shifted(-20*log10(D))``.

        Examples
        --------
        >>> PhaseNoiseProfile.flat(-150).shifted(20).dbc_hz.tolist()
        [-130.0]
        """
        floor = None if self.floor_dbc_hz is None else self.floor_dbc_hz + delta_db
        spurs = tuple(Spur(s.offset_hz, s.dbc + delta_db) for s in self.spurs)
        return PhaseNoiseProfile(self.offsets_hz, self.dbc_hz + delta_db, floor, spurs)


def interpolate_log(
    ln_x: np.ndarray, ln_y: np.ndarray, ln_at: np.ndarray, extrapolation: Extrapolation
) -> np.ndarray:
    """Piecewise-linear interpolation of ``ln_y`` against ``ln_x`` (axis 0), extended per mode.

    ``ln_y`` may be 1-D or frequency-first 2-D ``(n, k)``; the result has
    ``ln_at``'s shape followed by ``ln_y``'s trailing axes.

    Examples
    --------
    >>> ln_f, ln_p = np.log([1e3, 1e4]), np.log([1e-10, 1e-13])  # -30 dB/decade
    >>> [round(float(v), 3) for v in np.exp(interpolate_log(ln_f, ln_p, np.log([1e2, 1e5]), "conservative")) / 1e-10]
    [1000.0, 0.001]
    >>> ln_p = np.log([1e-10, 1e-11])  # -10 dB/decade: close in it still rises 20 dB/decade
    >>> [round(float(v), 3) for v in np.exp(interpolate_log(ln_f, ln_p, np.log([1e2, 1e5]), "conservative")) / 1e-10]
    [100.0, 0.1]
    """
    return evaluate_pieces(extension_pieces(ln_x, ln_y, extrapolation), ln_x, np.asarray(ln_at, dtype=float))


def extension_pieces(
    ln_x: np.ndarray, ln_y: np.ndarray, extrapolation: Extrapolation
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The curve as ``n + 1`` straight pieces in ``(ln x, ln y)``: anchor x, anchor y, slope.

    Piece ``i`` serves ``ln_x[i-1] <= ln x < ln_x[i]``; piece 0 lies below the
    first point and piece ``n`` beyond the last, with the slopes of the
    extension mode (:func:`interpolate_log`). ``ln_y`` may be ``(n,)`` or ``(n, k)``.
    """
    n = ln_x.shape[0]
    trailing = ln_y.shape[1:]
    if n == 1:
        segments = np.empty((0,) + trailing)
        first = last = np.zeros(trailing)
    else:
        step = (ln_x[1:] - ln_x[:-1]).reshape((n - 1,) + (1,) * len(trailing))
        segments = (ln_y[1:] - ln_y[:-1]) / step
        first, last = segments[0], segments[-1]
    if extrapolation == "flat":
        below, beyond = np.zeros(trailing), np.zeros(trailing)
    elif extrapolation == "slope":
        below, beyond = first, last
    else:  # "conservative": rising at least 20 dB/decade toward the carrier; held, or still rising, beyond
        below, beyond = np.minimum(first, _CLOSE_IN_EXPONENT), np.maximum(last, 0.0)
    anchor_x = np.concatenate((ln_x[:1], ln_x))
    anchor_y = np.concatenate((ln_y[:1], ln_y))
    slope = np.concatenate((np.reshape(below, (1,) + trailing), segments, np.reshape(beyond, (1,) + trailing)))
    return anchor_x, anchor_y, slope


def evaluate_pieces(
    pieces: tuple[np.ndarray, np.ndarray, np.ndarray], ln_x: np.ndarray, ln_at: np.ndarray
) -> np.ndarray:
    """``ln y`` at ``ln_at`` from :func:`extension_pieces` (held below ``e**600`` so it stays finite)."""
    anchor_x, anchor_y, slope = pieces
    i = np.searchsorted(ln_x, ln_at, side="right")
    offset = ln_at - anchor_x[i]
    if anchor_y.ndim > 1:
        offset = offset.reshape(offset.shape + (1,) * (anchor_y.ndim - 1))
    return np.minimum(anchor_y[i] + slope[i] * offset, _LN_CEILING)
