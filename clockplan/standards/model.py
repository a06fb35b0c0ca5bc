"""The budget a clock consumer must meet: tolerance, spread, jitter, and where they come from.

A :class:`StandardBudget` is what a consumer that says ``standard = "PCIe Gen4"``
(or that writes its own limits inline) is held to. Frequencies and frequency
errors are exact :class:`~fractions.Fraction` values (fractional error, 1 ppm is
``Fraction(1, 10**6)``); jitter is a float in seconds.

Every figure is a planning estimate: the governing standard and the part
datasheet decide.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

__all__ = [
    "CONFIDENCE_LEVELS",
    "PEAK_TO_PEAK_BER",
    "JitterLimit",
    "StandardBudget",
    "gaussian_pp_per_rms",
]

_PPM_PER_UNIT = 10**6

#: How much to trust a figure: read in the standard (or a document quoting it),
#: a fact of the trade with no governing document, recalled without a document
#: at hand, or written by the user in a board file.
CONFIDENCE_LEVELS = ("published", "common practice", "from memory", "board")

_DEFAULT_BER = 1e-12
#: The bit error ratio at which a peak-to-peak jitter limit is read (common practice for serial links).
PEAK_TO_PEAK_BER = _DEFAULT_BER


def gaussian_pp_per_rms(ber: float = _DEFAULT_BER) -> float:
    """Peak-to-peak span of Gaussian jitter, in RMS units, at a bit error ratio.

    The usual convention for reading a peak-to-peak jitter limit as an RMS one:
    the span is ``2 * Q`` where ``Q`` is the standard normal quantile whose upper
    tail holds ``ber`` (``Q = 7.034`` and a span of 14.07 at ``1e-12``). It
    holds for random jitter only; deterministic jitter adds linearly.

    Parameters
    ----------
    ber
        Bit error ratio, between 0 and 0.5.

    Examples
    --------
    >>> round(gaussian_pp_per_rms(1e-12), 2)
    14.07
    """
    if not 0.0 < ber < 0.5:
        raise ValueError(f"bit error ratio {ber} must be between 0 and 0.5")
    # Bisection on the normal upper tail 0.5*erfc(q/sqrt 2), which falls monotonically.
    low, high = 0.0, 40.0
    for _ in range(200):
        middle = (low + high) / 2
        if 0.5 * math.erfc(middle / math.sqrt(2.0)) > ber:
            low = middle
        else:
            high = middle
    return low + high


@dataclass(frozen=True)
class JitterLimit:
    """One jitter limit of a budget, and the RMS jitter it allows.

    ``kind`` is ``"rms"`` or ``"peak-to-peak"``; ``limit_s`` the figure as
    written; ``rms_s`` the RMS jitter it allows: the figure itself for an RMS
    limit, ``limit_s / (2 Q(ber))`` for a peak-to-peak one read as Gaussian
    (:func:`gaussian_pp_per_rms`), right for random jitter only.
    """

    kind: str
    limit_s: float
    rms_s: float
    ber: float | None = None

    def estimate_s(self, rms_seconds: float) -> float:
        """The jitter this limit is held against, in its own kind: RMS, or ``2 Q(ber) sigma`` peak-to-peak."""
        if self.ber is None:
            return rms_seconds
        return rms_seconds * gaussian_pp_per_rms(self.ber)

    def passes(self, rms_seconds: float) -> bool:
        """Whether an RMS jitter meets this limit."""
        return rms_seconds <= self.rms_s


def _check_range(name: str, value: tuple[Fraction, Fraction] | None) -> None:
    if value is not None and value[0] > value[1]:
        raise ValueError(f"{name} range {value!r} has its minimum above its maximum")


@dataclass(frozen=True)
class StandardBudget:
    """Clock requirements of one interface (or one consumer), with their sources.

    Parameters
    ----------
    key
        Canonical key, e.g. ``"pcie-gen4"``; ``"inline"`` for a budget written in a board.
    title
        One-line human name.
    family
        Group for listings: ``"Ethernet"``, ``"PCI Express"``, ...
    nominal_hz
        Frequencies this interface's reference clock commonly runs at (exact Hz).
        A consumer may run at another one; the tolerance applies to whichever it uses.
    ppm
        Allowed static frequency error (min, max) as fractions, or ``None`` when
        the interface sets none.
    spread
        Spread-spectrum modulation allowed on top of ``ppm`` (min, max) as
        fractions, e.g. ``(-0.005, 0)`` for 0 to -5000 ppm down-spread; ``None``
        when spreading is not allowed.
    spread_rate_hz
        Allowed modulation rate (min, max) in Hz, or ``None``.
    jitter_rms_s
        RMS jitter limit in seconds, or ``None``.
    jitter_pp_s
        Peak-to-peak jitter limit in seconds, where the source gives one, or ``None``.
    jitter_band_hz
        Offset band (low, high) in Hz over which the jitter is integrated, or ``None``.
    jitter_notes
        How the standard defines the jitter measurement; when it specifies a
        filter rather than a brick-wall band, how we approximate it.
    source
        Document and clause each figure comes from.
    confidence
        One of :data:`CONFIDENCE_LEVELS`: the weakest of the entry's figures.
    notes
        Anything else a designer should know (disagreeing readings, caveats).
    aliases
        Other names the entry is found by.
    overridden
        Names of the fields a board replaced.
    loosened
        The board's figures that are looser than the standard's, each with
        both figures (``"jitter 2 ps RMS (the standard: 1 ps)"``): a product
        built to them may not comply; the analysis warns (``budget-loosened``).
    sampling_clock
        True when the jitter limit comes from a sampling converter's SNR
        (``converter = { snr, f_in }``): without a band of its own, the jitter
        is integrated over the band that limits the converter's SNR, up to half
        the sample rate (:func:`clockplan.jitter.stage.band_plan`).
    """

    key: str
    title: str
    family: str
    nominal_hz: tuple[Fraction, ...]
    ppm: tuple[Fraction, Fraction] | None
    spread: tuple[Fraction, Fraction] | None = None
    spread_rate_hz: tuple[Fraction, Fraction] | None = None
    jitter_rms_s: float | None = None
    jitter_pp_s: float | None = None
    jitter_band_hz: tuple[Fraction, Fraction] | None = None
    jitter_notes: str = ""
    source: str = ""
    confidence: str = "from memory"
    notes: str = ""
    aliases: tuple[str, ...] = ()
    overridden: tuple[str, ...] = ()
    loosened: tuple[str, ...] = ()
    sampling_clock: bool = False

    def __post_init__(self) -> None:
        if self.confidence not in CONFIDENCE_LEVELS:
            raise ValueError(
                f"confidence {self.confidence!r} of {self.key!r} is not one of {CONFIDENCE_LEVELS}"
            )
        _check_range("ppm", self.ppm)
        _check_range("spread", self.spread)
        _check_range("spread_rate_hz", self.spread_rate_hz)
        _check_range("jitter_band_hz", self.jitter_band_hz)

    def frequency_error_range(self) -> tuple[Fraction, Fraction] | None:
        """Total allowed fractional error (min, max): tolerance and spread together, exactly.

        Errors compound multiplicatively, ``(1 + a)(1 + b) - 1``, so the result is
        exact rather than the first-order sum.

        Examples
        --------
        >>> from fractions import Fraction as F
        >>> b = StandardBudget("x", "x", "x", (), (F(-1, 10**4), F(1, 10**4)), spread=(F(-1, 200), F(0)))
        >>> b.frequency_error_range()[1]
        Fraction(1, 10000)
        """
        if self.ppm is None:
            return None
        if self.spread is None:
            return self.ppm
        low = (1 + self.ppm[0]) * (1 + self.spread[0]) - 1
        high = (1 + self.ppm[1]) * (1 + self.spread[1]) - 1
        return low, high

    def frequency_range_hz(self, nominal_hz: Fraction) -> tuple[Fraction, Fraction] | None:
        """Lowest and highest frequency allowed around ``nominal_hz``, exactly (spread included).

        Examples
        --------
        >>> from fractions import Fraction as F
        >>> b = StandardBudget("x", "x", "x", (), (F(-3, 10**4), F(3, 10**4)))
        >>> b.frequency_range_hz(F(100_000_000))
        (Fraction(99970000, 1), Fraction(100030000, 1))
        """
        error = self.frequency_error_range()
        if error is None:
            return None
        nominal = Fraction(nominal_hz)
        return nominal * (1 + error[0]), nominal * (1 + error[1])

    def allows_error(self, fractional_error: Fraction) -> bool:
        """Whether a static frequency error (exact fraction) is inside ``ppm``.

        An interface with no tolerance (``ppm`` is ``None``) allows any error.

        Examples
        --------
        >>> from fractions import Fraction as F
        >>> StandardBudget("x", "x", "x", (), (F(-1, 10**4), F(1, 10**4))).allows_error(F(0))
        True
        """
        if self.ppm is None:
            return True
        return self.ppm[0] <= Fraction(fractional_error) <= self.ppm[1]

    def jitter_limits(self, ber: float = _DEFAULT_BER) -> tuple[JitterLimit, ...]:
        """Every jitter limit of the budget, RMS first: each one is judged.

        A peak-to-peak limit is read as Gaussian at ``ber``: it allows an RMS
        jitter of ``limit / (2 Q(ber))`` (:func:`gaussian_pp_per_rms`, 14.07 at
        ``1e-12``).

        Examples
        --------
        >>> b = StandardBudget("x", "x", "x", (), None, jitter_rms_s=10e-12, jitter_pp_s=86e-12)
        >>> [(limit.kind, round(limit.rms_s * 1e12, 2)) for limit in b.jitter_limits()]
        [('rms', 10.0), ('peak-to-peak', 6.11)]
        """
        limits = []
        if self.jitter_rms_s is not None:
            limits.append(JitterLimit("rms", self.jitter_rms_s, self.jitter_rms_s))
        if self.jitter_pp_s is not None:
            limits.append(JitterLimit("peak-to-peak", self.jitter_pp_s, self.jitter_pp_s / gaussian_pp_per_rms(ber), ber))
        return tuple(limits)

    def binding_jitter_limit(self, ber: float = _DEFAULT_BER) -> JitterLimit | None:
        """The jitter limit that allows the least RMS jitter (the RMS one on a tie), or None."""
        limits = self.jitter_limits(ber)
        return min(limits, key=lambda limit: limit.rms_s) if limits else None

    def jitter_rms_limit_s(self, ber: float = _DEFAULT_BER) -> float | None:
        """RMS jitter to plan against: the stricter of the RMS limit and the peak-to-peak one read as Gaussian.

        Both limits are judged: when a budget gives both (a standard's
        peak-to-peak figure and a board's RMS one, say), the RMS jitter must
        meet each, so the smaller RMS equivalent binds. A peak-to-peak limit is
        divided by :func:`gaussian_pp_per_rms` (14.07 at ``1e-12``): right for
        random jitter only, so it is a planning figure.

        Examples
        --------
        >>> b = StandardBudget("x", "x", "x", (), None, jitter_pp_s=86e-12)
        >>> round(b.jitter_rms_limit_s() * 1e12, 2)
        6.11
        >>> round(StandardBudget("x", "x", "x", (), None, jitter_rms_s=10e-12, jitter_pp_s=86e-12).jitter_rms_limit_s() * 1e12, 2)
        6.11
        """
        binding = self.binding_jitter_limit(ber)
        return binding.rms_s if binding is not None else None

    def to_json(self) -> dict[str, object]:
        """A JSON-ready dict in the project's convention: exact values as strings, ppm as numbers.

        Examples
        --------
        >>> from fractions import Fraction as F
        >>> StandardBudget("x", "x", "x", (F(25_000_000),), (F(-1, 10**4), F(1, 10**4))).to_json()["ppm"]
        [-100.0, 100.0]
        """
        return {
            "key": self.key,
            "title": self.title,
            "family": self.family,
            "nominal_hz_exact": [_exact(f) for f in self.nominal_hz],
            "ppm": _ppm_pair(self.ppm),
            "ppm_exact": _exact_pair(self.ppm),
            "spread_ppm": _ppm_pair(self.spread),
            "spread_exact": _exact_pair(self.spread),
            "spread_rate_hz_exact": _exact_pair(self.spread_rate_hz),
            "jitter_rms_s": self.jitter_rms_s,
            "jitter_pp_s": self.jitter_pp_s,
            "jitter_band_hz_exact": _exact_pair(self.jitter_band_hz),
            "jitter_notes": self.jitter_notes,
            "source": self.source,
            "confidence": self.confidence,
            "notes": self.notes,
            "overridden": list(self.overridden),
            "loosened": list(self.loosened),
        }


def _exact(value: Fraction) -> str:
    return str(value.numerator) if value.denominator == 1 else f"{value.numerator}/{value.denominator}"


def _exact_pair(pair: tuple[Fraction, Fraction] | None) -> list[str] | None:
    return None if pair is None else [_exact(pair[0]), _exact(pair[1])]


def _ppm_pair(pair: tuple[Fraction, Fraction] | None) -> list[float] | None:
    return None if pair is None else [float(pair[0] * _PPM_PER_UNIT), float(pair[1] * _PPM_PER_UNIT)]
