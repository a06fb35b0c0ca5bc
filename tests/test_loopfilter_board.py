"""The board file's loop_filter table, the evaluation the CLI runs, and its rendering."""

from __future__ import annotations

import io
import math
import tomllib

import pytest
from rich.console import Console

from clockplan.errors import BoardError
from clockplan.eseries import eseries_values
from clockplan.loopfilter.board import LOOP_FILTER_KEYS, parse_loop_filter
from clockplan.loopfilter.design import FilterDesign
from clockplan.loopfilter.evaluate import evaluate_loop_filter
from clockplan.loopfilter.render import render_loop_filter
from clockplan.loopfilter.response import loop_margins

# Invented demo board excerpt (a PLL table with its loop filter).
DEMO_TOML = """
[[pll]]
name = "pll_core"

[pll.loop_filter]
order = 3
charge_pump = "2.5 mA"
kvco = "30 MHz/V"
bandwidth = "100 kHz"
phase_margin = 55
pole_ratio = 0.4
resistor_series = "E96"
capacitor_series = "e24"
lock_step = "10 MHz"
lock_tolerance = "1 kHz"
"""

BASE = {"charge_pump": "2.5 mA", "kvco": "30 MHz/V"}


def test_demo_table_from_toml() -> None:
    table = tomllib.loads(DEMO_TOML)["pll"][0]["loop_filter"]
    config = parse_loop_filter(table, key="pll[0].loop_filter")
    assert (config.order, config.charge_pump_a, config.kvco_hz_per_v) == (3, 0.0025, 30e6)
    assert (config.bandwidth_hz, config.phase_margin_deg, config.pole_ratio) == (100e3, 55.0, 0.4)
    assert (config.resistor_series, config.capacitor_series) == ("E96", "E24")
    assert (config.lock_step_hz, config.lock_tolerance_hz) == (10e6, 1e3)
    assert config.fixed is None


@pytest.mark.parametrize(
    ("extra", "expected"),
    [
        ({"r1": "910 Ω", "c1": "5.6 nF", "c2": "270 pF", "r3": "6.2 kΩ", "c3": "39 pF"}, (910.0, 5.6e-9, 2.7e-10, 6200.0, 3.9e-11)),
        ({"r1": "910 ohm", "c1": "5.6nF", "c2": 270e-12, "r3": "6.2 kohm", "c3": "39 pF"}, (910.0, 5.6e-9, 2.7e-10, 6200.0, 3.9e-11)),
        ({"order": 2, "r1": 1000, "c1": "10 nF", "c2": "1 nF"}, (1000.0, 1e-8, 1e-9)),
    ],
)
def test_existing_filter_parts(extra: dict, expected: tuple) -> None:
    config = parse_loop_filter(BASE | extra)
    assert config.fixed is not None
    assert tuple(config.fixed.components().values()) == pytest.approx(expected, rel=1e-15)
    assert config.bandwidth_hz is None  # targets are optional for an existing filter


@pytest.mark.parametrize("margin", [55, 55.0, "55", "55 deg", "55°"])
def test_phase_margin_spellings(margin) -> None:
    assert parse_loop_filter(BASE | {"bandwidth": "100 kHz", "phase_margin": margin}).phase_margin_deg == 55.0


@pytest.mark.parametrize(
    ("table", "key", "hint_part"),
    [
        (BASE | {"bandwith": "1 kHz", "phase_margin": 50}, "pll[2].loop_filter.bandwith", "bandwidth"),
        ({"kvco": "30 MHz/V", "bandwidth": "1 kHz", "phase_margin": 50}, "pll[2].loop_filter.charge_pump", "2.5 mA"),
        (BASE | {"phase_margin": 50}, "pll[2].loop_filter.bandwidth", "existing filter"),
        (BASE | {"bandwidth": "1 kHz"}, "pll[2].loop_filter.phase_margin", "degrees"),
        (BASE | {"r1": "1 kΩ", "c1": "1 nF"}, "pll[2].loop_filter.c2", "r1, c1, c2, r3, c3"),
        (BASE | {"order": 2, "r1": 1, "c1": 1, "c2": 1, "r3": 1}, "pll[2].loop_filter.r3", "order = 3"),
        (BASE | {"order": 4, "bandwidth": "1 kHz", "phase_margin": 50}, "pll[2].loop_filter.order", "order = 2"),
        (BASE | {"order": True, "bandwidth": "1 kHz", "phase_margin": 50}, "pll[2].loop_filter.order", "order = 2"),
        (BASE | {"bandwidth": "-1 kHz", "phase_margin": 50}, "pll[2].loop_filter.bandwidth", "above 0 Hz"),
        ({"charge_pump": "2.5 mA", "kvco": "30 MHz", "bandwidth": "1 kHz", "phase_margin": 50}, "pll[2].loop_filter.kvco", "Hz/V"),
        (BASE | {"bandwidth": "1 kHz", "phase_margin": "fifty"}, "pll[2].loop_filter.phase_margin", "number"),
        (BASE | {"bandwidth": "1 kHz", "phase_margin": 50, "capacitor_series": "E7"}, "pll[2].loop_filter.capacitor_series", "E12"),
        (BASE | {"bandwidth": "1 kHz", "phase_margin": 50, "pole_ratio": 0}, "pll[2].loop_filter.pole_ratio", "0.5"),
        (BASE | {"r1": "1 kV", "c1": "1 nF", "c2": "1 nF", "r3": 1, "c3": 1}, "pll[2].loop_filter.r1", "Ω"),
        ({"charge_pump": "-2 mA", "kvco": "30 MHz/V", "bandwidth": "1 kHz", "phase_margin": 50}, "pll[2].loop_filter.charge_pump", "2.5 mA"),
    ],
)
def test_bad_tables_raise_board_errors_with_key_and_hint(table: dict, key: str, hint_part: str) -> None:
    with pytest.raises(BoardError) as caught:
        parse_loop_filter(table, key="pll[2].loop_filter")
    assert caught.value.key == key
    assert hint_part in (caught.value.hint or "")


def test_not_a_table() -> None:
    with pytest.raises(BoardError) as caught:
        parse_loop_filter(["charge_pump"], key="pll[0].loop_filter")  # type: ignore[arg-type]
    assert caught.value.key == "pll[0].loop_filter"


def test_every_documented_key_is_in_the_docs() -> None:
    from pathlib import Path

    docs = (Path(__file__).resolve().parents[1] / "docs" / "loop-filter.md").read_text(encoding="utf-8")
    for key in LOOP_FILTER_KEYS:
        assert f"`{key}`" in docs, key


def test_evaluation_designs_snaps_and_measures() -> None:
    config = parse_loop_filter(tomllib.loads(DEMO_TOML)["pll"][0]["loop_filter"])
    spec = config.spec(100, 25_000_000)
    result = evaluate_loop_filter(config, spec)
    assert result.ideal is not None and result.ideal_performance is not None
    resistors, capacitors = eseries_values("E96", -3, 9), eseries_values("E24", -15, -3)
    for name, value in result.chosen.components().items():
        assert value in (resistors if name.startswith("r") else capacitors), name
    measured = loop_margins(result.chosen, spec)
    assert result.chosen_performance.crossover_hz == measured.crossover_hz
    assert result.ideal_performance.phase_margin_deg == pytest.approx(55.0, abs=1e-9)
    assert result.chosen_performance.lock_step_hz == 10e6
    assert result.chosen_performance.lock_tolerance_hz == 1e3
    num, den = result.closed_loop()
    assert num[-1] / den[-1] == pytest.approx(1.0)
    e_num, _ = result.error()
    assert e_num[-1] == 0.0


def test_evaluation_of_an_existing_filter_and_default_lock_criterion() -> None:
    config = parse_loop_filter(BASE | {"order": 2, "r1": "910 Ω", "c1": "5.6 nF", "c2": "560 pF"})
    spec = config.spec(100, 25_000_000)
    result = evaluate_loop_filter(config, spec)
    assert result.ideal is None and result.ideal_performance is None
    assert result.chosen == FilterDesign(2, r1=910.0, c1=5.6e-9, c2=5.6e-10)
    # Defaults: one PFD step (N -> N+1), settle to 1 ppm of the VCO frequency.
    assert result.chosen_performance.lock_step_hz == 25e6
    assert result.chosen_performance.lock_tolerance_hz == pytest.approx(2.5e3)


def test_notes_warn_about_a_bandwidth_too_close_to_the_pfd() -> None:
    config = parse_loop_filter(BASE | {"bandwidth": "400 kHz", "phase_margin": 25, "order": 2})
    result = evaluate_loop_filter(config, config.spec(1000, 2_000_000))
    text = " ".join(result.notes)
    assert "tenth of the PFD frequency" in text
    assert "below 30°" in text
    assert "datasheet" in text  # the planning-estimate caveat is always there


def _rendered(table: dict) -> str:
    config = parse_loop_filter(table)
    result = evaluate_loop_filter(config, config.spec(100, 25_000_000))
    console = Console(width=140, record=True, file=io.StringIO())
    console.print(render_loop_filter(result))
    return console.export_text()


def test_render_shows_parts_margins_and_response() -> None:
    text = _rendered(BASE | {"bandwidth": "100 kHz", "phase_margin": 55})
    for expected in ("R1", "C3", "fitted (E24 R, E12 C)", "phase margin", "55°", "lock time", "VCO → output", "dBc/Hz"):
        assert expected in text, expected
    # Snapped values are printed exactly, ideal ones marked approximate.
    assert "≈" in text and " nF" in text and "Planning estimate" in text


def test_render_of_an_existing_filter() -> None:
    text = _rendered(BASE | {"order": 2, "r1": "910 Ω", "c1": "5.6 nF", "c2": "560 pF"})
    assert "given parts" in text and "910 Ω" in text and "5.6 nF" in text
    assert "ideal" not in text
    margin = float(text.split("phase margin")[1].split("°")[0].split()[-1])
    assert math.isfinite(margin) and 50 < margin < 60


def test_result_feeds_the_jitter_loop_model() -> None:
    # The jitter model builds H and E from G = num/den: same response as ours.
    import numpy as np

    from clockplan.jitter.loop import loop_from_open_loop
    from clockplan.loopfilter.response import frequency_response

    config = parse_loop_filter(BASE | {"bandwidth": "100 kHz", "phase_margin": 55})
    result = evaluate_loop_filter(config, config.spec(100, 25_000_000))
    loop = loop_from_open_loop(*result.open_loop())
    offsets = np.geomspace(1e2, 1e8, 61)
    np.testing.assert_allclose(loop.closed_loop(offsets), frequency_response(*result.closed_loop(), offsets), rtol=1e-9)
    np.testing.assert_allclose(loop.error(offsets), frequency_response(*result.error(), offsets), rtol=1e-9)


def test_result_document_is_json_and_round_trips_the_parts() -> None:
    import json
    from fractions import Fraction

    from clockplan.loopfilter.evaluate import result_document

    config = parse_loop_filter(BASE | {"bandwidth": "100 kHz", "phase_margin": 55, "order": 2})
    result = evaluate_loop_filter(config, config.spec(Fraction(201, 2), 25_000_000))
    document = json.loads(json.dumps(result_document(result)))
    assert document["loop"]["n"] == "201/2" and document["loop"]["pfd_hz"] == 25e6
    assert FilterDesign(2, **document["fitted"]) == result.chosen
    assert document["performance"]["phase_margin_deg"] == result.chosen_performance.phase_margin_deg
    assert document["closed_loop"]["den"] == [float(c) for c in result.closed_loop()[1]]
    assert document["ideal"] is not None and document["notes"]
