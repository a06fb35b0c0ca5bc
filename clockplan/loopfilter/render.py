"""Rich renderables for a loop-filter result (used by ``clockplan loop BOARD PLL``)."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
from rich.console import Group
from rich.table import Table
from rich.text import Text

from clockplan.loopfilter.evaluate import LoopFilterResult, LoopPerformance
from clockplan.loopfilter.noise import loop_filter_phase_noise_dbc
from clockplan.loopfilter.response import frequency_response
from clockplan.units import format_frequency, format_quantity, format_time

__all__ = ["RESPONSE_POINTS", "render_loop_filter", "components_table", "performance_table", "response_table"]

# Offsets shown in the response table, as multiples of the measured crossover.
RESPONSE_POINTS = (0.1, 0.3, 1.0, 3.0, 10.0)

_UNITS = {"r": "Ω", "c": "F"}


def _ideal_value(value: float, name: str) -> str:
    return format_quantity(value, _UNITS[name[0]], significant=4)


def _fitted_value(value: float, name: str) -> str:
    # A snapped or entered value is a short decimal: show it exactly.
    return format_quantity(Fraction(repr(value)), _UNITS[name[0]])


def _measured_frequency(hz: float) -> str:
    # Measured on a model: four significant digits, written as a plain decimal.
    return format_frequency(Fraction(f"{hz:.4g}"))


def components_table(result: LoopFilterResult) -> Table:
    """Parts of the filter: ideal and snapped values (or the given ones)."""
    chosen = result.chosen.components()
    if result.ideal is None:
        table = Table(title=f"Loop filter parts (order {result.chosen.order})")
        table.add_column("part")
        table.add_column("value", justify="right")
        for name, value in chosen.items():
            table.add_row(name.upper(), _fitted_value(value, name))
        return table
    config = result.config
    table = Table(title=f"Loop filter parts (order {result.chosen.order})")
    table.add_column("part")
    table.add_column("ideal", justify="right")
    table.add_column(f"fitted ({config.resistor_series} R, {config.capacitor_series} C)", justify="right")
    table.add_column("change", justify="right")
    for name, ideal in result.ideal.components().items():
        fitted = chosen[name]
        change = f"{(fitted / ideal - 1) * 100:+.1f} %"
        table.add_row(name.upper(), _ideal_value(ideal, name), _fitted_value(fitted, name), change)
    return table


def _performance_rows(performance: LoopPerformance) -> list[str]:
    return [
        _measured_frequency(performance.crossover_hz),
        f"{performance.phase_margin_deg:.1f}°",
        _measured_frequency(performance.closed_loop_bandwidth_hz),
        f"{performance.peaking_db:.2f} dB",
        format_time(performance.lock_time_s),
    ]


def performance_table(result: LoopFilterResult) -> Table:
    """Target against what the ideal and the fitted filter give."""
    config = result.config
    chosen = result.chosen_performance
    table = Table(title="Loop performance (measured on the transfer functions)")
    table.add_column("quantity")
    table.add_column("target", justify="right")
    if result.ideal_performance is not None:
        table.add_column("ideal parts", justify="right")
    table.add_column("fitted parts" if result.ideal is not None else "given parts", justify="right")
    labels = [
        "loop bandwidth (0 dB crossover)",
        "phase margin",
        "closed-loop -3 dB",
        "closed-loop peaking",
        f"lock time ({_measured_frequency(chosen.lock_step_hz)} step "
        f"to ±{_measured_frequency(chosen.lock_tolerance_hz)})",
    ]
    targets = [
        format_frequency(config.bandwidth_hz) if config.bandwidth_hz is not None else "",
        f"{config.phase_margin_deg:g}°" if config.phase_margin_deg is not None else "",
        "",
        "",
        "",
    ]
    columns = [targets]
    if result.ideal_performance is not None:
        columns.append(_performance_rows(result.ideal_performance))
    columns.append(_performance_rows(chosen))
    for label, *cells in zip(labels, *columns):
        table.add_row(label, *cells)
    return table


def response_table(result: LoopFilterResult) -> Table:
    """A few points of the closed-loop response of the fitted filter."""
    spec = result.spec
    crossover = result.chosen_performance.crossover_hz
    offsets = np.array(RESPONSE_POINTS) * crossover
    h = frequency_response(*result.closed_loop(), offsets)
    e = frequency_response(*result.error(), offsets)
    n_db = 20 * math.log10(float(spec.n))
    table = Table(title="Closed-loop response")
    table.add_column("offset", justify="right")
    table.add_column("reference → output |N·H|", justify="right")
    table.add_column("|H|", justify="right")
    table.add_column("VCO → output |1-H|", justify="right")
    table.add_column("filter R noise at 25 °C", justify="right")
    resistor_noise = loop_filter_phase_noise_dbc(result.chosen, spec, offsets)
    for offset, h_value, e_value, noise in zip(offsets, h, e, resistor_noise):
        h_db = 20 * math.log10(abs(h_value))
        table.add_row(
            _measured_frequency(float(offset)),
            f"{h_db + n_db:+.1f} dB",
            f"{h_db:+.1f} dB",
            f"{20 * math.log10(abs(e_value)):+.1f} dB",
            f"{noise:.1f} dBc/Hz",
        )
    return table


def render_loop_filter(result: LoopFilterResult) -> Group:
    """Return everything ``clockplan loop`` prints for one PLL, as a rich Group.

    Examples
    --------
    >>> import io
    >>> from rich.console import Console
    >>> from clockplan.loopfilter.board import parse_loop_filter
    >>> from clockplan.loopfilter.evaluate import evaluate_loop_filter
    >>> config = parse_loop_filter({"charge_pump": "2.5 mA", "kvco": "30 MHz/V",
    ...                             "bandwidth": "100 kHz", "phase_margin": 55})
    >>> console = Console(width=120, record=True, file=io.StringIO())
    >>> console.print(render_loop_filter(evaluate_loop_filter(config, config.spec(100, 25_000_000))))
    >>> "phase margin" in console.export_text()
    True
    """
    spec = result.spec
    header = Text(
        f"Charge pump {format_quantity(Fraction(repr(float(spec.charge_pump_a))), 'A')}, "
        f"Kvco {format_quantity(Fraction(repr(float(spec.kvco_hz_per_v))), 'Hz/V')}, "
        f"N = {spec.n}, PFD {format_frequency(spec.f_pfd_hz)}"
    )
    notes = Text("\n".join(f"• {note}" for note in result.notes), style="yellow")
    return Group(header, components_table(result), performance_table(result), response_table(result), notes)
