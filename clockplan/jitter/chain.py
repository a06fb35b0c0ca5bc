"""Phase noise carried through a clock path, one contributor at a time.

A :class:`NoiseChain` is the phase noise of one clock signal, kept as separate
contributors (reference, PLL floor, VCO, buffer...) so a report can name the
dominant one. Each contributor is a linear single-sideband density L(f) sampled on
a common log-spaced offset grid, stored frequency-first as an ``(n, k)`` array;
discrete spurs are kept apart (a tone has no bandwidth) with the index of the
contributor that carries them.

Every operation returns a new chain:

- :func:`source_chain` -- start from a source's profile;
- :func:`divide` -- a divider by D lowers every contributor by ``20 log10 D`` and
  adds the divider's own additive floor;
- :func:`pll` -- a PLL multiplies its input noise by ``M**2`` (``+20 log10 M``) and
  low-passes it with ``|H|**2``, high-passes its VCO's noise with ``|1 - H|**2``,
  and adds its in-band floor ``FOM + 10 log10 f_PFD + 20 log10 N`` (plus an
  optional flicker term and a fractional-N modulator's shaped noise), all
  low-passed by ``|H|**2``;
- :func:`add_buffer` -- a fanout buffer's additive jitter, adding in
  root-sum-square;
- :func:`add_noise` -- any other independent noise already referred to this
  clock (e.g. a loop filter's resistor noise at the VCO);
- :func:`combine` -- add independent chains of the same clock.

Between grid points each contributor is read as a power law, the same rule as
for profiles, and integrated exactly; the grid must cover the band integrated.
No fixed grid decides what is counted: each chain keeps its own grid, and

- :func:`source_chain` puts every listed offset of the profile on it (between
  two listed offsets a profile *is* a power law, so its integral is exact), and
  keeps the profile's additive white floor apart (``NoiseChain.flat``), so the
  floor is integrated as white noise, exactly;
- :func:`pll` (and :func:`add_noise` given a function, :func:`combine`) first
  puts the corners of the loop (the magnitudes of the poles and zeros of its
  responses) and the VCO's listed offsets on the grid, then refines it
  (:func:`refine_grid`) until every density it multiplies in, or adds up, reads
  as a power law between neighbouring grid points to :data:`REFINE_TOLERANCE`;
  the noise already on the chain is carried onto the finer grid by the same
  power-law reading, which changes nothing it integrates to.

A divider's output is treated at offsets below half its output frequency; noise
folding from beyond that is not modelled (the estimate is a planning figure).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import cached_property, lru_cache

import numpy as np

from clockplan.errors import ClockplanError
from clockplan.jitter._checks import positive_number
from clockplan.jitter.integrate import check_band, check_carrier, segment_powers
from clockplan.jitter.loop import LoopResponse
from clockplan.jitter.profile import Extrapolation, PhaseNoiseProfile, interpolate_log
from clockplan.jitter.result import JitterResult

__all__ = [
    "DEFAULT_BUFFER_BAND_HZ",
    "REFINE_TOLERANCE",
    "NoiseChain",
    "log_grid",
    "refine_grid",
    "loop_corners_hz",
    "truncate",
    "source_chain",
    "divide",
    "pll",
    "pll_floor_dbc_hz",
    "modulator_density",
    "add_buffer",
    "add_noise",
    "add_tones",
    "combine",
]

# Additive jitter of buffers is usually specified over 12 kHz..20 MHz (common practice).
DEFAULT_BUFFER_BAND_HZ = (12e3, 20e6)

# Densities are kept strictly positive so their logarithms stay finite; 1e-300 is
# hundreds of dB below any real noise and contributes nothing measurable.
_TINY = 1e-300
_LN_TINY = math.log(_TINY)

#: How far (in natural-log units, i.e. relatively) a density may stray, at the middle
#: of a grid cell, from the power law the integration reads between the cell's ends
#: before :func:`refine_grid` cuts the cell. 5e-5 keeps a shaped integral within
#: about 2e-5 of the exact one (checked against adaptive quadrature in the tests).
REFINE_TOLERANCE = 5e-5

# The widest cell refine_grid starts from: 1/50 decade, in natural-log units.
_START_CELL = math.log(10.0) / 50.0
# Passes of refine_grid at most, the most pieces one pass cuts a cell into, and the
# narrowest cell it cuts (in ln f; 1e-12 is a millionth of a ppm).
_MAX_PASSES = 12
_MAX_PIECES = 8
# Cut a cell into _MARGIN times the pieces the square law asks for: the stray left in
# each is then about tolerance / _MARGIN**2 where the bend is even across the cell.
_MARGIN = 1.5
_MIN_CELL = 1e-12


def log_grid(f_min_hz: float = 1.0, f_max_hz: float = 1e9, points_per_decade: int = 50) -> np.ndarray:
    """Log-spaced offsets from ``f_min`` to ``f_max`` (both included).

    Examples
    --------
    >>> log_grid(10, 1000, 2).round(3).tolist()
    [10.0, 31.623, 100.0, 316.228, 1000.0]
    """
    low, high = check_band(f_min_hz, f_max_hz)
    if int(points_per_decade) < 1:
        raise ClockplanError(
            f"{points_per_decade!r} points per decade is too few",
            key="points_per_decade",
            hint="use at least 1; 50 is the default",
        )
    count = int(math.ceil(math.log10(high / low) * int(points_per_decade))) + 1
    return np.geomspace(low, high, count)


def _ln_columns(densities: "list[Callable[[np.ndarray], np.ndarray]]", offsets: np.ndarray) -> np.ndarray:
    """``ln`` of every density at ``offsets``, as columns ``(n, F)`` (each callable may give several).

    Values are held inside ``[1e-300, 1e300]`` (a NaN reads as 1e-300) so every logarithm is finite.
    """
    columns = [np.asarray(density(offsets), dtype=float).reshape(offsets.size, -1) for density in densities]
    table = columns[0] if len(columns) == 1 else np.concatenate(columns, axis=1)
    return np.log(np.fmin(np.fmax(table, _TINY), 1e300))


def refine_grid(
    offsets_hz: np.ndarray,
    densities: "Sequence[Callable[[np.ndarray], np.ndarray]]",
    *,
    tolerance: float = REFINE_TOLERANCE,
) -> np.ndarray:
    """Add grid points until every density reads as a power law between neighbours.

    A cell ``[f_a, f_b]`` is cut (in log frequency) while, for some density
    ``p``, ``ln p`` at the cell's middle strays more than ``tolerance`` from the
    straight line through ``ln p(f_a)`` and ``ln p(f_b)`` (the power law the
    integration reads there). The stray at the middle is the largest error of
    that reading for a smooth density, and it falls as the square of the cell's
    width, so a cell is cut into as many equal pieces as that predicts (with a
    margin); a cell needing more than a few is cut into a few and the pieces
    are checked again. Every density then integrates within
    about ``tolerance`` of its exact integral. The densities are taken as the
    contributors of one clock, and a stray is also weighed by the cell's power
    against the power of all of them around it (in the cell it was split from,
    at most 1/50 decade wide): a contributor far below the others there, or a
    density dipping to a zero that no power law reads (a modulator's notch at a
    multiple of the PFD frequency), stops splitting once what the cell could
    miss is below ``tolerance`` of the clock's noise around it.

    Parameters
    ----------
    offsets_hz
        Strictly increasing positive offsets; all of them stay on the grid.
    densities
        Callables from offsets (Hz, 1-D array) to a density at each, zero or
        above (an ``(n,)`` or ``(n, j)`` array): the contributors of one clock.
    tolerance
        The largest stray allowed, in natural-log units.

    Examples
    --------
    >>> grid = refine_grid(np.array([1.0, 1e4]), [lambda f: 1.0 + f])  # white plus rising: bends at 1 Hz
    >>> bool(grid.size > 200), float(grid[0]), float(grid[-1])
    (True, 1.0, 10000.0)
    >>> refine_grid(np.array([1.0, 1e4]), [lambda f: 3.0 / f**2]).size  # a power law: 1/50 decade is enough
    201
    """
    grid = np.asarray(offsets_hz, dtype=float)
    if not densities or grid.size < 2:
        return grid
    return _refine(grid, densities, tolerance)[0]


def _refine(
    grid: np.ndarray, densities: "Sequence[Callable[[np.ndarray], np.ndarray]]", tolerance: float
) -> tuple[np.ndarray, np.ndarray]:
    """:func:`refine_grid`, also giving ``ln`` of the densities at every point of the new grid, ``(n, F)``."""
    # No cell starts wider than 1/50 decade, so none hides a feature from the middle test
    # and a notch's cell is measured against the power near it, not decades away.
    widths = np.diff(np.log(grid))
    wide = np.flatnonzero(widths > _START_CELL * (1 + 1e-9))
    if wide.size:
        pieces = [grid]
        for i in wide:
            count = int(math.ceil(widths[i] / _START_CELL))
            pieces.append(grid[i] * np.exp(widths[i] * np.arange(1, count) / count))
        grid = np.unique(np.concatenate(pieces))
    ln_f = np.log(grid)
    n = ln_f.size
    width = ln_f[1:] - ln_f[:-1]
    mid_f = ln_f[:-1] + 0.5 * width
    # One call per pass: the points, and the middles of the cells to check.
    both = _ln_columns(list(densities), np.concatenate((grid, np.exp(mid_f))))
    ln_p, mid_p = both[:n], both[n:]
    a_f, b_f, a_p, b_p = ln_f[:-1], ln_f[1:], ln_p[:-1], ln_p[1:]
    # Power of all densities together per unit of ln f in each starting cell (read
    # roughly, from its ends): the scale a stray is weighed against.
    origin = 0.5 * (np.exp(a_p + a_f[:, None]) + np.exp(b_p + b_f[:, None])).sum(axis=1)
    added: list[np.ndarray] = []
    added_p: list[np.ndarray] = []
    for _ in range(_MAX_PASSES):
        stray = np.abs(mid_p - 0.5 * (a_p + b_p))
        # The cell's power, read roughly through its middle too (an end at a zero reads as nothing).
        level = np.maximum(np.maximum(a_p, b_p), mid_p) + mid_f[:, None]
        weighed = np.minimum(stray, 1.0) * np.exp(level) > tolerance * origin[:, None]
        worst = np.where((stray > tolerance) & weighed, stray, 0.0).max(axis=1)
        split = np.flatnonzero((worst > 0) & (width > _MIN_CELL))
        if not split.size:
            break
        # A smooth density's stray falls as the square of the cell width: cut each cell
        # into as many pieces as that predicts (with a margin); a cell that needs more
        # than _MAX_PIECES (a sharp bend, a notch) is cut into that many and its pieces
        # are checked again on the next pass.
        wanted = np.ceil(_MARGIN * np.sqrt(worst[split] / tolerance))
        pieces = np.clip(wanted, 2, _MAX_PIECES).astype(np.intp)
        again = np.repeat(wanted > _MAX_PIECES, pieces)
        cell = np.repeat(split, pieces)
        step = np.arange(cell.size) - np.repeat(np.cumsum(pieces) - pieces, pieces)  # 0..pieces-1 per cell
        fraction = step / np.repeat(pieces, pieces)
        left_f = a_f[cell] + width[cell] * fraction
        inner = step > 0
        right_f = b_f[cell]
        follows = np.flatnonzero(inner[1:])
        right_f[follows] = left_f[follows + 1]
        new_f = left_f[inner]
        mid_f = 0.5 * (left_f[again] + right_f[again])
        both = _ln_columns(list(densities), np.exp(np.concatenate((new_f, mid_f))))
        left_p = a_p[cell]
        left_p[inner] = both[: new_f.size]
        right_p = b_p[cell]
        right_p[follows] = left_p[follows + 1]
        added.append(new_f)
        added_p.append(both[: new_f.size])
        a_f, b_f, a_p, b_p, origin = left_f[again], right_f[again], left_p[again], right_p[again], origin[cell[again]]
        mid_p = both[new_f.size :]
        width = b_f - a_f
        if not a_f.size:
            break
    if not added:
        return grid, ln_p
    new_f = np.concatenate(added)
    order = np.argsort(np.concatenate((ln_f, new_f)), kind="stable")
    return np.concatenate((grid, np.exp(new_f)))[order], np.concatenate([ln_p] + added_p)[order]


def loop_corners_hz(loop: LoopResponse) -> np.ndarray:
    """The corners of a loop's responses: magnitudes (in Hz) of the poles and zeros of ``G``, ``H`` and ``E``.

    Examples
    --------
    >>> from clockplan.jitter.loop import second_order_loop
    >>> loop_corners_hz(second_order_loop(100e3, damping=1.0)).round(1).tolist()  # zero at wn/2, double pole at wn
    [20141.9, 40283.7]
    """
    key = tuple(tuple(float(c) for c in p) for p in (loop.open_num, loop.open_den, loop.closed_den))
    return np.array(_corners(key))


@lru_cache(maxsize=256)
def _corners(polynomials: tuple[tuple[float, ...], ...]) -> tuple[float, ...]:
    roots = [np.roots(p) for p in polynomials if len(p) > 1]
    magnitudes = np.abs(np.concatenate(roots)) / (2.0 * math.pi) if roots else np.empty(0)
    magnitudes = np.sort(magnitudes[np.isfinite(magnitudes) & (magnitudes > 0)])
    if magnitudes.size > 1:
        # A repeated root comes out of np.roots a few ulps apart: keep one of each.
        magnitudes = magnitudes[np.concatenate(([True], np.diff(magnitudes) > 1e-6 * magnitudes[1:]))]
    return tuple(float(m) for m in magnitudes)


def _power_polynomial(coefficients: np.ndarray) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """Even and odd parts of a polynomial in ``s``, as polynomials in ``x = -w**2`` (highest power first).

    With them ``|P(j w)|**2 = even(x)**2 + w**2 odd(x)**2``: real arithmetic only.
    """
    low_first = [float(c) for c in coefficients[::-1]]
    return tuple(low_first[0::2][::-1]), tuple(low_first[1::2][::-1])


def _horner(coefficients: tuple[float, ...], x: np.ndarray) -> np.ndarray | float:
    value: np.ndarray | float = 0.0
    for c in coefficients:
        value = value * x + c
    return value


def _loop_powers(loop: LoopResponse) -> Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]]:
    """``offsets -> (|H|**2, |1 - H|**2)``, both at once (they share their denominator), as ``LoopResponse`` gives them."""
    parts = [_power_polynomial(p) for p in (loop.closed_den, loop.closed_num, loop.error_num)]

    def powers(offsets: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        w2 = (2.0 * math.pi * offsets) ** 2
        x = -w2
        den, num, err = (_horner(even, x) ** 2 + w2 * _horner(odd, x) ** 2 for even, odd in parts)
        return num / den, err / den

    return powers


def _on_grid(grid: np.ndarray, offsets: object) -> np.ndarray:
    """``grid`` with the ``offsets`` inside its span added."""
    extra = np.asarray(offsets, dtype=float).reshape(-1)
    extra = extra[np.isfinite(extra) & (extra > grid[0]) & (extra < grid[-1])]
    return np.union1d(grid, extra) if extra.size else grid


def _ratio(value: object, key: str) -> float:
    return positive_number(value, key=key, what=key, hint="give a ratio above 0, e.g. 4 or 201/2")


@dataclass(frozen=True, eq=False)
class NoiseChain:
    """The phase noise of one clock signal, per contributor.

    Parameters
    ----------
    carrier_hz
        The clock's frequency (a float: this is noise analysis, not the exact plan).
    offsets_hz
        The common offset grid, shape ``(n,)``.
    names
        Contributor names, ``k`` of them, distinct.
    density
        Linear single-sideband L(f) per contributor, frequency-first ``(n, k)``.
    spur_offsets_hz, spur_power, spur_owner
        Discrete tones: offset, linear power (dBc as a ratio) and the index in
        ``names`` of the contributor carrying each.
    flat
        The white part of each contributor's density, shape ``(k,)`` (zeros by
        default): it is included in ``density`` and integrated as white noise,
        exactly; the rest is read as a power law between grid points.
    listed_hz
        Per contributor, shape ``(k, 2)``: the offsets between which it comes
        from listed data (a profile's first and last points); ``(0, inf)`` (the
        default) for modelled noise. Outside them the noise is extrapolated.

    Examples
    --------
    >>> chain = source_chain("ref", PhaseNoiseProfile.flat(-150), 100e6, log_grid(1e3, 1e7, 10))
    >>> chain.names, chain.density.shape
    (('ref',), (41, 1))
    """

    carrier_hz: float
    offsets_hz: np.ndarray
    names: tuple[str, ...]
    density: np.ndarray
    spur_offsets_hz: np.ndarray
    spur_power: np.ndarray
    spur_owner: np.ndarray
    flat: np.ndarray | None = None
    listed_hz: np.ndarray | None = None

    def __post_init__(self) -> None:
        check_carrier(self.carrier_hz)
        k = len(self.names)
        flat = np.zeros(k) if self.flat is None else np.asarray(self.flat, dtype=float)
        if self.listed_hz is None:
            listed = np.full((k, 2), math.inf)
            listed[:, 0] = 0.0
        else:
            listed = np.asarray(self.listed_hz, dtype=float)
        if flat.shape != (k,) or listed.shape != (k, 2):
            raise ClockplanError(
                f"flat shape {flat.shape} or listed_hz shape {listed.shape} does not match {k} contributors",
                key="flat",
                hint="give one white level and one (first, last) listed range per contributor",
            )
        object.__setattr__(self, "flat", flat)
        object.__setattr__(self, "listed_hz", listed)
        if len(set(self.names)) != len(self.names):
            raise ClockplanError(
                f"contributor names repeat: {self.names}",
                key="names",
                hint="give each contributor a distinct name",
            )
        if self.density.shape != (self.offsets_hz.shape[0], len(self.names)):
            raise ClockplanError(
                f"density shape {self.density.shape} does not match "
                f"{self.offsets_hz.shape[0]} offsets x {len(self.names)} contributors",
                key="density",
                hint="store one column per contributor, one row per offset",
            )

    @property
    def total_density(self) -> np.ndarray:
        """Linear L(f) of all contributors together, shape ``(n,)``."""
        return self.density.sum(axis=1)

    def total_dbc(self) -> np.ndarray:
        """L(f) of all contributors together in dBc/Hz."""
        return 10.0 * np.log10(self.total_density)

    def contributor(self, name: str) -> np.ndarray:
        """Linear L(f) of one contributor."""
        if name not in self.names:
            raise ClockplanError(
                f"no contributor named {name!r}",
                key="name",
                hint=f"the contributors are {', '.join(self.names)}",
            )
        return self.density[:, self.names.index(name)]

    def jitter(self, f_low_hz: float, f_high_hz: float, budget_seconds: float | None = None) -> JitterResult:
        """RMS jitter over a band: total, per contributor (largest first), against a budget.

        Examples
        --------
        >>> chain = source_chain("ref", PhaseNoiseProfile.flat(-150), 100e6, log_grid(1e3, 1e8, 10))
        >>> r = chain.jitter(12e3, 20e6, budget_seconds=1e-12)
        >>> r.dominant, r.passes
        ('ref', True)
        """
        low, high = check_band(f_low_hz, f_high_hz)
        power = self.band_power(low, high)
        in_band = (self.spur_offsets_hz >= low) & (self.spur_offsets_hz <= high)
        power = power + np.bincount(
            self.spur_owner[in_band], weights=self.spur_power[in_band], minlength=len(self.names)
        )
        seconds = np.sqrt(2.0 * power) / (2.0 * math.pi * self.carrier_hz)
        order = np.argsort(-seconds, kind="stable")
        contributions = tuple((self.names[i], float(seconds[i])) for i in order)
        total = float(math.sqrt(float(np.sum(seconds**2))))
        return JitterResult(self.carrier_hz, low, high, total, contributions, budget_seconds)


    def _check_inside(self, low: float, high: float) -> None:
        grid = self.offsets_hz
        # A relative slack of 1e-12 lets a band edge equal a grid end despite rounding.
        if low < grid[0] * (1 - 1e-12) or high > grid[-1] * (1 + 1e-12):
            raise ClockplanError(
                f"band {low:g}..{high:g} Hz reaches outside the analysis grid {grid[0]:g}..{grid[-1]:g} Hz",
                key="band",
                hint="build the chain on a wider grid (log_grid(f_min, f_max))",
            )

    def band_power(self, f_low_hz: float, f_high_hz: float) -> np.ndarray:
        """Single-sideband power of each contributor over the band (spurs left out), shape ``(k,)``.

        Examples
        --------
        >>> chain = source_chain("ref", PhaseNoiseProfile.flat(-100), 1e8, log_grid(1e3, 1e6, 5))
        >>> chain.band_power(1e3, 2e3).round(20).tolist()  # 1e-10 per Hz over 1 kHz
        [1e-07]
        """
        low, high = check_band(f_low_hz, f_high_hz)
        self._check_inside(low, high)
        if not self.names:
            return np.zeros(0)
        # integrate_log_curve's sum, with the segments' integrals kept for the next band.
        ln_f, curve, segments = self._ln_offsets, self._ln_curve, self._segments
        a, b = math.log(low), math.log(high)
        lo = int(np.searchsorted(ln_f, a, side="right"))
        hi = int(np.searchsorted(ln_f, b, side="left"))
        ends = _read_curve(ln_f, curve, np.array([a, b]))
        if hi == lo:  # no grid point strictly inside the band
            power = _partial_cells(np.array([a]), np.array([b]), ends[:1], ends[1:]).sum(axis=0)
        else:  # the whole cells inside, and the two partial cells at the band's edges
            starts, stops = np.array([a, ln_f[hi - 1]]), np.array([ln_f[lo], b])
            partial = _partial_cells(starts, stops, np.stack((ends[0], curve[hi - 1])), np.stack((curve[lo], ends[1])))
            power = segments[lo : hi - 1].sum(axis=0) + partial.sum(axis=0)
        return power + self.flat * (high - low)

    @cached_property
    def _ln_offsets(self) -> np.ndarray:
        return np.log(self.offsets_hz)

    @cached_property
    def _ln_curve(self) -> np.ndarray:
        """``ln`` of each contributor's density less its white part (read as a power law between points)."""
        return np.log(np.maximum(self.density - self.flat, _TINY))

    @cached_property
    def _segments(self) -> np.ndarray:
        """The power-law integral of each contributor's curve over each grid cell, ``(n - 1, k)``."""
        return segment_powers(self._ln_offsets, self._ln_curve)

    def extrapolated_power(self, f_low_hz: float, f_high_hz: float) -> np.ndarray:
        """The part of :meth:`band_power` from offsets outside each contributor's listed data, shape ``(k,)``.

        Examples
        --------
        >>> profile = PhaseNoiseProfile.from_points([(1e4, -100), (1e5, -100)])
        >>> chain = source_chain("ref", profile, 1e8, log_grid(1e3, 1e6, 5))
        >>> float(chain.extrapolated_power(1e4, 1e5)[0]), bool(chain.extrapolated_power(1e5, 2e5)[0] > 0)
        (0.0, True)
        """
        low, high = check_band(f_low_hz, f_high_hz)
        out = np.zeros(len(self.names))
        pieces: dict[tuple[float, float], list[int]] = {}  # each sub-band integrated once
        for j, (first, last) in enumerate(self.listed_hz):
            if low < first:
                pieces.setdefault((low, min(high, first)), []).append(j)
            if high > last:
                pieces.setdefault((max(low, last), high), []).append(j)
        for (start, stop), columns in pieces.items():
            out[columns] += self.band_power(start, stop)[columns]
        return out


_FIELDS = tuple(f for f in NoiseChain.__dataclass_fields__)


def _made(*values: object) -> NoiseChain:
    """A NoiseChain from fields this module has already made consistent (no checks: it is on every step)."""
    chain = object.__new__(NoiseChain)
    for name, value in zip(_FIELDS, values):
        object.__setattr__(chain, name, value)
    return chain


def _resample(chain: NoiseChain, grid: np.ndarray) -> NoiseChain:
    """The same chain on a finer ``grid`` (a superset of its own, same span).

    Each contributor's curve (its density less its white part) is read at the new
    points by the same power law the integration uses between the old ones, so
    nothing it integrates to changes.
    """
    if grid is chain.offsets_hz or np.array_equal(grid, chain.offsets_hz):
        return chain
    density = np.exp(_read_curve(chain._ln_offsets, chain._ln_curve, np.log(grid))) + chain.flat
    density[density < 2 * _TINY] = 0.0
    return _made(
        chain.carrier_hz,
        grid,
        chain.names,
        density,
        chain.spur_offsets_hz,
        chain.spur_power,
        chain.spur_owner,
        chain.flat,
        chain.listed_hz,
    )


def truncate(chain: NoiseChain, f_max_hz: float) -> NoiseChain:
    """The same chain on offsets up to ``f_max_hz`` only (inside its span); nothing below it changes.

    The new last point is read by the same power law the integration uses there,
    so every band up to ``f_max_hz`` integrates to what it did.

    Examples
    --------
    >>> chain = source_chain("ref", PhaseNoiseProfile.flat(-150), 1e8, log_grid(1e3, 1e7, 10))
    >>> short = truncate(chain, 2e5)
    >>> float(short.offsets_hz[-1]), bool(np.isclose(short.band_power(1e3, 2e5), chain.band_power(1e3, 2e5)).all())
    (200000.0, True)
    """
    grid = chain.offsets_hz
    top = float(f_max_hz)
    if not (grid[0] < top < grid[-1]):
        return chain
    keep = int(np.searchsorted(grid, top, side="left"))
    end = np.exp(_read_curve(chain._ln_offsets, chain._ln_curve, np.array([math.log(top)]))) + chain.flat
    return _made(
        chain.carrier_hz,
        np.append(grid[:keep], top),
        chain.names,
        np.vstack((chain.density[:keep], end)),
        chain.spur_offsets_hz,
        chain.spur_power,
        chain.spur_owner,
        chain.flat,
        chain.listed_hz,
    )


def _curve_function(chain: NoiseChain, columns: np.ndarray) -> "Callable[[np.ndarray], np.ndarray]":
    """The chain's reading of some contributors at any offset (curve by power law, plus white part)."""
    ln_f = chain._ln_offsets
    curve = chain._ln_curve[:, columns]
    flat = chain.flat[columns]


    def density(offsets: np.ndarray) -> np.ndarray:
        return np.exp(_read_curve(ln_f, curve, np.log(offsets))) + flat

    return density


def _partial_cells(ln_fa: np.ndarray, ln_fb: np.ndarray, ln_pa: np.ndarray, ln_pb: np.ndarray) -> np.ndarray:
    """The power-law integral over a few cells ``[fa, fb]`` at once: :func:`segment_powers`' closed form."""
    width = (ln_fb - ln_fa)[:, None]
    x = ln_pb - ln_pa + width
    ratio = np.ones_like(x)
    np.divide(np.expm1(x), x, out=ratio, where=x != 0)
    return np.exp(ln_pa + ln_fa[:, None]) * width * ratio


def _read_curve(ln_f: np.ndarray, curve: np.ndarray, ln_at: np.ndarray) -> np.ndarray:
    """``ln`` of ``(n, k)`` curves at points inside the grid: :func:`interpolate_log`'s reading, on few points fast."""
    j = np.minimum(np.maximum(np.searchsorted(ln_f, ln_at), 1), ln_f.size - 1)  # (np.clip costs more here)
    t = np.minimum(np.maximum((ln_at - ln_f[j - 1]) / (ln_f[j] - ln_f[j - 1]), 0.0), 1.0)[:, None]
    below = curve[j - 1]
    return below + t * (curve[j] - below)


def _with_contributor(
    chain: NoiseChain,
    name: str,
    density: np.ndarray,
    spur_offsets: np.ndarray | None = None,
    spur_power: np.ndarray | None = None,
    *,
    flat: float = 0.0,
    listed_hz: tuple[float, float] = (0.0, math.inf),
) -> NoiseChain:
    """Add a contributor (or add onto an existing one of the same name).

    ``flat`` is the white part of ``density`` (see :class:`NoiseChain`);
    ``listed_hz`` the offsets between which it is listed data.
    """
    names = chain.names
    white = chain.flat.copy()
    listed = chain.listed_hz.copy()
    if name in names:
        index = names.index(name)
        table = chain.density.copy()
        table[:, index] += density
        white[index] += flat
        listed[index] = (max(listed[index, 0], listed_hz[0]), min(listed[index, 1], listed_hz[1]))
    else:
        index = len(names)
        names = names + (name,)
        table = np.column_stack((chain.density, density))
        white = np.append(white, flat)
        listed = np.vstack((listed, listed_hz))
    offsets, powers, owners = chain.spur_offsets_hz, chain.spur_power, chain.spur_owner
    if spur_offsets is not None and spur_offsets.size:
        offsets = np.concatenate((offsets, spur_offsets))
        powers = np.concatenate((powers, spur_power))
        owners = np.concatenate((owners, np.full(spur_offsets.size, index, dtype=np.intp)))
    return _made(chain.carrier_hz, chain.offsets_hz, names, table, offsets, powers, owners, white, listed)


def _spur_arrays(profile: PhaseNoiseProfile) -> tuple[np.ndarray, np.ndarray]:
    offsets = np.array([s.offset_hz for s in profile.spurs], dtype=float)
    powers = np.array([s.power for s in profile.spurs], dtype=float)
    return offsets, powers


def source_chain(
    name: str,
    profile: PhaseNoiseProfile,
    carrier_hz: float,
    offsets_hz: np.ndarray | None = None,
    *,
    extrapolation: Extrapolation = "flat",
) -> NoiseChain:
    """Start a chain from a source's phase-noise profile at ``carrier_hz``.

    Parameters
    ----------
    name
        The contributor's name in reports, e.g. ``"reference"``.
    profile
        The source's phase noise.
    carrier_hz
        The source's frequency.
    offsets_hz
        The analysis grid's span and base points; :func:`log_grid` (1 Hz..1 GHz)
        by default. Every listed offset of the profile inside it is added.
    extrapolation
        How to extend the profile past its listed offsets.

    Examples
    --------
    >>> peak = PhaseNoiseProfile.from_points([(1e4, -150), (1.01e4, -100), (1.02e4, -150)])
    >>> chain = source_chain("ref", peak, 1e8, log_grid(1e3, 1e6, 10))
    >>> bool(np.isin([1e4, 1.01e4, 1.02e4], chain.offsets_hz).all())  # the peak is on the grid
    True
    """
    grid = log_grid() if offsets_hz is None else np.asarray(offsets_hz, dtype=float)
    if grid.ndim != 1 or grid.size < 2 or np.any(np.diff(grid) <= 0) or grid[0] <= 0:
        raise ClockplanError(
            "the analysis grid must be at least two increasing positive offsets",
            key="offsets_hz",
            hint="use log_grid(f_min, f_max, points_per_decade)",
        )
    grid = _on_grid(grid, profile.offsets_hz)
    empty = NoiseChain(
        check_carrier(carrier_hz),
        grid,
        (),
        np.empty((grid.size, 0)),
        np.empty(0),
        np.empty(0),
        np.empty(0, dtype=np.intp),
    )
    spur_offsets, spur_powers = _spur_arrays(profile)
    listed = (float(profile.offsets_hz[0]), float(profile.offsets_hz[-1]))
    return _with_contributor(
        empty,
        name,
        profile.density_at(grid, extrapolation),
        spur_offsets,
        spur_powers,
        flat=profile.floor_power,
        listed_hz=listed,
    )


def divide(
    chain: NoiseChain, ratio: object, *, floor_dbc_hz: float | None = None, name: str = "divider"
) -> NoiseChain:
    """A frequency divider by ``ratio``: every contributor drops ``20 log10(ratio)`` dB.

    The divider's own additive floor (referred to its output), if given, is added
    as the contributor ``f"{name} floor"``; the output cannot be quieter than it.

    Examples
    --------
    >>> chain = source_chain("ref", PhaseNoiseProfile.flat(-130), 100e6, log_grid(1e3, 1e6, 5))
    >>> out = divide(chain, 10)
    >>> out.carrier_hz, round(float(out.total_dbc()[0]), 6)
    (10000000.0, -150.0)
    """
    d = _ratio(ratio, "divider ratio")
    scaled = NoiseChain(
        chain.carrier_hz / d,
        chain.offsets_hz,
        chain.names,
        chain.density / (d * d),
        chain.spur_offsets_hz,
        chain.spur_power / (d * d),
        chain.spur_owner,
        chain.flat / (d * d),
        chain.listed_hz,
    )
    if floor_dbc_hz is None:
        return scaled
    level = 10.0 ** (float(floor_dbc_hz) / 10.0)
    return _with_contributor(scaled, f"{name} floor", np.full(chain.offsets_hz.size, level), flat=level)


def pll_floor_dbc_hz(fom_dbc_hz: float, f_pfd_hz: float, feedback_n: float) -> float:
    """In-band PLL floor from a normalised figure of merit: ``FOM + 10 log10 f_PFD + 20 log10 N``.

    Examples
    --------
    >>> pll_floor_dbc_hz(-226.0, 100e6, 50)  # -226 + 80 + 33.98
    -112.02059991327963
    """
    return float(fom_dbc_hz) + 10.0 * math.log10(float(f_pfd_hz)) + 20.0 * math.log10(float(feedback_n))


def modulator_density(offsets_hz: np.ndarray, f_pfd_hz: float, order: int) -> np.ndarray:
    """Phase-noise density of an ``order``-th order MASH delta-sigma fractional-N modulator.

    ``L(f) = (2 pi)**2 / (12 f_PFD) * (2 sin(pi f / f_PFD))**(2 (order - 1))``,
    referred to the VCO output before loop filtering (the textbook result for a
    modulator whose last-stage quantisation error is white with variance 1/12;
    stated here from memory and checked in the tests against a simulated
    modulator).

    Examples
    --------
    >>> float(modulator_density(np.array([1e6]), 100e6, 1)[0]) == (2 * math.pi) ** 2 / 12 / 100e6
    True
    """
    m = int(order)
    if m < 1 or m != order:
        raise ClockplanError(
            f"modulator order {order!r} is not a positive integer",
            key="modulator_order",
            hint="a fractional-N modulator's order is 1, 2, 3 or 4",
        )
    shaping = (2.0 * np.sin(np.pi * np.asarray(offsets_hz, dtype=float) / f_pfd_hz)) ** (2 * (m - 1))
    return (2.0 * math.pi) ** 2 / (12.0 * f_pfd_hz) * shaping


def pll(
    chain: NoiseChain,
    multiplication: object,
    loop: LoopResponse,
    *,
    name: str = "pll",
    vco: PhaseNoiseProfile | None = None,
    fom_dbc_hz: float | None = None,
    flicker_fom_dbc_hz: float | None = None,
    f_pfd_hz: float | None = None,
    modulator_order: int | None = None,
    vco_extrapolation: Extrapolation = "flat",
) -> NoiseChain:
    """A PLL locking a VCO at ``multiplication`` times the input clock.

    Parameters
    ----------
    chain
        The input (reference) clock's noise.
    multiplication
        ``f_VCO / f_input`` (a feedback divider N after a reference divider R is N/R).
    loop
        The loop response; ``H`` must have unity in-band gain (``1/N`` inside ``G``).
    name
        Prefix of the contributors this PLL adds: ``"<name> floor"``,
        ``"<name> VCO"``, ``"<name> modulator"``.
    vco
        The free-running VCO's phase noise at the VCO frequency.
    fom_dbc_hz
        Normalised in-band figure of merit (dBc/Hz at 1 Hz PFD, N = 1).
    flicker_fom_dbc_hz
        Normalised flicker figure: adds ``flicker + 20 log10 f_VCO - 10 log10 f``.
    f_pfd_hz
        Phase-detector frequency; the input clock's frequency by default (R = 1).
    modulator_order
        For a fractional-N loop: the MASH modulator's order, adding its shaped noise.
    vco_extrapolation
        How to extend the VCO profile past its listed offsets.

    Examples
    --------
    >>> from clockplan.jitter.loop import second_order_loop
    >>> ref = source_chain("ref", PhaseNoiseProfile.flat(-160), 25e6, log_grid(10, 1e8, 20))
    >>> out = pll(ref, 100, second_order_loop(1e3, damping=1.0), fom_dbc_hz=-226)
    >>> out.carrier_hz, out.names
    (2500000000.0, ('ref', 'pll floor'))
    """
    m = _ratio(multiplication, "PLL multiplication")
    f_vco = chain.carrier_hz * m
    f_pfd = chain.carrier_hz if f_pfd_hz is None else _ratio(f_pfd_hz, "PFD frequency")
    gain = m * m

    def in_band_floor(offsets: np.ndarray) -> np.ndarray:
        floor = np.zeros(offsets.size)
        if fom_dbc_hz is not None:
            floor += 10.0 ** (pll_floor_dbc_hz(fom_dbc_hz, f_pfd, f_vco / f_pfd) / 10.0)
        if flicker_fom_dbc_hz is not None:
            flicker_db = float(flicker_fom_dbc_hz) + 20.0 * math.log10(f_vco) - 10.0 * np.log10(offsets)
            floor += 10.0 ** (flicker_db / 10.0)
        return floor

    carried = _curve_function(chain, np.arange(len(chain.names)))
    loop_powers = _loop_powers(loop)
    vco_density = vco.reader(vco_extrapolation) if vco is not None else None
    own: list[str] = []  # this PLL's contributors, in the order shaped() gives them
    if fom_dbc_hz is not None or flicker_fom_dbc_hz is not None:
        own.append(f"{name} floor")
    if modulator_order is not None:
        own.append(f"{name} modulator")
    if vco is not None:
        own.append(f"{name} VCO")  # last

    def shaped(offsets: np.ndarray) -> np.ndarray:
        """Every contributor at the PLL output: the input's (as the chain reads them), then this PLL's own."""
        lowpass, highpass = loop_powers(offsets)
        columns = [carried(offsets) * (gain * lowpass)[:, None]]
        if fom_dbc_hz is not None or flicker_fom_dbc_hz is not None:
            columns.append((in_band_floor(offsets) * lowpass)[:, None])
        if modulator_order is not None:
            columns.append((modulator_density(offsets, f_pfd, modulator_order) * lowpass)[:, None])
        if vco_density is not None:
            columns.append((vco_density(offsets) * highpass)[:, None])
        return np.concatenate(columns, axis=1)

    # The grid: the loop's corners, the VCO's listed offsets and the modulator's notches
    # and peaks on it, then refined until every contributor reads as a power law between
    # grid points.
    corners = [loop_corners_hz(loop)]
    if modulator_order is not None:
        corners.append(np.arange(1, 2 * chain.offsets_hz[-1] / f_pfd + 1) * (f_pfd / 2))
    if vco is not None:
        corners.append(vco.offsets_hz)
    grid, ln_table = _refine(_on_grid(chain.offsets_hz, np.concatenate(corners)), [shaped], REFINE_TOLERANCE)
    table = np.exp(ln_table)
    table[ln_table <= _LN_TINY] = 0.0
    carried_count = len(chain.names)
    out = NoiseChain(
        f_vco,
        grid,
        chain.names,
        table[:, :carried_count],
        chain.spur_offsets_hz,
        chain.spur_power * gain * loop_powers(chain.spur_offsets_hz)[0],
        chain.spur_owner,
        listed_hz=chain.listed_hz,
    )
    shaped_here = own[:-1] if vco is not None else own
    for j, contributor in enumerate(shaped_here):
        out = _with_contributor(out, contributor, table[:, carried_count + j])
    if vco is not None:
        spur_offsets, spur_powers = _spur_arrays(vco)
        out = _with_contributor(
            out,
            own[-1],
            table[:, -1],
            spur_offsets,
            spur_powers * loop_powers(spur_offsets)[1],
            listed_hz=(float(vco.offsets_hz[0]), float(vco.offsets_hz[-1])),
        )
    return out


def add_buffer(
    chain: NoiseChain,
    additive_jitter_s: float,
    *,
    name: str = "buffer",
    band_hz: tuple[float, float] = DEFAULT_BUFFER_BAND_HZ,
) -> NoiseChain:
    """A fanout buffer adding ``additive_jitter_s`` RMS (specified over ``band_hz``).

    The additive jitter becomes the white density that integrates to exactly that
    figure over its specification band, so it adds in root-sum-square there and
    scales with the bandwidth elsewhere.

    Examples
    --------
    >>> chain = source_chain("ref", PhaseNoiseProfile.flat(-200), 100e6, log_grid(1e3, 1e8, 10))
    >>> r = add_buffer(chain, 100e-15).jitter(12e3, 20e6)
    >>> r.dominant, round(r.rms_seconds * 1e15, 1)
    ('buffer', 100.0)
    """
    seconds = positive_number(
        additive_jitter_s,
        key="additive_jitter",
        what="additive jitter",
        hint="give the buffer's additive RMS jitter in seconds, e.g. 50e-15 for 50 fs",
        allow_zero=True,
    )
    low, high = check_band(*band_hz)
    phase_variance = (2.0 * math.pi * chain.carrier_hz * seconds) ** 2
    level = phase_variance / (2.0 * (high - low))
    return _with_contributor(chain, name, np.full(chain.offsets_hz.size, level), flat=level)


def add_noise(chain: NoiseChain, name: str, density: object) -> NoiseChain:
    """Add an independent noise, as linear L(f) on the chain's offset grid or as a function of offset.

    Given a function, the chain's grid is first refined (:func:`refine_grid`)
    until the noise reads as a power law between grid points, so the integral
    of the shaped noise does not depend on the grid it started on.

    Parameters
    ----------
    chain
        The clock's noise so far.
    name
        The new contributor's name (an existing one of that name grows by it).
    density
        Linear single-sideband density (a ratio per Hz, not dBc), zero or
        above: either at each of ``chain.offsets_hz``, or a callable from offsets
        in Hz (a 1-D array) to the density at each.

    Examples
    --------
    >>> grid = log_grid(1e3, 1e6, 5)
    >>> chain = source_chain("ref", PhaseNoiseProfile.flat(-150), 1e8, grid)
    >>> round(float(add_noise(chain, "extra", np.full(grid.size, 1e-15)).total_dbc()[0]), 2)
    -146.99
    """
    if callable(density):
        shapes: list[Callable[[np.ndarray], np.ndarray]] = [density]
        if name in chain.names:  # adding onto a contributor: resolve the sum
            shapes.append(_curve_function(chain, np.array([chain.names.index(name)])))
        chain = _resample(chain, refine_grid(chain.offsets_hz, shapes))
        density = density(chain.offsets_hz)
    values = np.asarray(density, dtype=float)
    if values.shape != chain.offsets_hz.shape or not np.all(np.isfinite(values)) or np.any(values < 0):
        raise ClockplanError(
            f"noise {name!r} must be {chain.offsets_hz.size} finite densities of zero or above",
            key="density",
            hint="give the linear L(f) at each offset of the chain's grid",
        )
    return _with_contributor(chain, name, values)


def add_tones(chain: NoiseChain, name: str, offsets_hz: object, power: object) -> NoiseChain:
    """Add discrete phase-modulation lines already referred to this clock, as contributor ``name``.

    ``power`` is each line's single-sideband power as a ratio (phase variance
    ``2 * power``), e.g. a spread's harmonics (:func:`clockplan.jitter.spread.spread_tones`).
    Later operations treat them as spurs: a divider lowers them, a PLL filters them.

    Examples
    --------
    >>> grid = log_grid(1e3, 1e6, 5)
    >>> chain = source_chain("ref", PhaseNoiseProfile.flat(-200), 1e8, grid)
    >>> tones = add_tones(chain, "spread", [3e4], [1e-6])
    >>> round(tones.jitter(1e4, 1e5).rms_seconds * 1e12, 3)  # sqrt(2e-6) / (2 pi 1e8)
    2.251
    """
    offsets = np.atleast_1d(np.asarray(offsets_hz, dtype=float))
    powers = np.atleast_1d(np.asarray(power, dtype=float))
    if offsets.shape != powers.shape or not (np.all(np.isfinite(offsets)) and np.all(offsets > 0)) or not (
        np.all(np.isfinite(powers)) and np.all(powers >= 0)
    ):
        raise ClockplanError(
            f"tones {name!r} need as many positive finite offsets as finite powers of zero or above",
            key="tones",
            hint="give the offsets in Hz and each line's power as a ratio",
        )
    return _with_contributor(chain, name, np.zeros(chain.offsets_hz.size), offsets, powers)


def combine(*chains: NoiseChain) -> NoiseChain:
    """Add independent noise chains of the same clock; same-named contributors add up.

    Examples
    --------
    >>> grid = log_grid(1e3, 1e6, 5)
    >>> a = source_chain("a", PhaseNoiseProfile.flat(-150), 1e8, grid)
    >>> b = source_chain("b", PhaseNoiseProfile.flat(-150), 1e8, grid)
    >>> round(float(combine(a, b).total_dbc()[0]), 2)
    -146.99
    """
    if not chains:
        raise ClockplanError("nothing to combine", key="chains", hint="pass at least one NoiseChain")
    first = chains[0]
    for other in chains[1:]:
        if not (
            math.isclose(other.offsets_hz[0], first.offsets_hz[0], rel_tol=1e-12)
            and math.isclose(other.offsets_hz[-1], first.offsets_hz[-1], rel_tol=1e-12)
        ):
            raise ClockplanError(
                f"the chains to combine have analysis grids of different spans: "
                f"{first.offsets_hz[0]:g}..{first.offsets_hz[-1]:g} Hz and "
                f"{other.offsets_hz[0]:g}..{other.offsets_hz[-1]:g} Hz",
                key="chains",
                hint="build every chain from the same span (log_grid(f_min, f_max))",
            )
        if not math.isclose(other.carrier_hz, first.carrier_hz, rel_tol=1e-12):
            raise ClockplanError(
                f"chains to combine are at {first.carrier_hz:g} Hz and {other.carrier_hz:g} Hz",
                key="chains",
                hint="only noise on the same clock adds; divide or multiply first",
            )
    # One grid for all: every chain's points; where same-named contributors add up,
    # refined until their sum reads as a power law between grid points.
    grid = first.offsets_hz
    for other in chains[1:]:
        grid = np.union1d(grid, other.offsets_hz[(other.offsets_hz > grid[0]) & (other.offsets_hz < grid[-1])])
    seen: dict[str, list[tuple[NoiseChain, int]]] = {}
    for chain in chains:
        for j, contributor in enumerate(chain.names):
            seen.setdefault(contributor, []).append((chain, j))
    shapes: list[Callable[[np.ndarray], np.ndarray]] = []
    for parts in seen.values():
        if len(parts) > 1:
            readings = [_curve_function(chain, np.array([j])) for chain, j in parts]
            shapes.append(lambda offsets, readings=readings: sum(r(offsets) for r in readings))
    grid = refine_grid(grid, shapes)
    out = _resample(first, grid)
    for other in chains[1:]:
        other = _resample(other, grid)
        for j, contributor in enumerate(other.names):
            mine = other.spur_owner == j
            out = _with_contributor(
                out,
                contributor,
                other.density[:, j],
                other.spur_offsets_hz[mine],
                other.spur_power[mine],
                flat=float(other.flat[j]),
                listed_hz=(float(other.listed_hz[j, 0]), float(other.listed_hz[j, 1])),
            )
    return out
