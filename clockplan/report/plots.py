"""Plots: phase noise per consumer, ppm over temperature, the Monte Carlo spread.

matplotlib is an optional extra (``pip install 'clockplan[plots]'``) and is
imported only inside the drawing functions. The drawing functions take plain
arrays wrapped in small dataclasses, so they work with any source of data;
:func:`collect_plot_data` gathers those from an analysis through optional
hooks on the budget results (documented in ``DEVELOPERS.md``):

``ConsumerResult.jitter.phase_noise_curve()``
    ``(offsets_hz, dbc_per_hz, (band_low_hz, band_high_hz))`` or None;
``ConsumerResult.accuracy.temperature_curve()``
    ``(temperatures_c, fractional_errors, (budget_low, budget_high))`` or None;
    a named tuple may add ``envelope`` (``(low_errors, high_errors)``, shaded
    as the worst case at each temperature) and ``note`` (shown in the title);
``ConsumerResult.accuracy.monte_carlo_errors()``
    ``(fractional_errors, (budget_low, budget_high))`` or None; a named tuple
    may add a ``note``.

Errors are fractional (SI); the plots show them in ppm. Figures are built with
``matplotlib.figure.Figure`` (no pyplot state), so drawing is safe to repeat.
"""

from __future__ import annotations

import io
import math
import textwrap
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from clockplan.analysis import Analysis
from clockplan.errors import ClockplanError
from clockplan.fileio import atomic_write_bytes, refuse_overwrite

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = [
    "PLOT_FILES",
    "PhaseNoiseTrace",
    "TemperatureTrace",
    "ErrorDistribution",
    "MarginBar",
    "PlotData",
    "INSTALL_HINT",
    "MAX_PANELS",
    "matplotlib_available",
    "collect_plot_data",
    "phase_noise_figure",
    "temperature_figure",
    "distribution_figure",
    "margins_figure",
    "histogram_edges",
    "figure_png",
    "plot_images",
    "write_plots",
]

INSTALL_HINT = "install the plotting extra: pip install 'clockplan[plots]' (it brings matplotlib)"

_PANEL_SIZE = (5.6, 3.4)
#: Panels drawn per figure at most: a board with hundreds of consumers would otherwise
#: take minutes to lay out and give an image nobody can read.
MAX_PANELS = 24
_BUDGET_STYLE = {"color": "#c62828", "linestyle": "--", "linewidth": 1.2}


@dataclass(frozen=True)
class PhaseNoiseTrace:
    """Single-sideband phase noise at one consumer and its integration band.

    ``offsets_hz`` and ``dbc_per_hz`` are equal-length sequences (offset from
    the carrier, L(f) in dBc/Hz); ``band_hz`` is ``(low, high)``; ``note`` is
    shown in the panel title (e.g. the integrated RMS jitter).
    """

    consumer: str
    offsets_hz: Sequence[float]
    dbc_per_hz: Sequence[float]
    band_hz: tuple[float, float]
    note: str = ""


@dataclass(frozen=True)
class TemperatureTrace:
    """Fractional frequency error of one consumer over temperature, with its budget.

    ``envelope`` is an optional ``(low_errors, high_errors)`` pair at the same
    temperatures (the worst case), drawn as a shaded band; ``errors`` may be
    NaN throughout when only the envelope is known (a stability band).
    """

    consumer: str
    temperatures_c: Sequence[float]
    errors: Sequence[float]
    budget: tuple[float, float]
    envelope: tuple[Sequence[float], Sequence[float]] | None = None
    note: str = ""


@dataclass(frozen=True)
class ErrorDistribution:
    """Monte Carlo samples of one consumer's fractional frequency error, with its budget."""

    consumer: str
    errors: Sequence[float]
    budget: tuple[float, float]
    note: str = ""


@dataclass(frozen=True)
class MarginBar:
    """One consumer's worst margin for the overview: its kind, the share of the budget left, its status."""

    consumer: str
    kind: str
    headroom: float
    status: str
    text: str = ""


@dataclass(frozen=True)
class PlotData:
    """Everything there is to plot for one analysis.

    ``margins`` feeds the overview (every consumer's worst margin);
    ``left_out`` says which plots or panels were left out and why, for the
    command to print (a plot with nothing to show is not drawn).
    """

    phase_noise: tuple[PhaseNoiseTrace, ...] = ()
    temperature: tuple[TemperatureTrace, ...] = ()
    distributions: tuple[ErrorDistribution, ...] = ()
    margins: tuple[MarginBar, ...] = ()
    margin_warning: float = 0.2
    left_out: tuple[str, ...] = ()

    @property
    def empty(self) -> bool:
        """True if there is nothing to draw."""
        return not (self.phase_noise or self.temperature or self.distributions or self.margins)


def matplotlib_available() -> bool:
    """True if matplotlib can be imported (the ``plots`` extra is installed)."""
    import importlib.util

    return importlib.util.find_spec("matplotlib") is not None


def _hook(obj: Any, name: str) -> Any:
    method = getattr(obj, name, None)
    return method() if obj is not None and callable(method) else None


def _jitter_note(analysis: Analysis, result: Any) -> str:
    """``'FAIL: over by 13.4 % (317 fs of 280 fs RMS)'``, or the first table cell without a budget."""
    from clockplan.report.content import consumer_margins, consumer_status

    status = consumer_status(analysis, result.id)
    margin = next((m for m in consumer_margins(analysis, result) if m.kind == "jitter"), None)
    if margin is not None:
        return f"{status}: jitter {margin.describe} ({margin.text})"
    cells = _hook(result.jitter, "table_cells") or {}
    first = next(iter(cells.items()), None)
    return f"{status}: {first[0]} {first[1]}, no budget" if first else status


def _worth_a_panel(analysis: Analysis, result: Any) -> bool:
    """A consumer that fails, warns, is unchecked or passes with a thin margin: what a reviewer must look at."""
    from clockplan.margins import is_thin
    from clockplan.report.content import consumer_margins, consumer_status

    if consumer_status(analysis, result.id) != "PASS":
        return True
    threshold = analysis.board.margin_warning
    return any(math.isfinite(m.headroom) and is_thin(m.headroom, threshold)
               for m in consumer_margins(analysis, result))


def _margin_bars(analysis: Analysis) -> list[MarginBar]:
    from clockplan.report.content import consumer_margins, consumer_status

    bars = []
    for result in analysis.consumers:
        margins = consumer_margins(analysis, result)
        if margins:
            worst = min(margins, key=lambda m: m.headroom)
            bars.append(MarginBar(result.id, worst.kind, worst.headroom, consumer_status(analysis, result.id),
                                  worst.describe))
    return bars


def collect_plot_data(analysis: Analysis, every: bool = False) -> PlotData:
    """Gather the plot data the budget results offer through their hooks.

    Phase-noise curves are drawn for every consumer that carries one. The
    ppm-over-temperature and Monte Carlo panels go to the consumers a reviewer
    must look at (failing, warning, unchecked, or a thin margin), unless
    ``every``; the overview of every consumer's worst margin is always there.
    What is left out is said in ``left_out``.

    Examples
    --------
    >>> collect_plot_data(result).empty  # doctest: +SKIP
    True
    """
    noise, temperature, distributions = [], [], []
    skipped = {"ppm-temperature.png": [], "monte-carlo.png": []}
    for result in analysis.consumers:
        curve = _hook(result.jitter, "phase_noise_curve")
        if curve is not None:
            offsets, levels, band = curve
            noise.append(PhaseNoiseTrace(result.id, offsets, levels, tuple(band), _jitter_note(analysis, result)))
        worth = every or _worth_a_panel(analysis, result)
        drift = _hook(result.accuracy, "temperature_curve")
        if drift is not None and not worth:
            skipped["ppm-temperature.png"].append(result.id)
        elif drift is not None:
            envelope = getattr(drift, "envelope", None)
            temperature.append(TemperatureTrace(result.id, drift[0], drift[1], tuple(drift[2]),
                                                tuple(envelope) if envelope is not None else None,
                                                str(getattr(drift, "note", ""))))
        samples = _hook(result.accuracy, "monte_carlo_errors")
        if samples is not None and not worth:
            skipped["monte-carlo.png"].append(result.id)
        elif samples is not None:
            distributions.append(ErrorDistribution(result.id, samples[0], tuple(samples[1]),
                                                   str(getattr(samples, "note", ""))))
    left_out = []
    for name, ids in skipped.items():
        if ids:
            drawn = temperature if name == "ppm-temperature.png" else distributions
            what = f"{name} left out: its" if not drawn else f"{name}: no panel for the"
            left_out.append(f"{what} {len(ids)} consumer(s) that pass with room ({', '.join(ids)}); "
                            "--every-consumer draws them")
    bars = _margin_bars(analysis)
    if not any(bar.kind in ("ppm", "jitter") for bar in bars):
        if bars:
            left_out.append("margins.png left out: no ppm or jitter margin was computed (the summary gives "
                            "the synthesis margins)")
        bars = []
    return PlotData(tuple(noise), tuple(temperature), tuple(distributions), tuple(bars),
                    float(analysis.board.margin_warning), tuple(left_out))


def _require_matplotlib() -> None:
    if not matplotlib_available():
        raise ClockplanError("plots need matplotlib, which is not installed", hint=INSTALL_HINT)


def _grid(count: int, title: str) -> tuple["Figure", list[Any]]:
    from matplotlib.figure import Figure

    if count > MAX_PANELS:
        title += f" (the first {MAX_PANELS} of {count} consumers)"
        count = MAX_PANELS
    columns = 1 if count == 1 else 2
    rows = math.ceil(count / columns)
    figure = Figure(figsize=(_PANEL_SIZE[0] * columns, _PANEL_SIZE[1] * rows + 0.6), layout="constrained")
    figure.suptitle(title, fontsize=13)
    axes = figure.subplots(rows, columns, squeeze=False).ravel().tolist()
    for spare in axes[count:]:
        spare.set_visible(False)
    return figure, axes[:count]


def _format_hz(hz: float) -> str:
    for scale, prefix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if hz >= scale:
            return f"{hz / scale:g} {prefix}Hz"
    return f"{hz:g} Hz"


def phase_noise_figure(traces: Sequence[PhaseNoiseTrace]) -> "Figure":
    """One panel per consumer: L(f) on a log offset axis, the integration band shaded.

    Examples
    --------
    >>> fig = phase_noise_figure([PhaseNoiseTrace("phy0", [1e3, 1e7], [-100, -150], (1.2e4, 2e7))])  # doctest: +SKIP
    """
    _require_matplotlib()
    figure, axes = _grid(len(traces), "Phase noise at each consumer")
    for ax, trace in zip(axes, traces):
        low, high = trace.band_hz
        ax.axvspan(low, high, color="#1565c0", alpha=0.12, label=f"integration band {_format_hz(low)} – {_format_hz(high)}")
        ax.semilogx(trace.offsets_hz, trace.dbc_per_hz, color="#1565c0", linewidth=1.6, label="L(f)")
        note = "\n".join(textwrap.wrap(trace.note, 70))  # a long note must not run past its panel
        failing = trace.note.startswith("FAIL")  # the word says it; the colour only repeats it
        ax.set_title(trace.consumer + (f"\n{note}" if note else ""), fontsize=10,
                     color="#b71c1c" if failing else "black")
        ax.set_xlabel("offset from carrier (Hz)")
        ax.set_ylabel("L(f) (dBc/Hz)")
        ax.grid(True, which="both", alpha=0.3)
        ax.legend(fontsize=8, loc="lower left")
    return figure


def _titled(title: str, note: str) -> str:
    """A panel title with its note wrapped below it (a long note must not run past its panel)."""
    return title + ("\n" + "\n".join(textwrap.wrap(note, 70)) if note else "")


def _budget_lines(ax: Any, budget: tuple[float, float], horizontal: bool) -> None:
    draw = ax.axhline if horizontal else ax.axvline
    low, high = (float(b) * 1e6 for b in budget)
    (ax.axhspan if horizontal else ax.axvspan)(low, high, color="#2e7d32", alpha=0.06, linewidth=0)
    draw(low, label=f"budget {low:+g} / {high:+g} ppm", **_BUDGET_STYLE)
    draw(high, **_BUDGET_STYLE)


def temperature_figure(traces: Sequence[TemperatureTrace]) -> "Figure":
    """One panel per consumer: frequency error (ppm) over temperature, budget lines dashed.

    Examples
    --------
    >>> fig = temperature_figure([TemperatureTrace("mcu", [-40, 85], [-1e-5, 1e-5], (-5e-5, 5e-5))])  # doctest: +SKIP
    """
    _require_matplotlib()
    figure, axes = _grid(len(traces), "Frequency error over temperature")
    for ax, trace in zip(axes, traces):
        ppm = [float(e) * 1e6 for e in trace.errors]
        if trace.envelope is not None:
            low, high = ([float(e) * 1e6 for e in side] for side in trace.envelope)
            # The range in the label: against a wide budget a ppm-class envelope is only a hairline.
            ax.fill_between(trace.temperatures_c, low, high, color="#2e7d32", alpha=0.25, linewidth=0.8,
                            edgecolor="#2e7d32",
                            label=f"worst case {min(low):+.3g}..{max(high):+.3g} ppm (other terms at their limits)")
        if any(not math.isnan(value) for value in ppm):
            ax.plot(trace.temperatures_c, ppm, color="#2e7d32", linewidth=1.6, label="frequency error")
        _budget_lines(ax, trace.budget, horizontal=True)
        ax.set_title(_titled(trace.consumer, trace.note), fontsize=10)
        ax.set_xlabel("temperature (°C)")
        ax.set_ylabel("error (ppm)")
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=8, loc="best")
    return figure


def distribution_figure(traces: Sequence[ErrorDistribution]) -> "Figure":
    """One panel per consumer: histogram of Monte Carlo errors (ppm) against the budget.

    The title gives the share of samples inside the budget.

    Examples
    --------
    >>> fig = distribution_figure([ErrorDistribution("phy0", [0.0, 1e-6, -2e-6], (-1e-4, 1e-4))])  # doctest: +SKIP
    """
    _require_matplotlib()
    figure, axes = _grid(len(traces), "Monte Carlo frequency error against the budget (each board at its worst temperature and age)")
    for ax, trace in zip(axes, traces):
        ppm = [float(e) * 1e6 for e in trace.errors]
        low, high = (float(b) * 1e6 for b in trace.budget)
        inside = sum(low <= value <= high for value in ppm) / len(ppm) if ppm else float("nan")
        ax.hist(ppm, bins=histogram_edges(ppm), color="#6a1b9a", alpha=0.75, label=f"{len(ppm)} samples")
        _budget_lines(ax, trace.budget, horizontal=False)
        ax.set_title(_titled(f"{trace.consumer}: {inside * 100:.4g} % inside the budget", trace.note), fontsize=10)
        ax.set_xlabel("error (ppm)")
        ax.set_ylabel("samples")
        ax.grid(True, alpha=0.3)
        ax.legend(fontsize=8, loc="best")
    return figure


_BAR_COLOUR = {"PASS": "#2e7d32", "warn": "#ef6c00", "unchecked": "#6a1b9a", "FAIL": "#c62828"}
#: The overview clips the bars here (share of the budget left, in %): a 40x overrun would flatten the rest.
_BAR_CLIP = (-100.0, 100.0)


def margins_figure(bars: Sequence[MarginBar], margin_warning: float = 0.2) -> "Figure":
    """One overview panel: every consumer's worst margin (share of its budget left), status in words.

    Bars beyond ``-100 %`` are clipped and labelled with their true value;
    the dashed line is the board's ``margin_warning``.

    Examples
    --------
    >>> fig = margins_figure([MarginBar("phy0", "ppm", 0.64, "PASS")])  # doctest: +SKIP
    """
    _require_matplotlib()
    from matplotlib.figure import Figure

    count = min(len(bars), MAX_PANELS * 4)
    shown = list(bars)[:count]
    figure = Figure(figsize=(8.0, 1.2 + 0.32 * count), layout="constrained")
    title = "Worst margin of every consumer (share of its budget left)"
    if count < len(bars):
        title += f" (the first {count} of {len(bars)})"
    figure.suptitle(title, fontsize=12)
    ax = figure.subplots()
    values = [max(_BAR_CLIP[0], min(_BAR_CLIP[1], b.headroom * 100)) if math.isfinite(b.headroom) else _BAR_CLIP[0]
              for b in shown]
    labels = [f"{b.consumer} ({b.kind})" for b in shown]
    positions = list(range(count))[::-1]
    ax.barh(positions, values, color=[_BAR_COLOUR.get(b.status, "#546e7a") for b in shown])
    for y, value, bar in zip(positions, values, shown):
        # Right of the bar, or right of zero for an overrun (left of it are the consumer names).
        ax.text(max(value, 0) + 2, y, f"{bar.status}: {bar.text}", va="center", ha="left", fontsize=8)
    ax.set_yticks(positions, labels, fontsize=8)
    ax.axvline(0, color="black", linewidth=0.8)
    ax.axvline(margin_warning * 100, color="#ef6c00", linestyle="--", linewidth=1.0,
               label=f"margin_warning {margin_warning * 100:g} %")
    ax.set_xlim(_BAR_CLIP[0] * 1.6, _BAR_CLIP[1] * 1.6)
    ax.set_xlabel("budget left (%); below 0: over the budget")
    ax.grid(True, axis="x", alpha=0.3)
    ax.legend(fontsize=8, loc="lower right")
    return figure


def histogram_edges(values: Sequence[float], wanted: int = 60) -> list[float]:
    """``wanted`` + 1 bin edges spanning ``values``, never narrower than float resolution allows.

    Samples that agree to the last few bits (a large offset with a tiny spread)
    would leave no room for distinct edges; the span is then widened about its
    centre to the least one that holds ``wanted`` bins. Non-finite values are
    left out of the span.

    Examples
    --------
    >>> edges = histogram_edges([1e6, 1e6 + 1e-10], wanted=4)
    >>> len(edges), len(set(edges))
    (5, 5)
    """
    finite = [v for v in values if math.isfinite(v)] or [0.0]
    low, high = min(finite), max(finite)
    least = 64.0 * wanted * math.ulp(max(abs(low), abs(high), 1.0))
    if high - low < least:
        centre = low / 2 + high / 2
        low, high = centre - least / 2, centre + least / 2
    step = (high - low) / wanted
    return [low + step * index for index in range(wanted)] + [high]


def figure_png(figure: "Figure", dpi: int = 110) -> bytes:
    """The figure as PNG bytes.

    Examples
    --------
    >>> figure_png(temperature_figure(traces))[:4]  # doctest: +SKIP
    b'\\x89PNG'
    """
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=dpi)
    return buffer.getvalue()


def plot_images(data: PlotData) -> dict[str, bytes]:
    """PNG bytes for each kind of plot that has data, keyed by file name."""
    makers = (
        ("margins.png", data.margins, lambda bars: margins_figure(bars, data.margin_warning)),
        ("phase-noise.png", data.phase_noise, phase_noise_figure),
        ("ppm-temperature.png", data.temperature, temperature_figure),
        ("monte-carlo.png", data.distributions, distribution_figure),
    )
    return {name: figure_png(make(traces)) for name, traces, make in makers if traces}


#: The files ``plots`` may write into its folder, whatever the data.
PLOT_FILES = ("phase-noise.png", "ppm-temperature.png", "monte-carlo.png")


def write_plots(data: PlotData, folder: str | Path, protected: Sequence[str | Path] = ()) -> list[Path]:
    """Write one PNG per kind of plot that has data; return the paths written.

    Raises
    ------
    ClockplanError
        matplotlib is missing, or ``folder`` does not exist.

    Examples
    --------
    >>> write_plots(collect_plot_data(result), "plots")  # doctest: +SKIP
    [PosixPath('plots/phase-noise.png')]
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise ClockplanError(f"folder {folder} does not exist", hint="create it first, or choose another folder")
    written = []
    for name, png in plot_images(data).items():
        path = folder / name
        refuse_overwrite(path, protected=protected)
        try:
            atomic_write_bytes(path, png)
        except OSError as err:
            raise ClockplanError(f"cannot write {path}: {err.strerror}", hint="check free space and permissions") from err
        written.append(path)
    return written
