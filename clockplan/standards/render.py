"""Rich renderables for ``clockplan standards``: the table of entries and one entry in detail.

Only this module imports :mod:`rich`; the command line calls :func:`standards_view`
(or the two builders directly) and prints what it returns.
"""

from __future__ import annotations

from fractions import Fraction

from rich.console import Group
from rich.panel import Panel
from rich.table import Table
from rich.text import Text

from clockplan.errors import BoardError
from clockplan.standards.model import StandardBudget, gaussian_pp_per_rms
from clockplan.standards.table import closest_keys, find_standards, get_standard, normalize_key, standard_keys
from clockplan.units import format_frequency, format_time

__all__ = [
    "PLANNING_CAVEAT",
    "format_error_range",
    "format_jitter",
    "standards_table",
    "standard_panel",
    "standards_view",
]

PLANNING_CAVEAT = "Planning figures: the governing standard and the part datasheet decide."

_CONFIDENCE_STYLE = {
    "published": "green",
    "common practice": "yellow",
    "from memory": "magenta",
    "board": "cyan",
}


def _number(value: float) -> str:
    return f"{value:.4g}"


def format_error_range(error: tuple[Fraction, Fraction] | None) -> str:
    """Text of a fractional error range: ``'±300 ppm'``, ``'-5000..0 ppm'``, ``'-100..0 %'``.

    Percent is used from 1 % up, ppm below.

    Examples
    --------
    >>> from fractions import Fraction as F
    >>> format_error_range((F(-3, 10**4), F(3, 10**4)))
    '±300 ppm'
    >>> format_error_range((F(-1, 200), F(0)))
    '-5000..0 ppm'
    """
    if error is None:
        return "—"
    low, high = error
    percent = max(abs(low), abs(high)) >= Fraction(1, 100)
    scale, unit = (100, "%") if percent else (10**6, "ppm")
    if low == -high:
        return f"±{_number(float(high * scale))} {unit}"
    return f"{_number(float(low * scale))}..{_number(float(high * scale))} {unit}"


def _band(band: tuple[Fraction, Fraction] | None) -> str:
    if band is None:
        return ""
    return f"{format_frequency(band[0])}–{format_frequency(band[1])}"


def format_jitter(budget: StandardBudget) -> str:
    """Text of a jitter limit with its band, e.g. ``'0.5 ps RMS, 10 kHz–50 MHz'``; ``'—'`` when none."""
    parts = []
    if budget.jitter_rms_s is not None:
        parts.append(f"{format_time(budget.jitter_rms_s)} RMS")
    if budget.jitter_pp_s is not None:
        parts.append(f"{format_time(budget.jitter_pp_s)} p-p")
    if not parts:
        return "—"
    band = _band(budget.jitter_band_hz)
    return " / ".join(parts) + (f", {band}" if band else "")


def _spread(budget: StandardBudget) -> str:
    if budget.spread is None:
        return "—"
    text = format_error_range(budget.spread)
    if budget.spread_rate_hz is not None:
        text += f" @ {_band(budget.spread_rate_hz)}"
    return text


def _nominal(budget: StandardBudget) -> str:
    return ", ".join(format_frequency(f) for f in budget.nominal_hz) or "—"


def _confidence(budget: StandardBudget) -> Text:
    return Text(budget.confidence, style=_CONFIDENCE_STYLE.get(budget.confidence, ""))


def standards_table(word: str | None = None) -> Table:
    """A table of the shipped standards, optionally only those matching ``word``.

    Parameters
    ----------
    word
        Filter on key, title, family and aliases (case-insensitive); ``None`` lists all.

    Raises
    ------
    BoardError
        When nothing matches ``word``; the hint names the closest keys.
    """
    budgets = find_standards(word)
    if not budgets:
        close = closest_keys(word or "")
        hint = ("did you mean " + " or ".join(repr(k) for k in close) + "?") if close else None
        raise BoardError(f"no standard matches {word!r}", hint=hint or "run 'clockplan standards' to list them all")
    title = "Interface clock requirements" + (f" matching {word!r}" if word else "")
    table = Table(title=title, caption=PLANNING_CAVEAT, show_lines=False)
    table.add_column("Key", style="bold", no_wrap=True)
    table.add_column("Interface")
    table.add_column("Nominal")
    table.add_column("Tolerance", no_wrap=True)
    table.add_column("Spread")
    table.add_column("Jitter")
    table.add_column("Confidence", no_wrap=True)
    for budget in budgets:
        table.add_row(
            budget.key,
            budget.title,
            _nominal(budget),
            format_error_range(budget.ppm),
            _spread(budget),
            format_jitter(budget),
            _confidence(budget),
        )
    return table


def standard_panel(budget: StandardBudget | str) -> Panel:
    """One entry in detail: every figure, how jitter is measured, the sources, notes and aliases.

    Parameters
    ----------
    budget
        A :class:`StandardBudget` (e.g. a board's resolved budget) or a key to look up.
    """
    if isinstance(budget, str):
        budget = get_standard(budget)
    grid = Table.grid(padding=(0, 2))
    grid.add_column(style="bold", no_wrap=True)
    grid.add_column()
    marked = set(budget.overridden)

    def row(label: str, value: str | Text, *board_names: str) -> None:
        if marked.intersection(board_names):
            value = Text(str(value)).append("  (board)", style="cyan")
        grid.add_row(label, value)

    row("Family", budget.family)
    row("Nominal", _nominal(budget))
    row("Tolerance", format_error_range(budget.ppm), "ppm", "uart", "can", "rtc")
    row("Spread", _spread(budget), "spread", "spread_rate")
    total = budget.frequency_error_range()
    if budget.spread is not None and total is not None:
        row("Total range", format_error_range(total))
    row("Jitter", format_jitter(budget), "jitter", "jitter_pp", "jitter_band", "converter")
    if budget.jitter_pp_s is not None:
        pp_rms = budget.jitter_pp_s / gaussian_pp_per_rms()
        judged = "; both limits are judged" if budget.jitter_rms_s is not None else ""
        row("  p-p as RMS", f"{format_time(pp_rms)} (Gaussian, BER 1e-12){judged}")
    if budget.jitter_notes:
        row("Jitter method", budget.jitter_notes)
    row("Source", budget.source)
    row("Confidence", _confidence(budget))
    if budget.notes:
        row("Notes", budget.notes)
    if budget.aliases:
        row("Also known as", ", ".join(budget.aliases))
    body = Group(grid, Text(PLANNING_CAVEAT, style="dim"))
    return Panel(body, title=f"[bold]{budget.key}[/bold] — {budget.title}", expand=False)


def standards_view(argument: str | None = None) -> Table | Panel:
    """What ``clockplan standards [ARGUMENT]`` shows.

    No argument: the whole table. A key or alias of an entry: that entry in
    detail. Any other word: the entries matching it; when none match, a
    :class:`~clockplan.errors.BoardError` naming the closest keys.

    Examples
    --------
    >>> type(standards_view("pcie gen4")).__name__
    'Panel'
    >>> type(standards_view("ethernet")).__name__
    'Table'
    """
    if not argument:
        return standards_table()
    folded = normalize_key(argument)
    for key in standard_keys():
        budget = get_standard(key)
        if folded in {normalize_key(name) for name in (key, *budget.aliases)}:
            return standard_panel(budget)
    return standards_table(argument)
