"""The domain model: parts of a clock tree and their settings, as frozen dataclasses.

A board is references, PLLs, plain dividers, fanout buffers and consumers,
each described by the constraints its datasheet gives. Settings (R, N,
divider ratios) are kept apart from the parts: a board file may give them
(an existing design, to audit) or leave them open (to be planned).

All frequencies and ratios are exact :class:`~fractions.Fraction` values.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from functools import cached_property
from fractions import Fraction
from typing import Any, Literal

from clockplan.margins import DEFAULT_MARGIN_WARNING

__all__ = [
    "FrequencyRange",
    "IntChoices",
    "Denominator",
    "Reference",
    "PllOutput",
    "Pll",
    "Divider",
    "Buffer",
    "Consumer",
    "PllSetting",
    "Settings",
    "Board",
    "REFERENCE_KINDS",
    "ACCURACY_POLICIES",
    "WORST_CASE",
    "STATISTICAL",
]

#: Oscillator kinds a reference can be (see docs/board-format.md).
REFERENCE_KINDS = ("crystal", "xo", "vcxo", "tcxo", "ocxo", "mems", "rc", "external")

#: How a frequency-error budget is judged (``[board] accuracy_policy``, docs/frequency-accuracy.md):
#: every tolerance at its limit (the default), or the statistical (RSS) total on request.
WORST_CASE = "worst-case"
STATISTICAL = "statistical"
ACCURACY_POLICIES = (WORST_CASE, STATISTICAL)


@dataclass(frozen=True)
class FrequencyRange:
    """A closed range of frequencies in Hz, ``lo <= f <= hi``."""

    lo: Fraction
    hi: Fraction

    def __contains__(self, hz: object) -> bool:
        return isinstance(hz, (int, Fraction)) and self.lo <= hz <= self.hi


@dataclass(frozen=True)
class IntChoices:
    """The whole numbers a divider (or R) may take.

    Either an arithmetic range ``lo..hi`` in steps of ``step`` (``step=2`` with an
    even ``lo`` is "even only"), or an explicit sorted set ``values``.

    Examples
    --------
    >>> 6 in IntChoices(2, 256, step=2)
    True
    >>> 5 in IntChoices(2, 256, step=2)
    False
    """

    lo: int
    hi: int
    step: int = 1
    values: tuple[int, ...] | None = None

    @classmethod
    def of(cls, values: tuple[int, ...]) -> "IntChoices":
        """Build an explicit set of allowed values."""
        ordered = tuple(sorted(set(values)))
        return cls(ordered[0], ordered[-1], 1, ordered)

    def __contains__(self, value: object) -> bool:
        if isinstance(value, Fraction):
            if value.denominator != 1:
                return False
            value = value.numerator
        if not isinstance(value, int) or isinstance(value, bool):
            return False
        if self.values is not None:
            return value in self.values
        return self.lo <= value <= self.hi and (value - self.lo) % self.step == 0

    def __iter__(self) -> Iterator[int]:
        if self.values is not None:
            return iter(self.values)
        return iter(range(self.lo, self.hi + 1, self.step))

    def __len__(self) -> int:
        if self.values is not None:
            return len(self.values)
        return (self.hi - self.lo) // self.step + 1

    def describe(self) -> str:
        """Human text such as ``'1..256'``, ``'2..256 step 2'`` or ``'{1, 2, 4}'``."""
        if self.values is not None:
            shown = ", ".join(map(str, self.values[:8]))
            return "{" + shown + (", ..." if len(self.values) > 8 else "") + "}"
        return f"{self.lo}..{self.hi}" + (f" step {self.step}" if self.step != 1 else "")


@dataclass(frozen=True)
class Denominator:
    """The fractional-N denominator rule of a PLL.

    ``fixed``: the fraction is always k/fixed (a fixed modulus such as 2^24).
    ``limit``: the denominator is programmable, any whole number up to ``limit``.
    """

    fixed: int | None = None
    limit: int | None = None

    def allows(self, n: Fraction) -> bool:
        """True if the fractional part of ``n`` can be produced."""
        if self.fixed is not None:
            return (n * self.fixed).denominator == 1
        assert self.limit is not None
        return n.denominator <= self.limit

    def describe(self) -> str:
        """Human text of the rule."""
        return f"k/{self.fixed}" if self.fixed is not None else f"denominator ≤ {self.limit}"


@dataclass(frozen=True)
class Reference:
    """A reference oscillator: the root of a clock chain.

    ``oscillator`` holds the accuracy model (tolerance, temperature, aging) and
    ``phase_noise`` the noise profile; both are optional and filled in by the
    budget modules' parsers.
    """

    id: str
    frequency: Fraction
    kind: str = "xo"
    oscillator: Any = None
    phase_noise: Any = None


@dataclass(frozen=True)
class PllOutput:
    """One output of a PLL: a divider after the shared VCO.

    ``spread`` is a spread made by this output's own divider, allowed only when
    ``independent_spread`` says the part's output divider modulates by itself (a
    fractional output divider with its own spread); a spread made by modulating
    the loop belongs to the :class:`Pll` and reaches every output
    (``docs/board-format.md``).
    """

    name: str
    divider: IntChoices
    spread: Any = None
    independent_spread: bool = False


@dataclass(frozen=True)
class Pll:
    """A phase-locked loop: f_pfd = f_in / R, f_vco = f_pfd * N, f_out = f_vco / D.

    ``ref_divider`` holds the allowed input dividers R, ``feedback_min`` and
    ``feedback_max`` the range of the feedback ratio N. In ``"integer"`` mode N
    must be whole; in ``"fractional"`` mode its fractional part must satisfy
    ``denominator``. ``loop`` (a loop response), ``noise`` (the PLL's own noise
    figures) and ``loop_filter`` (a passive filter to design or analyse) feed
    the jitter model; see docs/jitter.md and docs/loop-filter.md. ``spread``
    (a ``clockplan.ppm.spread.SpreadSpectrum``) is a spread made by modulating
    the loop (its feedback divider or its VCO): it sweeps the VCO, so it reaches
    every output and every clock downstream (``clockplan.spreading``).
    """

    id: str
    input: str
    vco: FrequencyRange
    pfd: FrequencyRange
    ref_divider: IntChoices
    feedback_min: Fraction
    feedback_max: Fraction
    mode: Literal["integer", "fractional"]
    outputs: tuple[PllOutput, ...]
    denominator: Denominator | None = None
    input_range: FrequencyRange | None = None
    loop: Any = None
    noise: Any = None
    loop_filter: Any = None
    spread: Any = None

    def output(self, name: str) -> PllOutput:
        """Return the output called ``name``."""
        for out in self.outputs:
            if out.name == name:
                return out
        raise KeyError(name)

    def allows_n(self, n: Fraction) -> bool:
        """True if ``n`` is a feedback ratio this PLL can run (range and mode)."""
        if not self.feedback_min <= n <= self.feedback_max:
            return False
        if n.denominator == 1:
            return True
        return self.mode == "fractional" and self.denominator is not None and self.denominator.allows(n)


@dataclass(frozen=True)
class Divider:
    """A plain integer divider: f_out = f_in / ratio."""

    id: str
    input: str
    ratio: IntChoices
    additive_noise: Any = None


@dataclass(frozen=True)
class Buffer:
    """A fanout buffer: copies its input to up to ``outputs`` loads.

    ``additive_jitter`` is the buffer's additive RMS jitter and the band it is
    specified over (a ``clockplan.jitter.parse.AdditiveJitter``), or None.
    """

    id: str
    input: str
    outputs: int
    additive_jitter: Any = None


@dataclass(frozen=True)
class Consumer:
    """A load that needs a clock: its frequency, tolerance and budgets.

    ``max_synthesis_error`` is how far (as a fraction, symmetric) the planner
    may leave the synthesized frequency from ``frequency``; 0 means exact.
    ``budget`` is the resolved ppm/jitter budget (from a standard or inline).
    ``description`` is the board file's free text about the consumer, shown
    by the Markdown and HTML reports and ``explain``.
    """

    id: str
    source: str
    frequency: Fraction
    max_synthesis_error: Fraction = Fraction(0)
    standard: str | None = None
    budget: Any = None
    description: str | None = None


@dataclass(frozen=True)
class PllSetting:
    """The settings of one loop: input divider ``r``, feedback ratio ``n`` (exact), output dividers."""

    r: int
    n: Fraction
    dividers: Mapping[str, int]


@dataclass(frozen=True)
class Settings:
    """Settings for a whole board; parts missing from the maps are not set."""

    plls: Mapping[str, PllSetting] = field(default_factory=dict)
    dividers: Mapping[str, int] = field(default_factory=dict)


@dataclass(frozen=True)
class Board:
    """A whole board: its parts, the settings its file gives, and where it came from.

    ``given`` holds settings fixed by the file (partial: ``pll_partial`` keeps
    per-PLL pins such as a fixed R when N is left open). ``lines`` maps key
    paths to line numbers for error messages. ``unstated`` names the operating
    conditions (``"temperature"``, ``"lifetime"``) the board file left out, so
    that ``temperature_c`` / ``lifetime_s`` hold the 25 °C / 0 years stand-ins;
    the accuracy stage refuses a board whose models depend on one of them.
    ``margin_warning`` is the share of a budget below which a passing consumer
    warns (:mod:`clockplan.margins`).
    ``accuracy_policy`` says how frequency-error budgets are judged:
    :data:`WORST_CASE` (the default) or :data:`STATISTICAL`.
    ``source_bytes`` are the bytes the board was parsed from (``None`` for a
    board built in code): ``plan --write`` edits these, never a second read.
    """

    name: str
    temperature_c: tuple[float, float]
    lifetime_s: float
    references: tuple[Reference, ...]
    plls: tuple[Pll, ...]
    dividers: tuple[Divider, ...]
    buffers: tuple[Buffer, ...]
    consumers: tuple[Consumer, ...]
    pins: Mapping[str, Mapping[str, Any]] = field(default_factory=dict)
    source_file: str | None = None
    lines: Mapping[str, int] = field(default_factory=dict)
    unstated: tuple[str, ...] = ()
    margin_warning: Fraction = DEFAULT_MARGIN_WARNING
    accuracy_policy: str = WORST_CASE
    #: The file's bytes as read (BOM and line endings included), for writing settings back into them.
    source_bytes: bytes | None = field(default=None, repr=False, compare=False)

    def part(self, part_id: str) -> Any:
        """Return the part (reference, PLL, divider, buffer or consumer) with this id."""
        return self._parts_by_id[part_id]

    @cached_property
    def _parts_by_id(self) -> dict[str, Any]:
        # Built once: reports look parts up per consumer, and a scan each time is quadratic
        # on a board of thousands of consumers. The first part of an id wins, as the scan did.
        index: dict[str, Any] = {}
        for group in (self.references, self.plls, self.dividers, self.buffers, self.consumers):
            for part in group:
                index.setdefault(part.id, part)
        return index

    def all_ids(self) -> list[str]:
        """Every part id on the board."""
        groups = (self.references, self.plls, self.dividers, self.buffers, self.consumers)
        return [part.id for group in groups for part in group]

    def given_settings(self) -> Settings:
        """The settings the board file fixes completely (every value present)."""
        plls: dict[str, PllSetting] = {}
        for pll in self.plls:
            pin = self.pins.get(pll.id, {})
            dividers = pin.get("dividers", {})
            if "r" in pin and "n" in pin and all(o.name in dividers for o in pll.outputs):
                plls[pll.id] = PllSetting(pin["r"], pin["n"], dict(dividers))
        dividers = {d.id: self.pins[d.id]["ratio"] for d in self.dividers if "ratio" in self.pins.get(d.id, {})}
        return Settings(plls, dividers)
