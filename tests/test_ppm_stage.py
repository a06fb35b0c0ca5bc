"""The frequency-accuracy stage on whole boards: propagation, budgets, yield, advice, JSON and CLI.

Expected values are derived by hand from outside the code under test:
f_out = f_ref (1 + e_ref) N / (R D) for an R/N/D chain (the definition of the
synthesizer), so a consumer's error is f_out / f_target - 1 computed with
Fractions; budgets from the published or derived figures named beside each
check; the Monte Carlo against a yield integrated with scipy.
"""

import io
import json
from fractions import Fraction
from pathlib import Path

import pytest

from clockplan.analysis import AnalysisOptions, analyze
from clockplan.boardfile import load_board, parse_board
from clockplan.cli import main
from clockplan.errors import BoardError
from clockplan.ppm.aging import SECONDS_PER_YEAR
from clockplan.report.progress import DelayedProgress

from .boards import MINIMAL

PPM = Fraction(1, 10**6)

# Invented for these tests: the shared minimal board with figures on its reference "ref", plus a
# second reference with its own chain, and two consumers with budgets.
TWO_CHAINS = MINIMAL.replace('name = "test board"', 'name = "test board"\ntemperature = ["-40 C", "85 C"]').replace(
    'frequency = "25 MHz"\n', 'frequency = "25 MHz"\nkind = "xo"\ntolerance = "±20 ppm"\n', 1
) + '''
[[reference]]
id = "ref_b"
frequency = "10 MHz"
kind = "tcxo"
tolerance = "±1 ppm"
stability = "±0.5 ppm"
stability_range = "-40..85 C"

[[divider]]
id = "div_b"
input = "ref_b"
ratio = [1, 64]
settings = { ratio = 4 }

[[consumer]]
id = "near"
source = "pll_a.out0"
frequency = "124.9875 MHz"
max_synthesis_error = "±200 ppm"
ppm = "±300 ppm"

[[consumer]]
id = "far"
source = "div_b"
frequency = "2.5 MHz"
ppm = "±2 ppm"
'''


def _analyze(text: str, **options) -> "object":
    return analyze(parse_board(text, "test.toml"), options=AnalysisOptions(**options))


def _json(capsys, *args: str) -> dict:
    status = main(["audit", *args, "--json"])
    doc = json.loads(capsys.readouterr().out)
    doc["_status"] = status
    return doc


# --------------------------------------------------------------------------- propagation


def test_reference_error_passes_through_the_pll_and_adds_the_exact_synthesis_error():
    result = _analyze(TWO_CHAINS).consumer("near")
    # The chain, computed from its definition: 25 MHz (1 + e) x 100 / 20 against 124.9875 MHz.
    target = Fraction(124_987_500)
    low = Fraction(25_000_000) * (1 - 20 * PPM) * 100 / 20 / target - 1
    high = Fraction(25_000_000) * (1 + 20 * PPM) * 100 / 20 / target - 1
    accuracy = result.accuracy.result
    assert result.synthesis_error == Fraction(1, 9999)  # 125 / 124.9875 - 1, by hand
    assert (accuracy.carrier_min, accuracy.carrier_max) == (low, high)
    assert accuracy.worst_case == high  # +120 ppm is nearer the +300 ppm limit than -80 ppm is to -300
    assert accuracy.margin == 300 * PPM - high
    # A band-only reference has no temperature where the worst case happens.
    assert accuracy.worst_temperature_c is None


def test_consumers_on_different_references_get_their_own_chains():
    analysis = _analyze(TWO_CHAINS)
    far = analysis.consumer("far").accuracy
    assert far.reference == "ref_b" and analysis.consumer("near").accuracy.reference == "ref"
    # ref_b: ±1 ppm at 25 °C plus a ±0.5 ppm band add linearly (datasheet "overall" convention), /4 adds 0.
    assert (far.result.carrier_min, far.result.carrier_max) == (Fraction(-3, 2) * PPM, Fraction(3, 2) * PPM)
    # Statistical total: centres add, half-widths as root-sum-square: sqrt(1^2 + 0.5^2) ppm.
    assert far.result.rss_max == pytest.approx((1.25**0.5) * 1e-6, rel=1e-12)
    assert far.result.margin == Fraction(1, 2) * PPM and far.passes


def test_an_ideal_exact_chain_reports_exactly_zero(capsys, tmp_path):
    text = TWO_CHAINS.replace('tolerance = "±20 ppm"', 'tolerance = "0 ppm"').replace("124.9875 MHz", "125 MHz")
    accuracy = _analyze(text).consumer("near").accuracy
    assert accuracy.result.worst_case == 0 and isinstance(accuracy.result.worst_case, Fraction)
    assert accuracy.result.rss == 0 and isinstance(accuracy.result.rss, Fraction)
    board = tmp_path / "ideal.toml"
    board.write_text(text, encoding="utf-8")
    consumer = next(c for c in _json(capsys, str(board))["consumers"] if c["id"] == "near")
    for key in ("ppm_worst_case", "ppm_min", "ppm_max", "ppm_rss"):
        assert consumer[key] == 0 and isinstance(consumer[key], int), key
    assert consumer["ppm_budget"] == 300 and consumer["ppm_margin"] == 300


def test_contributions_add_up_to_the_worst_case():
    accuracy = _analyze(TWO_CHAINS).consumer("near").accuracy
    rows = accuracy.contributions()
    amounts = [amount for _, amount in rows if not isinstance(amount, str)]
    # (1 + a)(1 + b) - 1 = a + b + ab: the cross term closes the sum exactly.
    assert sum(amounts) == accuracy.result.worst_case
    assert [name for name, _ in rows] == ["reference initial tolerance", "synthesis error", "cross terms of the cascade"]
    assert rows[2][1] == 20 * PPM * Fraction(1, 9999)


# --------------------------------------------------------------------------- the demo boards


def test_gateway_mcu_passes_at_25_c_and_fails_at_the_cold_end():
    analysis = analyze(load_board("boards/industrial-gateway.toml"))
    mcu = analysis.consumer("mcu").accuracy
    # CAN bit timing of 16 quanta, prop 7, phase 4/4, sjw 4: min(sjw / (20 bit), min(ps1, ps2) / (2 (13 bit - ps2)))
    # = min(4/320, 4/408) = 1/102 (CAN specification 2.0 oscillator tolerance conditions, from memory).
    assert mcu.budget.tolerance == (-Fraction(1, 102), Fraction(1, 102))
    # Board data: ±0.5 % trim at 25 °C, -1.5 % at -40 °C, ±0.1 % over supply: -2.1 % worst, at -40 °C.
    assert mcu.result.worst_case == pytest.approx(-0.021, abs=1e-12)
    assert mcu.result.worst_temperature_c == -40.0
    assert not mcu.passes and mcu.at_25c.passes
    assert mcu.at_25c.worst_case == pytest.approx(0.006, abs=1e-12)  # ±0.5 % + ±0.1 %
    error = next(f for f in analysis.findings if f.code == "ppm-budget" and f.node == "mcu")
    assert "-40 °C" in error.message and "at 25 °C" in error.message and "crystal" in error.message
    advice = {r.id: r for r in analysis.extras["references"].references}["mcu_rc"]
    assert advice.verdict == "upgrade" and advice.advice.grade.name == "xo"


@pytest.mark.parametrize(
    ("consumer", "passes", "budget"),
    [
        ("uart_xtal", True, Fraction(7, 313)),  # 8N1, 16x oversampling: 7/313 = ±2.24 % (derived UART frame budget)
        ("usb_xtal", True, Fraction(25, 10**4)),  # USB 2.0 §7.1.11 full speed: ±0.25 %
        ("uart_ring", False, Fraction(7, 313)),
        ("usb_ring", False, Fraction(25, 10**4)),
    ],
)
def test_ring_oscillator_unfit_and_crystal_fit_at_board_level(consumer, passes, budget):
    analysis = analyze(load_board("boards/ring-vs-crystal.toml"))
    accuracy = analysis.consumer(consumer).accuracy
    assert accuracy.budget.tolerance[1] == budget
    assert accuracy.passes is passes
    # Common practice: cooled by 35 °C a 4 MHz crystal moves about 10 ppm, a ring oscillator about 12.5 %.
    if consumer.endswith("ring"):
        # ±1 % trim + 12.5 % cooled + ±0.5 % over the supply (the demo states it since ppm-no-supply).
        assert accuracy.result.worst_case == pytest.approx(0.01 + 0.125 + 0.005, abs=1e-12)
        assert accuracy.result.worst_temperature_c == -10.0
    else:
        # ±30 ppm + 10 ppm cooled + aging 5 ppm + 4 x 2 ppm over five years.
        assert accuracy.result.worst_case == pytest.approx(53e-6, rel=1e-9)


def test_video_converter_advice_needs_a_tcxo_and_names_the_unplannable_consumer():
    analysis = analyze(load_board("boards/video-converter.toml"))
    advice = analysis.extras["references"].references[0]
    # SDI ±10 ppm (standards table, from memory). Typical XO over 7 years: 20 + 25 + 3 + 6 x 1 = 54 ppm, too much;
    # typical TCXO: 1 + 0.5 + 0.1 + 1 + 6 x 0.5 = 5.6 ppm, inside with more than 20 % margin.
    assert advice.advice.grade.name == "tcxo" and advice.verdict == "fits"
    # -244 ppm of synthesis error against ±50 ppm: no oscillator fixes it (the deliberate problem).
    assert advice.unreachable == ("audio_codec",)
    message = next(f.message for f in analysis.findings if f.code == "ppm-budget" and f.node == "audio_codec")
    assert "re-plan" in message


def test_oven_reference_is_flagged_with_its_power(capsys):
    doc = _json(capsys, "boards/sampling-receiver.toml")
    assert doc["_status"] == 1  # the receiver's deliberate jitter problem (adc_clk), not the oven
    oven = doc["references"][0]["oven"]
    # The board's oven: 12 V x 0.6 A = 7.2 W warming, 1.8 W at temperature, 4 minutes.
    assert (oven["warmup_w"], oven["steady_w"], oven["warmup_s"]) == (pytest.approx(7.2), 1.8, 240.0)
    warning = next(f for f in doc["findings"] if f["code"] == "ppm-oven")
    assert warning["severity"] == "warning" and "7.2 W" in warning["message"] and "1.8 W" in warning["message"]
    assert doc["references"][0]["verdict"] == "over-specified"


def test_pcie_spread_within_its_allowance_checks_the_carrier_and_outside_counts_as_error():
    text = TWO_CHAINS.replace(
        "outputs.out0 = { divider = [1, 256] }",
        'outputs.out0 = { divider = [1, 256], independent_spread = true, '
        'spread = { mode = "down", depth = "0.5 %", rate = "31.5 kHz" } }',
    ).replace('ppm = "±300 ppm"', 'standard = "PCIe Gen3 reference"')
    # PCI Express refclk: ±300 ppm with down-spread to -0.5 % at 30-33 kHz allowed (published, standards table).
    within = _analyze(text).consumer("near").accuracy
    assert within.result.checked == "carrier" and within.passes
    outside = _analyze(text.replace('mode = "down"', 'mode = "center"')).consumer("near").accuracy
    assert outside.result.checked == "with spread" and not outside.passes
    # A ±0.25 % sweep composes with the carrier: (1 + carrier)(1 + 0.0025) - 1 at the high end.
    assert outside.result.error_max == (1 + outside.result.carrier_max) * (1 + Fraction(25, 10**4)) - 1


# --------------------------------------------------------------------------- references without data


def test_reference_without_data_uses_typical_figures_marked_as_assumed():
    text = TWO_CHAINS.replace('tolerance = "±20 ppm"\n', "")
    # The typical grade ages, so the board must state its lifetime (else a located error: test_ppm_conditions.py).
    text = text.replace('temperature = ["-40 C", "85 C"]', 'temperature = ["-40 C", "85 C"]\nlifetime = "10 years"')
    analysis = _analyze(text)
    near = analysis.consumer("near").accuracy
    assert near.basis == "typical-grade" and near.table_cells()["ppm worst"].startswith("typ. ")
    # Typical XO grade (common practice, clockplan/data/oscillator_grades.toml): ±20 ppm and ±25 ppm, and
    # aging 3 ppm in the first year plus 1 ppm for each of nine more.
    assert near.result.carrier_max == (1 + 57 * PPM) * (1 + Fraction(1, 9999)) - 1
    note = next(f for f in analysis.findings if f.code == "ppm-assumed")
    assert note.node == "ref" and "not datasheet data" in note.message


def test_kind_without_a_grade_is_not_checked():
    text = TWO_CHAINS.replace('kind = "xo"\ntolerance = "±20 ppm"', 'kind = "vcxo"')
    analysis = _analyze(text)
    assert analysis.consumer("near").accuracy is None
    assert any(f.code == "ppm-no-data" and f.node == "ref" for f in analysis.findings)


def test_temperature_table_must_cover_the_board_range():
    text = TWO_CHAINS.replace(
        'tolerance = "±20 ppm"', 'tolerance = "±20 ppm"\ntemperature_curve = { model = "points", points = [[0, "1 ppm"], [85, "0 ppm"]] }'
    )
    with pytest.raises(BoardError) as caught:
        _analyze(text)
    assert caught.value.key == "reference[0].temperature_curve" and caught.value.file == "test.toml"
    assert caught.value.line == text.splitlines().index('[[reference]]') + 6


def test_a_budget_that_excludes_nominal_is_a_located_error(tmp_path, capsys):
    board = tmp_path / "bad.toml"
    board.write_text(TWO_CHAINS.replace('ppm = "±2 ppm"', 'ppm = "10..20 ppm"'), encoding="utf-8")
    assert main(["audit", str(board)]) == 2
    err = capsys.readouterr().err
    assert "consumer[3].ppm" in err and "+10 ppm..+20 ppm does not contain 0" in err and "Traceback" not in err


@pytest.mark.parametrize(
    ("old", "new", "key"),
    [
        ('tolerance = "±20 ppm"', 'tolerance = "±20 ppm"\naging = { first_year = "±3 ppm", per_yer = "1 ppm" }', "reference[0].aging.per_yer"),
        ('tolerance = "±20 ppm"', 'tolerance = "±20 pp"', "reference[0].tolerance"),
        ("outputs.out0 = { divider = [1, 256] }", 'outputs.out0 = { divider = [1, 256], spread = { mode = "dwn", depth = "1 %" } }', "pll[0].outputs.out0.spread"),
    ],
)
def test_bad_accuracy_keys_are_located(old, new, key):
    text = TWO_CHAINS.replace(old, new)
    with pytest.raises(BoardError) as caught:
        parse_board(text, "test.toml")
    assert caught.value.key == key and caught.value.file == "test.toml" and caught.value.line is not None


# --------------------------------------------------------------------------- Monte Carlo


_MCU_POINTS = [(-40.0, -0.015), (0.0, -0.005), (25.0, 0.0), (85.0, 0.006)]  # the gateway's RC table


def _mcu_spread():
    """The sum of the MCU's uniform ±0.5 % trim and ±0.1 % supply errors: trapezoidal (the convolution of
    two uniform densities: a trapezoid, elementary probability), on ±0.6 % with a flat top on ±0.4 %."""
    from scipy import stats

    trim, supply = 0.005, 0.001
    return stats.trapezoid(supply / (trim + supply), trim / (trim + supply), loc=-(trim + supply), scale=2 * (trim + supply))


def _mcu_yield_everywhere(points=_MCU_POINTS) -> float:
    """The share of MCUs inside the CAN budget at every temperature: closed form.

    A linear table's extremes are at its points; a board passes when its fixed error c (trim plus
    supply) keeps c + lowest >= -B and c + highest <= B, i.e. c in [-B - lowest, B - highest].
    """
    budget = 1 / 102
    lowest, highest = min(e for _, e in points), max(e for _, e in points)
    spread = _mcu_spread()
    return max(0.0, spread.cdf(budget - highest) - spread.cdf(-budget - lowest))


def _mcu_yield_at_one_drawn_temperature() -> float:
    """What the old method estimated (one uniform temperature per board), integrated with scipy."""
    from scipy import integrate

    budget = 1 / 102
    spread = _mcu_spread()

    def drift(t: float) -> float:
        for (t0, e0), (t1, e1) in zip(_MCU_POINTS, _MCU_POINTS[1:]):
            if t <= t1:
                return e0 + (e1 - e0) * (t - t0) / (t1 - t0)
        return _MCU_POINTS[-1][1]

    def inside(t: float) -> float:
        return spread.cdf(budget - drift(t)) - spread.cdf(-budget - drift(t))

    return integrate.quad(inside, -40.0, 85.0, points=[0.0, 25.0], limit=200)[0] / 125.0


def test_monte_carlo_yield_matches_integration_and_is_reproducible():
    board = load_board("boards/industrial-gateway.toml")
    seen: list[float] = []
    options = AnalysisOptions(samples=200_000, seed=11, progress=seen.append)
    first = analyze(board, options=options)
    again = analyze(board, options=AnalysisOptions(samples=200_000, seed=11))
    mcu = first.consumer("mcu").accuracy
    assert mcu.yield_fraction == again.consumer("mcu").accuracy.yield_fraction
    # At -40 °C the RC is 1.5 % slow: no trim inside ±0.5 % keeps it in ±0.98 %, so no board passes everywhere.
    assert _mcu_yield_everywhere() == 0.0 and mcu.yield_fraction == 0.0
    # The old method (one drawn temperature per board) reported about 83 %: far outside the sampling error.
    assert _mcu_yield_at_one_drawn_temperature() == pytest.approx(0.826, abs=0.001)
    assert first.consumer("phy0").accuracy.yield_fraction == 1.0  # worst case inside: every board passes
    assert seen[-1] == 1.0 and seen == sorted(seen)
    summary = first.extras["monte_carlo"]
    assert summary.samples == 200_000 and summary.seed == 11 and summary.board_yield <= mcu.yield_fraction


def test_monte_carlo_yield_of_a_milder_rc_matches_the_closed_form_and_depends_on_the_seed():
    # The same MCU with an invented milder RC curve (-0.6 % at -40 °C, +0.5 % at 85 °C): boards pass
    # where trim plus supply lies in [-0.38 %, +0.48 %] (closed form on the trapezoid).
    points = [(-40.0, -0.006), (25.0, 0.0), (85.0, 0.005)]
    text = Path("boards/industrial-gateway.toml").read_text(encoding="utf-8").replace(
        '[[-40, "-1.5 %"], [0, "-0.5 %"], [25, "0 %"], [85, "+0.6 %"]]', '[[-40, "-0.6 %"], [25, "0 %"], [85, "+0.5 %"]]')
    board = parse_board(text)
    mcu = analyze(board, options=AnalysisOptions(samples=200_000, seed=11)).consumer("mcu").accuracy
    expected = _mcu_yield_everywhere(points)
    assert 0.5 < expected < 0.99
    assert mcu.yield_fraction == pytest.approx(expected, abs=5 * mcu.yield_standard_error)
    other = analyze(board, options=AnalysisOptions(samples=200_000, seed=12)).consumer("mcu").accuracy
    assert other.yield_fraction != mcu.yield_fraction


# --------------------------------------------------------------------------- JSON and CLI


CONSUMER_KEYS = (
    "ppm_worst_case", "ppm_min", "ppm_max", "ppm_rss", "ppm_budget", "ppm_margin",
    "worst_temperature_c", "ppm_pass", "ppm_contributions",
)


def test_json_keys_per_consumer_and_references(capsys):
    doc = _json(capsys, "boards/industrial-gateway.toml", "--samples", "20000", "--seed", "5")
    assert doc["_status"] == 1  # the MCU's CAN budget breaks at -40 °C
    for consumer in doc["consumers"]:
        for key in (*CONSUMER_KEYS, "yield"):
            assert key in consumer, (consumer["id"], key)
    mcu = next(c for c in doc["consumers"] if c["id"] == "mcu")
    assert mcu["worst_temperature_c"] == -40.0 and mcu["ppm_pass"] is False and mcu["ppm_pass_at_25c"] is True
    assert mcu["ppm_budget"] == pytest.approx(1e6 / 102)
    assert mcu["ppm_margin"] == pytest.approx(1e6 / 102 - 21000, abs=1e-6)
    refs = {r["id"]: r for r in doc["references"]}
    assert refs["mcu_rc"]["advice"] == "xo" and refs["mcu_rc"]["failing"] == ["mcu"]
    assert [g["grade"] for g in refs["mcu_rc"]["grades"]] == ["rc", "xo", "tcxo", "ocxo"]
    assert doc["monte_carlo"]["samples"] == 20000 and doc["monte_carlo"]["seed"] == 5
    assert {"ppm-budget"} <= {f["code"] for f in doc["findings"] if f["severity"] == "error"}


def test_json_with_samples_is_deterministic(capsys):
    first = _json(capsys, "boards/ring-vs-crystal.toml", "--samples", "5000")
    assert _json(capsys, "boards/ring-vs-crystal.toml", "--samples", "5000") == first


def test_cli_samples_adds_the_yield_column(capsys):
    status = main(["audit", "boards/ring-vs-crystal.toml", "--samples", "20000", "--seed", "3", "--no-color", "--width", "200"])
    out = capsys.readouterr().out
    assert status == 1
    assert "yield" in out and "Monte Carlo: 20,000 boards (seed 3)" in out and "Reference advice" in out


@pytest.mark.parametrize("value", ["-1", "many"])
def test_cli_refuses_a_bad_sample_count(capsys, value):
    assert main(["audit", "boards/ring-vs-crystal.toml", "--samples", value]) == 2
    assert "--samples" in capsys.readouterr().err


def test_progress_bar_appears_only_after_a_moment():
    from rich.console import Console

    now = [0.0]
    out = io.StringIO()
    with DelayedProgress("Monte Carlo", delay_s=0.5, console=Console(file=out, force_terminal=True), clock=lambda: now[0]) as bar:
        bar(0.25)
        assert not bar.shown
        now[0] = 0.6
        bar(0.5)
        assert bar.shown
        bar(1.0)
    assert "Monte Carlo" in out.getvalue()


def test_lifetime_sets_the_aging_term():
    text = TWO_CHAINS.replace('temperature = ["-40 C", "85 C"]', 'temperature = ["-40 C", "85 C"]\nlifetime = "10 years"')
    text = text.replace('tolerance = "±20 ppm"', 'tolerance = "±20 ppm"\naging = { first_year = "±3 ppm", per_year = "±1 ppm" }')
    near = _analyze(text).consumer("near").accuracy
    aging = dict(near.contributions())["reference aging over 10 years"]
    assert aging == 12 * PPM  # 3 ppm in the first year, then 1 ppm for each of nine more
    assert near.lifetime_s == 10 * SECONDS_PER_YEAR


@pytest.mark.parametrize(
    "name", ["clockplan.ppm.board", "clockplan.ppm.display", "clockplan.ppm.results", "clockplan.report.progress"]
)
def test_docstring_examples_run(name):
    import doctest
    import importlib

    module = importlib.import_module(name)
    failed, attempted = doctest.testmod(module)
    assert failed == 0 and attempted > 0
    assert all(hasattr(module, attr) for attr in module.__all__)
