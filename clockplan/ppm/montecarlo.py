"""Monte Carlo yield: how many boards keep every consumer inside its budget.

Each simulated board draws, for each reference, its initial tolerance, its
aging at the end of the board's lifetime, its supply and load sensitivity
(uniform, or normal with the limits at ±3 sigma and parts outside screened
out, as the part's ``distribution`` says) and its crystal-load component
values (uniform within tolerance). One operating temperature is drawn
uniformly over the range per board and shared by all its references: they sit
on the same board. Curve models are evaluated at that temperature; a
stability band is drawn uniformly inside the band (see
:mod:`clockplan.ppm.temperature`).

Boards are judged at the end of their lifetime, where aging has run its full
course. The run is reproducible for a given seed and chunk size.
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

__all__ = ["ConsumerChain", "MonteCarloResult", "reference_window", "sample_reference_errors", "monte_carlo_yield"]

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

    ``reference_errors`` holds, per reference, the sampled fractional error of
    the first ``kept`` boards (empty unless ``keep_errors`` was asked for), so
    a report can draw the distribution the yields were counted on.
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


def sample_reference_errors(
    spec: OscillatorSpec, temps_c: np.ndarray, lifetime_s: float, rng: np.random.Generator
) -> np.ndarray:
    """Fractional error of one reference on each simulated board (vectorized).

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> spec = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    >>> errors = sample_reference_errors(spec, np.zeros(1000), 0.0, np.random.default_rng(1))
    >>> bool(np.all(np.abs(errors) <= 20e-6))
    True
    """
    size = temps_c.shape[0]
    normal = spec.distribution == "normal"
    errors = spec.temperature.sample(temps_c, rng) + _draw(rng, spec.initial, normal, size)
    errors = errors + _draw(rng, spec.aging.drift(lifetime_s), normal, size)
    errors = errors + _draw(rng, spec.supply_sensitivity, normal, size)
    errors = errors + _draw(rng, spec.load_sensitivity, normal, size)
    return errors + _crystal_pulling(spec, rng, size)


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
    """Fraction of simulated boards on which each consumer stays inside its budget.

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
        Keep each reference's sampled error for the first ``keep_errors``
        boards (``MonteCarloResult.reference_errors``), for histograms. The
        draws are the same with or without it.
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
    t_lo, t_hi = temperature_range
    for spec in references:
        spec.temperature.extremes(t_lo, t_hi)  # refuses a table that does not span the range
    windows = [reference_window(c) for c in consumers]
    # Consumers with the same reference and window pass or fail together.
    distinct = sorted({(c.reference, w) for c, w in zip(consumers, windows)})
    slot = {key: i for i, key in enumerate(distinct)}
    passed = np.zeros(len(distinct), dtype=np.int64)
    board_passed = 0
    rng = np.random.default_rng(seed)
    kept = min(max(0, keep_errors), samples)
    stored = [np.empty(kept) for _ in references]
    done = 0
    while done < samples:
        size = min(chunk, samples - done)
        temps = rng.uniform(t_lo, t_hi, size) if t_hi > t_lo else np.full(size, float(t_lo))
        errors = [sample_reference_errors(spec, temps, lifetime_s, rng) for spec in references]
        if done < kept:
            take = min(size, kept - done)
            for store, values in zip(stored, errors):
                store[done:done + take] = values[:take]
        board_ok = np.ones(size, dtype=bool)
        for i, (ref, (lo, hi)) in enumerate(distinct):
            ok = (errors[ref] >= lo) & (errors[ref] <= hi)
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
