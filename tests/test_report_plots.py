"""Plots: written, non-empty PNG images that show the data they were given.

The PNG files are checked against the PNG specification (W3C/ISO 15948:
signature, IHDR chunk, zlib-compressed IDAT) with the standard library only.
What is drawn is read back from matplotlib's artists: the shaded band spans the
integration band, budget lines sit at the budget, errors are shown in ppm.
"""

import struct
import zlib
from dataclasses import replace

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import load_board
from clockplan.cli import main
from clockplan.report.plots import (
    ErrorDistribution,
    PhaseNoiseTrace,
    TemperatureTrace,
    collect_plot_data,
    distribution_figure,
    figure_png,
    histogram_edges,
    phase_noise_figure,
    plot_images,
    temperature_figure,
    write_plots,
)

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG spec, section 5.2


def png_facts(data: bytes) -> tuple[int, int, int]:
    """Width, height and the number of distinct byte values in the image data (PNG spec 5.3, 11.2.2)."""
    assert data[:8] == PNG_SIGNATURE
    position, width, height, idat = 8, 0, 0, b""
    while position < len(data):
        length, kind = struct.unpack(">I4s", data[position:position + 8])
        body = data[position + 8:position + 8 + length]
        if kind == b"IHDR":
            width, height = struct.unpack(">II", body[:8])
        elif kind == b"IDAT":
            idat += body
        position += 12 + length
    pixels = zlib.decompress(idat)
    return width, height, len(set(pixels))


# A tuning-fork crystal's parabola, -0.034 ppm/°C² about 25 °C (from memory; the usual datasheet figure).
TEMPERATURES = [-40.0 + 5.0 * i for i in range(26)]
PARABOLA = [-0.034e-6 * (t - 25.0) ** 2 for t in TEMPERATURES]
# A plausible phase-noise profile and the 12 kHz - 20 MHz band (common practice for Ethernet-class clocks).
OFFSETS = [1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 2e7]
LEVELS = [-95.0, -118.0, -128.0, -134.0, -148.0, -155.0, -156.0]
BAND = (12e3, 20e6)


@pytest.fixture(autouse=True)
def _matplotlib():
    pytest.importorskip("matplotlib", reason="plots are the optional 'plots' extra")


def test_phase_noise_band_is_shaded_where_asked():
    figure = phase_noise_figure([PhaseNoiseTrace("phy0", OFFSETS, LEVELS, BAND, "0.3 ps RMS")])
    ax = figure.axes[0]
    spans = [p for p in ax.patches if p.get_label().startswith("integration band")]
    assert len(spans) == 1
    # The patch's own outline in data x (a Rectangle or a Polygon, depending on the matplotlib version).
    corners = spans[0].get_patch_transform().transform(spans[0].get_path().vertices)
    xs = sorted({round(float(x)) for x, _ in corners})
    assert xs == [round(BAND[0]), round(BAND[1])]
    assert ax.get_xscale() == "log"
    line = [l for l in ax.get_lines() if l.get_label() == "L(f)"][0]
    assert list(line.get_ydata()) == LEVELS
    width, height, distinct = png_facts(figure_png(figure))
    assert width > 300 and height > 200 and distinct > 16


def test_temperature_curve_is_in_ppm_with_budget_lines():
    figure = temperature_figure([TemperatureTrace("rtc", TEMPERATURES, PARABOLA, (-150e-6, 20e-6))])
    ax = figure.axes[0]
    curve = [l for l in ax.get_lines() if l.get_label() == "frequency error"][0]
    # At 85 °C: -0.034 x 60² = -122.4 ppm.
    assert curve.get_ydata()[-1] == pytest.approx(-122.4, rel=1e-12)
    budget = sorted(l.get_ydata()[0] for l in ax.get_lines() if l.get_linestyle() == "--")
    assert budget == pytest.approx([-150.0, 20.0], rel=1e-12)
    assert png_facts(figure_png(figure))[2] > 16


def test_distribution_reports_the_share_inside_the_budget():
    numpy = pytest.importorskip("numpy")
    samples = numpy.random.default_rng(7).normal(0.0, 40e-6, 4000)
    budget = (-100e-6, 100e-6)
    figure = distribution_figure([ErrorDistribution("phy0", samples, budget)])
    expected = numpy.mean((samples >= budget[0]) & (samples <= budget[1])) * 100  # numpy as the reference
    assert figure.axes[0].get_title() == f"phy0: {expected:.4g} % inside the budget"
    assert png_facts(figure_png(figure))[2] > 16


def test_histogram_edges_match_numpy_and_survive_float_resolution():
    numpy = pytest.importorskip("numpy")
    # Ordinary spread: the same 60 equal bins numpy.histogram_bin_edges gives (numpy as the reference).
    spread = numpy.random.default_rng(3).normal(5.0, 2.0, 1000)
    assert histogram_edges(list(spread)) == pytest.approx(list(numpy.histogram_bin_edges(spread, bins=60)), abs=1e-12)
    # A tight cluster far from zero (found by the fuzz campaign: matplotlib raised "Too many bins
    # for data range"): numpy cannot bin it, our edges stay distinct and the figure draws.
    tight = [1e6 + k * 1e-10 for k in range(50)]
    with pytest.raises(ValueError, match="Too many bins"):
        numpy.histogram_bin_edges(tight, bins=60)
    edges = histogram_edges(tight)
    assert len(edges) == 61 and all(a < b for a, b in zip(edges, edges[1:]))
    assert edges[0] <= min(tight) and max(tight) <= edges[-1]
    figure = distribution_figure([ErrorDistribution("tight", [v * 1e-6 for v in tight], (-1.0, 1.0))])
    assert png_facts(figure_png(figure))[2] > 16


def test_many_consumers_get_a_grid_and_no_empty_panels_show():
    traces = [TemperatureTrace(f"c{i}", TEMPERATURES, PARABOLA, (-150e-6, 20e-6)) for i in range(5)]
    figure = temperature_figure(traces)
    visible = [ax for ax in figure.axes if ax.get_visible()]
    assert [ax.get_title() for ax in visible] == [f"c{i}" for i in range(5)]


class _Accuracy:
    def temperature_curve(self):
        return TEMPERATURES, PARABOLA, (-150e-6, 20e-6)

    def monte_carlo_errors(self):
        return [0.0, 1e-6, -2e-6, 5e-6], (-20e-6, 20e-6)


class _Jitter:
    def phase_noise_curve(self):
        return OFFSETS, LEVELS, BAND

    def table_cells(self):
        return {"jitter": "0.3 ps"}


def _with_budgets():
    analysis = analyze(load_board("boards/industrial-gateway.toml"))
    first = replace(analysis.consumers[0], accuracy=_Accuracy(), jitter=_Jitter())
    return analysis.with_consumer(first)


def test_hooks_feed_the_plots(tmp_path):
    data = collect_plot_data(_with_budgets(), every=True)
    assert [t.consumer for t in data.phase_noise] == ["phy0"]
    assert data.phase_noise[0].note == "PASS: jitter 0.3 ps, no budget"
    # phy0 carries the stand-in hooks; the accuracy stage's own curves follow for the other consumers.
    assert data.temperature[0].consumer == "phy0" and list(data.temperature[0].errors) == PARABOLA
    assert [t.consumer for t in data.distributions] == ["phy0"]  # no --samples: only the stand-in has samples
    written = write_plots(data, tmp_path)
    assert [p.name for p in written] == ["margins.png", "phase-noise.png", "ppm-temperature.png", "monte-carlo.png"]
    for path in written:
        assert png_facts(path.read_bytes())[2] > 16
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(p.name for p in written)  # no temporaries


def test_a_board_without_data_has_nothing_to_plot(tmp_path, capsys, monkeypatch):
    from .test_report_terminal import exact_audit

    assert collect_plot_data(exact_audit("boards/video-converter.toml")).empty
    monkeypatch.setattr("clockplan.cli._analyze_with_progress",
                        lambda *a, **k: exact_audit("boards/video-converter.toml"))
    assert main(["plots", "boards/video-converter.toml", "--output-dir", str(tmp_path)]) == 0
    assert "nothing to plot" in capsys.readouterr().out
    assert list(tmp_path.iterdir()) == []


def test_plots_command_writes_images(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr("clockplan.cli._analyze_with_progress", lambda *a, **k: _with_budgets())
    assert main(["plots", "boards/industrial-gateway.toml", "--output-dir", str(tmp_path), "--every-consumer"]) == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["margins.png", "monte-carlo.png", "phase-noise.png",
                                                         "ppm-temperature.png"]


def test_html_embeds_the_plots():
    from clockplan.report.html import render_html

    images = plot_images(collect_plot_data(_with_budgets(), every=True))
    page = render_html(_with_budgets(), images=images)
    assert page.count("data:image/png;base64,") == 4  # the margins overview and the three curves


def test_missing_matplotlib_says_how_to_install(monkeypatch, tmp_path, capsys):
    monkeypatch.setattr("clockplan.report.plots.matplotlib_available", lambda: False)
    monkeypatch.setattr("clockplan.cli._analyze_with_progress", lambda *a, **k: _with_budgets())
    assert main(["plots", "boards/industrial-gateway.toml", "--output-dir", str(tmp_path)]) == 2
    assert "pip install 'clockplan[plots]'" in capsys.readouterr().err


def test_the_jitter_stage_feeds_the_phase_noise_plot(tmp_path):
    # The jitter stage's own band for each consumer is the one the plot shades.
    analysis = analyze(load_board("boards/sampling-receiver.toml"))
    with_noise = [c for c in analysis.consumers if c.jitter is not None]
    assert with_noise, "the receiver demo board gives phase noise"
    # By default the ppm curves of consumers that pass with room are left out, and said so.
    default = collect_plot_data(analysis)
    assert default.temperature == () and default.left_out[0].startswith("ppm-temperature.png left out: its")
    data = collect_plot_data(analysis, every=True)
    assert [t.consumer for t in data.phase_noise] == [c.id for c in with_noise]
    for trace, consumer in zip(data.phase_noise, with_noise):
        assert list(trace.band_hz) == consumer.jitter.json_fields()["jitter_band_hz"]
        assert trace.note.split(":")[0] in ("PASS", "warn", "FAIL")
    written = {p.name: p for p in write_plots(data, tmp_path)}
    # The oven's figures give the ppm curve too; without --samples there is no Monte Carlo plot.
    assert sorted(written) == ["margins.png", "phase-noise.png", "ppm-temperature.png"]
    assert png_facts(written["phase-noise.png"].read_bytes())[2] > 16


def test_the_envelope_is_shaded_and_labelled_with_its_range():
    low = [e - 20e-6 for e in PARABOLA]
    high = [e + 20e-6 for e in PARABOLA]
    trace = TemperatureTrace("rtc", TEMPERATURES, [float("nan")] * len(TEMPERATURES), (-200e-6, 200e-6),
                             (low, high), "stability band")
    ax = temperature_figure([trace]).axes[0]
    # No line for an all-NaN curve; the envelope's label gives its extremes in ppm:
    # -0.034 x 65² - 20 = -163.65 ppm at -40 °C, +20 ppm at 25 °C (tuning-fork parabola, common practice).
    assert not [l for l in ax.get_lines() if l.get_label() == "frequency error"]
    (band,) = [c for c in ax.collections if c.get_label().startswith("worst case")]
    assert band.get_label().startswith("worst case -164..+20 ppm")
    assert ax.get_title() == "rtc\nstability band"
