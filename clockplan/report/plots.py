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
    "PlotData",
    "INSTALL_HINT",
    "MAX_PANELS",
    "matplotlib_available",
    "collect_plot_data",
    "phase_noise_figure",
    "temperature_figure",
    "distribution_figure",
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
class PlotData:
    """Everything there is to plot for one analysis."""

    phase_noise: tuple[PhaseNoiseTrace, ...] = ()
    temperature: tuple[TemperatureTrace, ...] = ()
    distributions: tuple[ErrorDistribution, ...] = ()

    @property
    def empty(self) -> bool:
        """True if there is nothing to draw."""
        return not (self.phase_noise or self.temperature or self.distributions)


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


def collect_plot_data(analysis: Analysis) -> PlotData:
    """Gather the plot data the budget results offer through their hooks.

    Examples
    --------
    >>> collect_plot_data(result).empty  # doctest: +SKIP
    True
    """
    noise, temperature, distributions = [], [], []
    for result in analysis.consumers:
        curve = _hook(result.jitter, "phase_noise_curve")
        if curve is not None:
            offsets, levels, band = curve
            noise.append(PhaseNoiseTrace(result.id, offsets, levels, tuple(band), _jitter_note(analysis, result)))
        drift = _hook(result.accuracy, "temperature_curve")
        if drift is not None:
            envelope = getattr(drift, "envelope", None)
            temperature.append(TemperatureTrace(result.id, drift[0], drift[1], tuple(drift[2]),
                                                tuple(envelope) if envelope is not None else None,
                                                str(getattr(drift, "note", ""))))
        samples = _hook(result.accuracy, "monte_carlo_errors")
        if samples is not None:
            distributions.append(ErrorDistribution(result.id, samples[0], tuple(samples[1]),
                                                   str(getattr(samples, "note", ""))))
    return PlotData(tuple(noise), tuple(temperature), tuple(distributions))


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
