"""Monte Carlo yield: how many boards keep every consumer inside its budget everywhere.

Each simulated board draws, for each reference, its initial tolerance, its
aging drift at the end of the board's lifetime, its supply and load
sensitivity (uniform, or normal with the limits at ±3 sigma and parts outside
screened out, as the part's ``distribution`` says) and its crystal-load
component values (uniform within tolerance).

A board must work at every temperature of its rated range and on every day
of its life, so each simulated board is judged over all of them, not at one
drawn operating point:

* temperature: a curve model is a deterministic function of temperature, so
  the board's error over the range runs between the curve's lowest and highest
  value on the range (the same exact extremes the worst case uses); a
  stability band does not say how a part's frequency moves inside it, so every
  board is taken to reach both band edges somewhere over its range
  (conservative; see :mod:`clockplan.ppm.temperature`);
* lifetime: the aging drift runs from 0 at the start of life to the drawn
  end-of-life value, one way (each part's drift keeps its sign, the common
  practice for quartz aging), so the board is judged at the start and at the
  end of its life.

A consumer passes on a board when the board's lowest and highest error both
fall inside its window; the board passes when every consumer does. The run is
reproducible for a given seed and chunk size.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np

from clockplan.errors import ClockplanError
from clockplan.ppm.accuracy import ConsumerBudget
from clockplan.ppm.oscillator import SIGMA_PER_LIMIT, OscillatorSpec
from clockplan.ppm.spread import SpreadSpectrum, spread_fits

__all__ = [
    "ConsumerChain",
    "MonteCarloResult",
    "reference_window",
    "sample_reference_errors",
    "sample_reference_spans",
    "monte_carlo_yield",
]

ProgressCallback = Callable[[int, int], None]

_DEFAULT_CHUNK = 1 << 17


@dataclass(frozen=True)
class ConsumerChain:
    """A consumer as the yield analysis needs it: which reference, what synthesis error, what budget.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±100 ppm")), name="phy").reference
    0
    """

    reference: int
    synthesis_error: Fraction
    budget: ConsumerBudget
    spread: SpreadSpectrum | None = None
    name: str = ""


@dataclass(frozen=True)
class MonteCarloResult:
    """Fraction of boards inside budget, per consumer and for the whole board.

    ``reference_errors`` holds, per reference, an array of shape ``(kept, 2)``:
    the lowest and highest fractional error of each of the first ``kept``
    boards over its temperature range and lifetime (empty unless
    ``keep_errors`` was asked for), so a report can draw the distribution the
    yields were counted on.
    """

    samples: int
    seed: int | None
    yields: tuple[float, ...]
    board_yield: float
    names: tuple[str, ...]
    reference_errors: tuple[np.ndarray, ...] = field(default=(), compare=False, repr=False)
    requested: int | None = None

    @property
    def complete(self) -> bool:
        """False if the run stopped at its deadline before ``requested`` boards."""
        return self.requested is None or self.samples >= self.requested

    def standard_error(self, index: int) -> float:
        """Binomial standard error of one consumer's yield."""
        p = self.yields[index]
        return math.sqrt(p * (1.0 - p) / self.samples)


def reference_window(consumer: ConsumerChain) -> tuple[float, float]:
    """Range of the reference's error that keeps this consumer inside its budget.

    The chain is monotonic in the reference error, so the budget maps back to
    one interval; a spread outside the consumer's allowance narrows it by the
    sweep.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> lo, hi = reference_window(ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±50 ppm"))))
    >>> round(hi * 1e6, 9)
    50.0
    """
    lo, hi = consumer.budget.tolerance
    spread = consumer.spread
    if spread is not None and not spread_fits(spread, consumer.budget.spread_allowance)[0]:
        sweep_lo, sweep_hi = spread.extremes
        lo, hi = (1 + lo) / (1 + sweep_lo) - 1, (1 + hi) / (1 + sweep_hi) - 1
    scale = 1 + consumer.synthesis_error
    return float((1 + lo) / scale - 1), float((1 + hi) / scale - 1)


def _draw(rng: np.random.Generator, limits: tuple, normal: bool, size: int) -> np.ndarray | float:
    """Draw a tolerance between its limits; a zero-width range costs nothing."""
    lo, hi = float(limits[0]), float(limits[1])
    if lo == hi:
        return lo
    if not normal:
        return lo + (hi - lo) * rng.random(size)
    centre, sigma = (lo + hi) / 2, (hi - lo) / (2 * SIGMA_PER_LIMIT)
    values = rng.normal(centre, sigma, size)
    outside = np.flatnonzero((values < lo) | (values > hi))
    while outside.size:
        values[outside] = rng.normal(centre, sigma, outside.size)
        outside = outside[(values[outside] < lo) | (values[outside] > hi)]
    return values


def _crystal_pulling(spec: OscillatorSpec, rng: np.random.Generator, size: int) -> np.ndarray | float:
    load = spec.crystal_load
    if load is None:
        return 0.0
    tol = float(load.cap_tolerance)
    cap_a = float(load.cap_a) * (1 + tol * (2 * rng.random(size) - 1)) if tol else float(load.cap_a)
    cap_b = float(load.cap_b) * (1 + tol * (2 * rng.random(size) - 1)) if tol else float(load.cap_b)
    stray = _draw(rng, (load.stray - load.stray_tolerance, load.stray + load.stray_tolerance), False, size)
    actual = cap_a * cap_b / (cap_a + cap_b) + stray
    c1, c0 = float(load.motional_c1), float(load.shunt_c0)
    return np.sqrt((1 + c1 / (c0 + actual)) / (1 + c1 / (c0 + float(load.specified_load)))) - 1


def _fixed_terms(spec: OscillatorSpec, lifetime_s: float, rng: np.random.Generator, size: int) -> tuple:
    """Each board's terms that do not move over its life, and its end-of-life aging drift."""
    normal = spec.distribution == "normal"
    fixed = _draw(rng, spec.initial, normal, size)
    aging = _draw(rng, spec.aging.drift(lifetime_s), normal, size)
    fixed = fixed + _draw(rng, spec.supply_sensitivity, normal, size)
    fixed = fixed + _draw(rng, spec.load_sensitivity, normal, size)
    return fixed + _crystal_pulling(spec, rng, size), aging


def sample_reference_errors(
    spec: OscillatorSpec, temps_c: np.ndarray, lifetime_s: float, rng: np.random.Generator
) -> np.ndarray:
    """Fractional error of one reference on each simulated board at one temperature each, at end of life.

    One operating point per board: not what a yield is judged on (a board must
    work at every temperature and on every day of its life, see
    :func:`sample_reference_spans`). A stability band is drawn uniformly inside
    the band.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> spec = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    >>> errors = sample_reference_errors(spec, np.zeros(1000), 0.0, np.random.default_rng(1))
    >>> bool(np.all(np.abs(errors) <= 20e-6))
    True
    """
    temperature = spec.temperature.sample(temps_c, rng)
    fixed, aging = _fixed_terms(spec, lifetime_s, rng, temps_c.shape[0])
    return temperature + fixed + aging


def sample_reference_spans(
    spec: OscillatorSpec, temperature_range: tuple[float, float], lifetime_s: float,
    rng: np.random.Generator, size: int,
) -> tuple[np.ndarray, np.ndarray]:
    """Lowest and highest fractional error of one reference on each simulated board (vectorized).

    Over the whole temperature range (a curve's exact extremes on the range; a
    band's edges) and over the whole life (aging 0 at the start, the drawn
    drift at the end), see the module notes.

    Examples
    --------
    >>> from clockplan.ppm.temperature import TuningForkCurve
    >>> from clockplan.units import parse_ppm
    >>> fork = OscillatorSpec("crystal", parse_ppm("±20 ppm"), TuningForkCurve())
    >>> low, high = sample_reference_spans(fork, (-40, 85), 0.0, np.random.default_rng(1), 1000)
    >>> bool(np.all(high - low >= 143e-6))  # every board sees the whole parabola: 0 at 25 °C, -144 ppm at -40 °C
    True
    """
    extremes = spec.temperature.extremes(*temperature_range)
    fixed, aging = _fixed_terms(spec, lifetime_s, rng, size)
    low = fixed + float(extremes.low) + np.minimum(aging, 0.0)
    high = fixed + float(extremes.high) + np.maximum(aging, 0.0)
    return np.broadcast_to(low, (size,)), np.broadcast_to(high, (size,))


def monte_carlo_yield(
    references: Sequence[OscillatorSpec],
    consumers: Sequence[ConsumerChain],
    temperature_range: tuple[float, float],
    lifetime_s: float,
    samples: int = 100_000,
    seed: int | None = None,
    progress: ProgressCallback | None = None,
    chunk: int = _DEFAULT_CHUNK,
    keep_errors: int = 0,
    deadline: float | None = None,
) -> MonteCarloResult:
    """Fraction of simulated boards on which each consumer stays inside its budget everywhere.

    Every board is judged over the whole temperature range and at the start
    and end of its life (module notes).

    Parameters
    ----------
    references
        The board's reference oscillators.
    consumers
        One chain per consumer; ``reference`` indexes ``references``.
    temperature_range, lifetime_s
        Operating range in °C and lifetime in seconds.
    samples
        Number of simulated boards.
    seed
        Seed for a reproducible run.
    progress
        Called as ``progress(done, total)`` after each chunk of boards, so a
        command line can show a progress bar on long runs.
    chunk
        Boards simulated per vectorized step (bounds memory).
    keep_errors
        Keep each reference's lowest and highest error for the first
        ``keep_errors`` boards (``MonteCarloResult.reference_errors``), for
        histograms. The draws are the same with or without it.
    deadline
        A ``time.monotonic()`` instant: once it has passed, the run stops after
        the chunk in progress (at least one chunk always runs). The result then
        counts the boards actually simulated in ``samples`` and the boards asked
        for in ``requested``; ``complete`` is False.

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> xo = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    >>> phy = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±10 ppm")))
    >>> result = monte_carlo_yield([xo], [phy], (25, 25), 0.0, samples=200_000, seed=7)
    >>> abs(result.yields[0] - 0.5) < 0.01
    True
    """
    if samples <= 0 or chunk <= 0:
        raise ClockplanError("the Monte Carlo needs a positive number of samples", hint="give e.g. samples=100000")
    for consumer in consumers:
        if not 0 <= consumer.reference < len(references):
            raise ClockplanError(
                f"consumer {consumer.name or '?'} points at reference {consumer.reference}, "
                f"but the board has {len(references)}",
                hint="index the board's references from 0",
            )
    for spec in references:
        spec.temperature.extremes(*temperature_range)  # refuses a table that does not span the range
    windows = [reference_window(c) for c in consumers]
    # Consumers with the same reference and window pass or fail together.
    distinct = sorted({(c.reference, w) for c, w in zip(consumers, windows)})
    slot = {key: i for i, key in enumerate(distinct)}
    passed = np.zeros(len(distinct), dtype=np.int64)
    board_passed = 0
    rng = np.random.default_rng(seed)
    kept = min(max(0, keep_errors), samples)
    stored = [np.empty((kept, 2)) for _ in references]
    done = 0
    while done < samples:
        size = min(chunk, samples - done)
        spans = [sample_reference_spans(spec, temperature_range, lifetime_s, rng, size) for spec in references]
        if done < kept:
            take = min(size, kept - done)
            for store, (low, high) in zip(stored, spans):
                store[done:done + take, 0] = low[:take]
                store[done:done + take, 1] = high[:take]
        board_ok = np.ones(size, dtype=bool)
        for i, (ref, (lo, hi)) in enumerate(distinct):
            low, high = spans[ref]
            ok = (low >= lo) & (high <= hi)
            passed[i] += np.count_nonzero(ok)
            board_ok &= ok
        board_passed += int(np.count_nonzero(board_ok))
        done += size
        if progress is not None:
            progress(done, samples)
        if deadline is not None and done < samples and time.monotonic() > deadline:
            break
    yields = tuple(float(passed[slot[(c.reference, w)]]) / done for c, w in zip(consumers, windows))
    return MonteCarloResult(
        samples=done,
        seed=seed,
        yields=yields,
        board_yield=board_passed / done,
        names=tuple(c.name for c in consumers),
        reference_errors=tuple(store[: min(kept, done)] for store in stored) if kept else (),  # a cut run kept fewer
        requested=samples,
    )
