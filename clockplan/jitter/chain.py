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
A divider's output is treated at offsets below half its output frequency; noise
folding from beyond that is not modelled (the estimate is a planning figure).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from clockplan.errors import ClockplanError
from clockplan.jitter._checks import positive_number
from clockplan.jitter.integrate import check_band, check_carrier, integrate_log_curve
from clockplan.jitter.loop import LoopResponse
from clockplan.jitter.profile import Extrapolation, PhaseNoiseProfile
from clockplan.jitter.result import JitterResult

__all__ = [
    "DEFAULT_BUFFER_BAND_HZ",
    "NoiseChain",
    "log_grid",
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

    def __post_init__(self) -> None:
        check_carrier(self.carrier_hz)
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
        grid = self.offsets_hz
        # A relative slack of 1e-12 lets a band edge equal a grid end despite rounding.
        if low < grid[0] * (1 - 1e-12) or high > grid[-1] * (1 + 1e-12):
            raise ClockplanError(
                f"band {low:g}..{high:g} Hz reaches outside the analysis grid {grid[0]:g}..{grid[-1]:g} Hz",
                key="band",
                hint="build the chain on a wider grid (log_grid(f_min, f_max))",
            )
        ln_density = np.log(np.maximum(self.density, _TINY))
        power = np.atleast_1d(integrate_log_curve(np.log(grid), ln_density, low, high, "flat"))
        in_band = (self.spur_offsets_hz >= low) & (self.spur_offsets_hz <= high)
        power = power + np.bincount(
            self.spur_owner[in_band], weights=self.spur_power[in_band], minlength=len(self.names)
        )
        seconds = np.sqrt(2.0 * power) / (2.0 * math.pi * self.carrier_hz)
        order = np.argsort(-seconds, kind="stable")
        contributions = tuple((self.names[i], float(seconds[i])) for i in order)
        total = float(math.sqrt(float(np.sum(seconds**2))))
        return JitterResult(self.carrier_hz, low, high, total, contributions, budget_seconds)


def _with_contributor(
    chain: NoiseChain,
    name: str,
    density: np.ndarray,
    spur_offsets: np.ndarray | None = None,
    spur_power: np.ndarray | None = None,
) -> NoiseChain:
    """Add a contributor (or add onto an existing one of the same name)."""
    names = chain.names
    if name in names:
        index = names.index(name)
        table = chain.density.copy()
        table[:, index] += density
    else:
        index = len(names)
        names = names + (name,)
        table = np.column_stack((chain.density, density))
    offsets, powers, owners = chain.spur_offsets_hz, chain.spur_power, chain.spur_owner
    if spur_offsets is not None and spur_offsets.size:
        offsets = np.concatenate((offsets, spur_offsets))
        powers = np.concatenate((powers, spur_power))
        owners = np.concatenate((owners, np.full(spur_offsets.size, index, dtype=np.intp)))
    return NoiseChain(chain.carrier_hz, chain.offsets_hz, names, table, offsets, powers, owners)


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
        The analysis grid; :func:`log_grid` (1 Hz..1 GHz) by default.
    extrapolation
        How to extend the profile past its listed offsets.
    """
    grid = log_grid() if offsets_hz is None else np.asarray(offsets_hz, dtype=float)
    if grid.ndim != 1 or grid.size < 2 or np.any(np.diff(grid) <= 0) or grid[0] <= 0:
        raise ClockplanError(
            "the analysis grid must be at least two increasing positive offsets",
            key="offsets_hz",
            hint="use log_grid(f_min, f_max, points_per_decade)",
        )
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
    return _with_contributor(empty, name, profile.density_at(grid, extrapolation), spur_offsets, spur_powers)


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
    )
    if floor_dbc_hz is None:
        return scaled
    floor = np.full(chain.offsets_hz.size, 10.0 ** (float(floor_dbc_hz) / 10.0))
    return _with_contributor(scaled, f"{name} floor", floor)


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
    grid = chain.offsets_hz
    lowpass = loop.closed_loop_power(grid)
    f_vco = chain.carrier_hz * m
    f_pfd = chain.carrier_hz if f_pfd_hz is None else _ratio(f_pfd_hz, "PFD frequency")
    gain = m * m
    out = NoiseChain(
        f_vco,
        grid,
        chain.names,
        chain.density * (gain * lowpass)[:, None],
        chain.spur_offsets_hz,
        chain.spur_power * gain * loop.closed_loop_power(chain.spur_offsets_hz),
        chain.spur_owner,
    )
    if fom_dbc_hz is not None or flicker_fom_dbc_hz is not None:
        floor = np.zeros(grid.size)
        if fom_dbc_hz is not None:
            floor += 10.0 ** (pll_floor_dbc_hz(fom_dbc_hz, f_pfd, f_vco / f_pfd) / 10.0)
        if flicker_fom_dbc_hz is not None:
            flicker_db = float(flicker_fom_dbc_hz) + 20.0 * math.log10(f_vco) - 10.0 * np.log10(grid)
            floor += 10.0 ** (flicker_db / 10.0)
        out = _with_contributor(out, f"{name} floor", floor * lowpass)
    if modulator_order is not None:
        out = _with_contributor(out, f"{name} modulator", modulator_density(grid, f_pfd, modulator_order) * lowpass)
    if vco is not None:
        highpass = loop.error_power(grid)
        spur_offsets, spur_powers = _spur_arrays(vco)
        out = _with_contributor(
            out,
            f"{name} VCO",
            vco.density_at(grid, vco_extrapolation) * highpass,
            spur_offsets,
            spur_powers * loop.error_power(spur_offsets),
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
    density = np.full(chain.offsets_hz.size, phase_variance / (2.0 * (high - low)))
    return _with_contributor(chain, name, density)


def add_noise(chain: NoiseChain, name: str, density: object) -> NoiseChain:
    """Add an independent noise, given as linear L(f) on the chain's offset grid.

    Parameters
    ----------
    chain
        The clock's noise so far.
    name
        The new contributor's name (an existing one of that name grows by it).
    density
        Linear single-sideband density (a ratio per Hz, not dBc) at each of
        ``chain.offsets_hz``, zero or above.

    Examples
    --------
    >>> grid = log_grid(1e3, 1e6, 5)
    >>> chain = source_chain("ref", PhaseNoiseProfile.flat(-150), 1e8, grid)
    >>> round(float(add_noise(chain, "extra", np.full(grid.size, 1e-15)).total_dbc()[0]), 2)
    -146.99
    """
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
    out = first
    for other in chains[1:]:
        if not np.array_equal(other.offsets_hz, first.offsets_hz):
            raise ClockplanError(
                "chains to combine use different analysis grids",
                key="chains",
                hint="build every chain on the same log_grid",
            )
        if not math.isclose(other.carrier_hz, first.carrier_hz, rel_tol=1e-12):
            raise ClockplanError(
                f"chains to combine are at {first.carrier_hz:g} Hz and {other.carrier_hz:g} Hz",
                key="chains",
                hint="only noise on the same clock adds; divide or multiply first",
            )
        for j, contributor in enumerate(other.names):
            mine = other.spur_owner == j
            out = _with_contributor(
                out,
                contributor,
                other.density[:, j],
                other.spur_offsets_hz[mine],
                other.spur_power[mine],
            )
    return out
