"""A progress bar for long runs that stays out of the way of short ones.

The bar appears on stderr only once a run has taken more than a moment, and
disappears when it ends (transient), so quick runs and piped output are
untouched. rich is imported only when the bar is actually shown.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

__all__ = ["DelayedProgress"]

#: Seconds a run may take before the bar is worth showing.
DEFAULT_DELAY_S = 0.5


class DelayedProgress:
    """A ``progress(fraction)`` callback that shows a transient bar after ``delay_s``.

    Use it as a context manager so the bar is removed however the run ends.

    Parameters
    ----------
    description
        Text beside the bar.
    delay_s
        How long a run may take before the bar appears.
    console
        A rich console to draw on; by default one on stderr.
    clock
        Source of the time in seconds (for tests).

    Examples
    --------
    >>> with DelayedProgress("Monte Carlo") as progress:
    ...     progress(0.5)
    ...     progress(1.0)
    >>> progress.shown
    False
    """

    def __init__(
        self,
        description: str,
        delay_s: float = DEFAULT_DELAY_S,
        console: Any = None,
        clock: Callable[[], float] = time.monotonic,
    ) -> None:
        self.description = description
        self.delay_s = delay_s
        self._console = console
        self._clock = clock
        self._start = clock()
        self._bar: Any = None
        self._task: Any = None

    @property
    def shown(self) -> bool:
        """True once the bar has appeared."""
        return self._bar is not None

    def __call__(self, fraction: float) -> None:
        if self._bar is None:
            if fraction >= 1.0 or self._clock() - self._start < self.delay_s:
                return
            self._open()
        self._bar.update(self._task, completed=min(max(fraction, 0.0), 1.0))

    def _open(self) -> None:
        from rich.console import Console
        from rich.progress import BarColumn, Progress, TaskProgressColumn, TextColumn, TimeRemainingColumn

        console = self._console if self._console is not None else Console(stderr=True)
        self._bar = Progress(
            TextColumn("{task.description}"), BarColumn(), TaskProgressColumn(), TimeRemainingColumn(),
            console=console, transient=True,
        )
        self._task = self._bar.add_task(self.description, total=1.0)
        self._bar.start()

    def close(self) -> None:
        """Remove the bar if it was shown."""
        if self._bar is not None:
            self._bar.stop()

    def __enter__(self) -> "DelayedProgress":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()
