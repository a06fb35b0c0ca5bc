"""What every benchmark shares: the row it reports, timing helpers, the table and JSON output.

A row is one figure measured in a run, with the baseline it is compared
against, measured in the same run, and their ratio (figure / baseline).
"""

from __future__ import annotations

import json
import statistics
import time
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass

__all__ = ["Row", "median_seconds", "best_seconds", "render_table", "rows_json"]


@dataclass(frozen=True)
class Row:
    """One measured figure.

    Parameters
    ----------
    benchmark
        The benchmark it belongs to (the name ``--only`` selects), e.g. ``planner``.
    name
        What was measured, e.g. ``exact reachable: planner``.
    figure, unit
        The measured value and its unit (``ms``, ``s``, ``boards/s``...).
    baseline, baseline_name
        The value it is compared with, in the same unit and measured in the same
        run, and what that baseline is; None when the figure stands alone.
    note
        Context that is not a number (feasible or not, same answer or not).
    """

    benchmark: str
    name: str
    figure: float
    unit: str
    baseline: float | None = None
    baseline_name: str = ""
    note: str = ""

    @property
    def ratio(self) -> float | None:
        """figure / baseline, or None without a baseline."""
        if self.baseline is None or self.baseline == 0:
            return None
        return self.figure / self.baseline


def median_seconds(action: Callable[[], object], runs: int, warm_up: bool = True) -> float:
    """Median wall time of ``runs`` calls of ``action`` (after one warm-up call unless told not to)."""
    if warm_up:
        action()
    times = []
    for _ in range(max(1, runs)):
        start = time.perf_counter()
        action()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def best_seconds(action: Callable[[], object], runs: int) -> float:
    """Shortest wall time of ``runs`` calls of ``action`` (timer noise only ever adds)."""
    best = float("inf")
    for _ in range(max(1, runs)):
        start = time.perf_counter()
        action()
        best = min(best, time.perf_counter() - start)
    return best


def _number(value: float | None) -> str:
    if value is None:
        return "-"
    if value == 0:
        return "0"
    if abs(value) >= 1e4:
        return f"{value:,.0f}"
    return f"{value:.4g}"


def render_table(rows: Sequence[Row]) -> str:
    """The rows as one plain-text table: benchmark, figure, unit, baseline, ratio; notes underneath."""
    header = ("benchmark", "figure", "unit", "baseline", "ratio")
    body = []
    notes = []
    for row in rows:
        baseline = "-" if row.baseline is None else f"{_number(row.baseline)} ({row.baseline_name})"
        ratio = "-" if row.ratio is None else f"{row.ratio:.3g}"
        label = f"{row.benchmark}: {row.name}"
        if row.note:
            notes.append(f"[{len(notes) + 1}] {label}: {row.note}")
            label += f" [{len(notes)}]"
        body.append((label, _number(row.figure), row.unit, baseline, ratio))
    widths = [max(len(line[i]) for line in [header, *body]) for i in range(len(header))]
    right = {1, 4}

    def line(cells: Sequence[str]) -> str:
        return "  ".join(c.rjust(w) if i in right else c.ljust(w) for i, (c, w) in enumerate(zip(cells, widths))).rstrip()

    out = [line(header), "  ".join("-" * w for w in widths)]
    out += [line(cells) for cells in body]
    if notes:
        out += ["", *notes]
    return "\n".join(out) + "\n"


def rows_json(rows: Sequence[Row], **context: object) -> str:
    """The rows as a JSON document: ``{"context": {...}, "rows": [{..., "ratio": r}]}``."""
    listed = [{**asdict(row), "ratio": row.ratio} for row in rows]
    return json.dumps({"context": context, "rows": listed}, indent=2, ensure_ascii=False) + "\n"
