"""One consumer's jitter on a board: the result, its contributors and the hooks reports use.

:class:`ConsumerJitter` sits on ``ConsumerResult.jitter``. Besides the
numbers it offers the hooks the reports pick up (``DEVELOPERS.md``):

- ``json_fields()`` -- the JSON contract's per-consumer keys;
- ``table_cells()`` -- columns for the consumer table;
- ``contributions()`` -- ``(contributor, RMS seconds)`` rows, largest first,
  for the explain waterfall (they add in root-sum-square);
- ``budget_margin()`` -- the fraction of the budget left and a short text;
- ``phase_noise_curve()`` -- the total L(f) at the consumer and the band, for plots.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from clockplan.jitter.chain import NoiseChain
from clockplan.jitter.result import JitterResult
from clockplan.standards.model import JitterLimit
from clockplan.units import format_frequency, format_time

__all__ = ["ConsumerJitter", "format_band"]


def format_band(band_hz: tuple[float, float]) -> str:
    """An integration band as text, e.g. ``'12 kHz..20 MHz'``.

    Examples
    --------
    >>> format_band((12e3, 20e6))
    '12 kHz..20 MHz'
    """
    return f"{format_frequency(band_hz[0])}..{format_frequency(band_hz[1])}"


@dataclass(frozen=True, eq=False)
class ConsumerJitter:
    """RMS jitter of one consumer's clock over its band, against its budget.

    Parameters
    ----------
    result
        Total and per-contributor RMS jitter (:class:`JitterResult`).
    chain
        The consumer's noise per contributor (for the phase-noise curve).
    kinds
        Contributor name -> ``(kind, part id)``
        (:data:`clockplan.jitter.tree.CONTRIBUTOR_KINDS`).
    band_source
        Where the band comes from: ``"standard"``, ``"board"``, ``"converter"``
        (derived from a sampling converter's sample rate) or ``"default"``.
    notes
        What the figure assumes (default band, peak-to-peak limit read as RMS,
        parts whose noise is not counted); reports print them.
    limits
        Every jitter limit of the consumer's budget
        (:class:`~clockplan.standards.model.JitterLimit`): each one is judged,
        and the budget is the RMS jitter the strictest allows.
    """

    result: JitterResult
    chain: NoiseChain
    kinds: Mapping[str, tuple[str, str]]
    band_source: str
    notes: tuple[str, ...] = ()
    limits: tuple[JitterLimit, ...] = ()

    @property
    def rms_seconds(self) -> float:
        """Total RMS jitter in seconds."""
        return self.result.rms_seconds

    @property
    def band_hz(self) -> tuple[float, float]:
        """The integration band ``(low, high)`` in Hz."""
        return self.result.f_low_hz, self.result.f_high_hz

    @property
    def budget_seconds(self) -> float | None:
        """The RMS budget in seconds, or None."""
        return self.result.budget_seconds

    @property
    def margin_seconds(self) -> float | None:
        """Budget minus jitter (negative when over), or None without a budget."""
        return self.result.margin_seconds

    @property
    def passes(self) -> bool | None:
        """Within budget; None without a budget."""
        return self.result.passes

    @property
    def dominant(self) -> str:
        """The largest contributor's name."""
        return self.result.dominant

    @property
    def dominant_kind(self) -> str:
        """The largest contributor's kind (``"vco"``, ``"reference"``...)."""
        return self.kinds.get(self.dominant, ("none", ""))[0]

    @property
    def note(self) -> str:
        """What the figure is worth: a planning estimate."""
        return self.result.note

    def broken_limits(self) -> tuple[JitterLimit, ...]:
        """The limits the jitter breaks (a peak-to-peak one through its BER factor)."""
        return tuple(limit for limit in self.limits if not limit.passes(self.rms_seconds))

    def limits_json(self) -> list[dict[str, Any]]:
        """Each limit judged: its kind, figure, the RMS it allows, the estimate held against it and the verdict."""
        binding = min(self.limits, key=lambda limit: limit.rms_s) if self.limits else None
        return [
            {
                "kind": limit.kind,
                "limit_s": limit.limit_s,
                "rms_limit_s": limit.rms_s,
                "ber": limit.ber,
                "estimate_s": limit.estimate_s(self.rms_seconds),
                "passes": limit.passes(self.rms_seconds),
                "binding": limit is binding,
            }
            for limit in self.limits
        ]

    def contributions(self) -> tuple[tuple[str, float], ...]:
        """``(contributor, RMS seconds)`` rows, largest first; they add in root-sum-square."""
        return self.result.contributions

    def budget_margin(self) -> tuple[float, str] | None:
        """The fraction of the budget left (negative when over) and a short text, or None."""
        budget = self.budget_seconds
        if budget is None:
            return None
        return 1.0 - self.rms_seconds / budget, f"{format_time(self.rms_seconds)} of {format_time(budget)} RMS"

    def phase_noise_curve(self) -> tuple[np.ndarray, np.ndarray, tuple[float, float]]:
        """``(offsets_hz, total L(f) in dBc/Hz, band)`` at the consumer, for plots.

        Discrete spurs are not in the curve (they count in the jitter).
        """
        return self.chain.offsets_hz, self.chain.total_dbc(), self.band_hz

    def json_fields(self) -> dict[str, Any]:
        """The consumer's jitter keys for the JSON contract (docs/json-output.md)."""
        detail = self.result.json_fields()["jitter"]
        detail["band_source"] = self.band_source
        detail["dominant_kind"] = self.dominant_kind
        detail["notes"] = list(self.notes)
        return {
            "jitter_rms_s": self.rms_seconds,
            "jitter_band_hz": [self.band_hz[0], self.band_hz[1]],
            "jitter_budget_s": self.budget_seconds,
            "jitter_margin_s": self.margin_seconds,
            "jitter_dominant": self.dominant,
            "jitter_limits": self.limits_json(),
            "jitter": detail,
        }

    def table_cells(self) -> dict[str, str]:
        """Columns for the consumer table: jitter, its budget, the margin and the dominant contributor."""
        cells = self.result.table_cells()
        return {
            "jitter": cells["jitter"],
            "jitter budget": cells["jitter budget"],
            "jitter margin": cells["jitter margin"],
            "jitter dominant": cells["dominant"],
        }
