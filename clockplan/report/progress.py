"""A progress bar for long analyses (Monte Carlo, large plans), on stderr only.

The budget stages report progress through ``AnalysisOptions.progress``, a
callable taking the fraction done (0..1). :class:`ProgressBar` is such a
callable: it draws nothing until the first report (a quick analysis shows no
bar at all), draws on standard error so that piped reports and JSON on
standard output stay clean, and only when standard error is a terminal.
"""

from __future__ import annotations

import sys
from typing import Any, TextIO

__all__ = ["ProgressBar"]


class ProgressBar:
    """A lazily started rich progress bar, used as a context manager.

    Parameters
    ----------
    description
        The text before the bar.
    stream
        Where to draw (default: standard error).
    enabled
        Force on or off; by default on when ``stream`` is a terminal.

    Examples
    --------
    >>> with ProgressBar("Monte Carlo") as report:  # doctest: +SKIP
    ...     analysis = analyze(board, options=AnalysisOptions(progress=report))
    """

    def __init__(self, description: str = "working", stream: TextIO | None = None, enabled: bool | None = None) -> None:
        self.description = description
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = enabled if enabled is not None else bool(getattr(self.stream, "isatty", lambda: False)())
        self._progress: Any = None
        self._task: Any = None
        self.last = 0.0

    def __enter__(self) -> "ProgressBar":
        return self

    def __call__(self, fraction: float) -> None:
        self.last = min(max(float(fraction), 0.0), 1.0)
        if not self.enabled:
            return
        if self._progress is None:
            self._start()
        self._progress.update(self._task, completed=self.last * 100)

    def _start(self) -> None:
        from rich.console import Console
        from rich.progress import BarColumn, Progress, TaskProgressColumn, TextColumn, TimeRemainingColumn

        console = Console(file=self.stream, force_terminal=self.enabled or None)
        self._progress = Progress(TextColumn("{task.description}"), BarColumn(), TaskProgressColumn(),
                                  TimeRemainingColumn(), console=console, transient=True)
        self._progress.start()
        self._task = self._progress.add_task(self.description, total=100)

    def __exit__(self, *exc: object) -> None:
        if self._progress is not None:
            self._progress.stop()
            self._progress = None
