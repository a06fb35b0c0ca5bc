"""One run's deadline: the instant ``--time-limit`` ends, shared by every stage of a command.

A command makes one :class:`Deadline` when it starts; the plan search, the
infeasibility explanation, the budget stages and synthesis all stop at it (the
plan search at an earlier share of it, so that the explanation and the report
still get time). The instants are ``time.monotonic()`` values, the clock every
stage already reads.

A run cut by its deadline depends on how fast the machine ran: two runs of
the same input and limit can stop at different points and give different
answers. Every cut stage says so in its output (docs/files-and-time-limits.md).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

__all__ = ["Deadline", "CUT_RUN_NOTE", "MAX_SECONDS", "check_time_limit"]

#: Said wherever a stage stopped at the time limit: a cut run is not reproducible.
CUT_RUN_NOTE = "a run cut by its time limit depends on the machine's speed and may differ from run to run"

#: The longest time limit a command accepts, in seconds (one hour).
MAX_SECONDS = 3600.0


def check_time_limit(seconds: float) -> float:
    """``seconds`` if it is a usable time limit (finite, above 0, at most an hour), else ``ValueError``.

    Examples
    --------
    >>> check_time_limit(2.5)
    2.5
    >>> check_time_limit(float("nan"))
    Traceback (most recent call last):
    ...
    ValueError: a time limit must be a number of seconds above 0 and at most 3600, not nan
    """
    if not (math.isfinite(seconds) and 0 < seconds <= MAX_SECONDS):
        raise ValueError(f"a time limit must be a number of seconds above 0 and at most {MAX_SECONDS:g}, not {seconds!r}")
    return seconds


@dataclass(frozen=True)
class Deadline:
    """The end of a run: ``at`` is a ``time.monotonic()`` instant; ``started`` when the run began.

    Examples
    --------
    >>> deadline = Deadline.after(5.0)
    >>> deadline.expired()
    False
    >>> 4.0 < deadline.remaining() <= 5.0
    True
    """

    started: float
    at: float

    @classmethod
    def after(cls, seconds: float, started: float | None = None) -> "Deadline":
        """The deadline ``seconds`` after ``started`` (default: now); the limit must pass :func:`check_time_limit`."""
        start = time.monotonic() if started is None else started
        return cls(start, start + check_time_limit(seconds))

    def expired(self) -> bool:
        """True once the deadline has passed."""
        return time.monotonic() > self.at

    def remaining(self) -> float:
        """Seconds left (0 once passed)."""
        return max(0.0, self.at - time.monotonic())

    def share(self, fraction: float) -> float:
        """The instant ``fraction`` of the whole run's time after its start (never past ``at``)."""
        return min(self.at, self.started + fraction * (self.at - self.started))
