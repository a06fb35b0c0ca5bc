"""The accuracy results' report hooks: margin, notes, temperature curve and Monte Carlo samples.

Every expected value is computed here from outside the code under test: the
tuning-fork parabola and the AT-cut cubic from their formulas (sympy evaluates
the cubic), cascaded errors as f_ref (1 + e) N / (R D) / f_target - 1 with
Fractions, aging from the datasheet's first-year and per-year figures, and the
sampled errors against the uniform distribution they are drawn from (scipy).
"""

from fractions import Fraction

import numpy as np
import pytest

from clockplan.analysis import AnalysisOptions, analyze
from clockplan.boardfile import parse_board
from clockplan.cli import main

from .test_ppm_stage import TWO_CHAINS

PPM = 1e-6

# Invented for these tests: one reference straight to a consumer, and the same reference through a PLL
# whose output misses its target by an exact, known amount.
DIRECT = '''
[board]
name = "hooks"
temperature = ["-40 C", "85 C"]
lifetime = "10 years"

[[reference]]
id = "xtal"
frequency = "{frequency}"
kind = "crystal"
tolerance = "±20 ppm"
{accuracy}

[[consumer]]
id = "direct"
source = "xtal"
frequency = "{frequency}"
ppm = "±200 ppm"
'''

TUNING_FORK = 'temperature_curve = { model = "tuning-fork", coefficient_ppm = -0.034, turnover = "25 C" }'


def _analysis(text: str, **options):
    return analyze(parse_board(text, "hooks.toml"), options=AnalysisOptions(**options))


def _direct(accuracy: str, frequency: str = "32.768 kHz", **options):
    return _analysis(DIRECT.format(frequency=frequency, accuracy=accuracy), **options).consumer("direct").accuracy


# --------------------------------------------------------------------------- temperature curve


def test_tuning_fork_curve_is_the_parabola_and_its_envelope_the_worst_case():
    accuracy = _direct(TUNING_FORK)
    temps, errors, budget, (low, high), note = accuracy.temperature_curve()
    # Tuning-fork parabola k (T - T0)², k = -0.034 ppm/°C², T0 = 25 °C (common practice):
    # -0.034 x 65² = -143.65 ppm at -40 °C, "about -144 ppm".
    parabola = -0.034e-6 * (temps - 25.0) ** 2
    assert errors == pytest.approx(parabola, rel=1e-12, abs=1e-18)
    assert errors[0] == pytest.approx(-143.65e-6, rel=1e-12) and round(errors[0] / PPM) == -144
    # The initial tolerance ±20 ppm widens it on both sides (no aging, supply or load given).
    assert low == pytest.approx(parabola - 20e-6, rel=1e-12)
    assert high == pytest.approx(parabola + 20e-6, rel=1e-12)
    assert temps[0] == -40.0 and temps[-1] == 85.0 and 25.0 in temps
    assert budget == (-200e-6, 200e-6) and note == ""
    # The envelope's outer edges are the worst case the table shows.
    assert low.min() == pytest.approx(float(accuracy.result.carrier_min), rel=1e-12)
    assert high.max() == pytest.approx(float(accuracy.result.carrier_max), rel=1e-12)


def test_at_cut_cubic_through_a_pll_with_aging_at_end_of_life():
    # Near consumer: 25 MHz x 100 / 20 = 125 MHz for a 124.9875 MHz target; the reference is an AT-cut
    # crystal 4 arcmin off the zero-slope angle, aging 0..+2 ppm the first year and 0..+1 ppm each later year.
    text = TWO_CHAINS.replace('kind = "xo"\ntolerance = "±20 ppm"\n', (
        'kind = "xo"\ntolerance = "±20 ppm"\n'
        'temperature_curve = { model = "at-cut", angle_offset_arcmin = 4 }\n'
        'aging = { first_year = "0..+2 ppm", per_year = "0..+1 ppm" }\n'
    )).replace('temperature = ["-40 C", "85 C"]', 'temperature = ["-40 C", "85 C"]\nlifetime = "10 years"')
    accuracy = _analysis(text).consumer("near").accuracy
    temps, errors, budget, (low, high), _ = accuracy.temperature_curve()

    import sympy

    # AT-cut cubic about 25 °C: a1 = -5.15e-6/°C per degree of angle offset, a2 = -0.45e-9/°C²,
    # a3 = 109.5e-12/°C³ (Bechmann; Bechmann, Ballato and Lukaszek; from memory).
    t = sympy.Symbol("t")
    d = t - 25
    cubic = sympy.Rational(-515, 10**8) * sympy.Rational(4, 60) * d - sympy.Rational(45, 10**11) * d**2 \
        + sympy.Rational(1095, 10**13) * d**3
    synthesis = Fraction(25_000_000 * 100, 20) / Fraction(124_987_500) - 1  # f_ref N / D / f_target - 1
    # Aging after 10 years: 0..(2 + 9 x 1) ppm, so its centre is +5.5 ppm; other terms are centred on 0.
    aging_high = 11e-6
    for index in (0, len(temps) // 2, -1):
        drift = float(cubic.subs(t, sympy.Float(temps[index], 30)))
        nominal = (1 + drift + aging_high / 2) * (1 + float(synthesis)) - 1
        assert errors[index] == pytest.approx(nominal, rel=1e-9)
        assert low[index] == pytest.approx((1 + drift - 20e-6) * (1 + float(synthesis)) - 1, rel=1e-9)
        assert high[index] == pytest.approx((1 + drift + 20e-6 + aging_high) * (1 + float(synthesis)) - 1, rel=1e-9)
    assert budget == (-300e-6, 300e-6)
    assert high.max() == pytest.approx(float(accuracy.result.carrier_max), rel=1e-12)
    assert low.min() == pytest.approx(float(accuracy.result.carrier_min), rel=1e-12)


def test_a_stability_band_gives_its_edges_and_no_curve():
    # The far consumer's TCXO: ±1 ppm tolerance and a ±0.5 ppm band, divided by 4 (exact).
    far = _analysis(TWO_CHAINS).consumer("far").accuracy
    _, errors, budget, (low, high), note = far.temperature_curve()
    assert np.isnan(errors).all() and "stability band" in note
    assert low == pytest.approx(np.full_like(low, -1.5e-6), rel=1e-12)
    assert high == pytest.approx(np.full_like(high, 1.5e-6), rel=1e-12)
    assert budget == (-2e-6, 2e-6)


def test_a_spread_outside_the_allowance_widens_the_envelope_by_the_sweep():
    # The spread is made by the loop (on the PLL), so it reaches out0 and the consumer "near" on it.
    text = TWO_CHAINS.replace(
        "outputs.out0 = { divider = [1, 256] }",
        'outputs.out0 = { divider = [1, 256] }\nspread = { mode = "center", depth = "0.5 %", rate = "31.5 kHz" }',
    ).replace('ppm = "±300 ppm"', 'standard = "PCIe Gen3 reference"')
    near = _analysis(text).consumer("near").accuracy
    # PCI Express allows down-spread only (standards table); a ±0.25 % centre-spread counts as error.
    assert near.result.checked == "with spread"
    _, _, _, (low, high), note = near.temperature_curve()
    assert high.max() == pytest.approx(float(near.result.error_max), rel=1e-12)
    assert low.min() == pytest.approx(float(near.result.error_min), rel=1e-12)
    assert "spread" in note
    assert any("spread counts as frequency error" in n for n in near.notes)


def test_no_budget_no_curve():
    analysis = _analysis(TWO_CHAINS)
    assert analysis.consumer("phy0").accuracy.temperature_curve() is None  # phy0 sets no ppm budget
    assert analysis.consumer("phy0").accuracy.budget_margin() is None


# --------------------------------------------------------------------------- budget margin


def test_budget_margin_is_the_share_of_the_half_width_left():
    accuracy = _direct(TUNING_FORK)
    headroom, text = accuracy.budget_margin()
    # Worst case -143.65 - 20 = -163.65 ppm against ±200 ppm: (200 - 163.65) / 200 left.
    assert headroom == pytest.approx((200 - 163.65) / 200, rel=1e-12)
    # The text is the worst case as the consumer table prints it (four significant figures), then the budget.
    assert text == f"{accuracy.table_cells()['ppm worst']} of ±200 ppm" == f"{-163.65:.4g} ppm of ±200 ppm"


def test_an_exact_budget_margin_stays_exact():
    # ±20 ppm XO on an exact chain against ±100 ppm: 80 of 100 ppm left, exactly 0.8.
    text = DIRECT.format(frequency="25 MHz", accuracy="").replace('kind = "crystal"', 'kind = "xo"').replace(
        "±200 ppm", "±100 ppm")
    accuracy = _analysis(text).consumer("direct").accuracy
    assert accuracy.budget_margin() == (0.8, "+20 ppm of ±100 ppm")


def test_summary_names_the_worst_ppm_margin(capsys):
    assert main(["audit", "boards/industrial-gateway.toml", "--no-color", "--width", "200"]) == 1
    out = capsys.readouterr().out
    # The MCU's RC oscillator: -2.1 % at -40 °C against the CAN budget ±1/102 (±0.98 %):
    # 1 - 0.021 x 102 = -1.142 of the half-width: 2.142 times the budget used (issue 17: an overrun
    # past twice the budget reads as a multiple).
    assert "ppm: mcu 2.14x the budget (-2.1 % of ±0.98 %)" in out


# --------------------------------------------------------------------------- Monte Carlo samples


def test_sampled_errors_follow_the_uniform_tolerance():
    from scipy import stats

    # A ±20 ppm XO, nothing else, on an exact chain: every board's error is uniform on ±20 ppm.
    text = DIRECT.format(frequency="25 MHz", accuracy="").replace('kind = "crystal"', 'kind = "xo"').replace(
        "±200 ppm", "±10 ppm")
    accuracy = _analysis(text, samples=40_000, seed=3).consumer("direct").accuracy
    errors, budget, _ = accuracy.monte_carlo_errors()
    assert len(errors) == 40_000 and budget == (-10e-6, 10e-6)
    assert errors.min() >= -20e-6 and errors.max() <= 20e-6
    # Uniform on ±a: mean 0 and the standard deviation scipy.stats.uniform gives (a / sqrt(3));
    # the mean within 4 standard errors.
    reference = stats.uniform(loc=-20e-6, scale=40e-6)
    assert abs(errors.mean()) < 4 * reference.std() / np.sqrt(len(errors))
    assert errors.std() == pytest.approx(reference.std(), rel=0.02)
    assert stats.kstest(errors, stats.uniform(loc=-20e-6, scale=40e-6).cdf).pvalue > 1e-3
    # The histogram's share inside the budget is the yield counted on the same boards (analytic 1/2).
    inside = np.mean((errors >= budget[0]) & (errors <= budget[1]))
    assert inside == pytest.approx(accuracy.yield_fraction, abs=1 / len(errors))
    assert inside == pytest.approx(0.5, abs=4 * np.sqrt(0.25 / len(errors)))


def test_sampled_errors_carry_the_exact_synthesis_error():
    analysis = _analysis(TWO_CHAINS, samples=20_000, seed=5)
    near = analysis.consumer("near").accuracy
    errors, budget, _ = near.monte_carlo_errors()
    synthesis = float(Fraction(125_000_000) / Fraction(124_987_500) - 1)
    # Reference ±20 ppm uniform, through (1 + e)(1 + s) - 1: bounds (1 ± 20 ppm)(1 + s) - 1.
    assert errors.min() >= (1 - 20e-6) * (1 + synthesis) - 1 - 1e-15
    assert errors.max() <= (1 + 20e-6) * (1 + synthesis) - 1 + 1e-15
    assert errors.mean() == pytest.approx(synthesis, abs=4 * (20e-6 / np.sqrt(3)) / np.sqrt(len(errors)))
    assert budget == (-300e-6, 300e-6)
    assert analysis.consumer("phy0").accuracy.monte_carlo_errors() is None  # no budget, nothing to hold against


def test_without_samples_there_is_no_distribution_and_the_cap_holds(monkeypatch):
    assert _analysis(TWO_CHAINS).consumer("near").accuracy.monte_carlo_errors() is None
    monkeypatch.setattr("clockplan.ppm.stage.KEPT_SAMPLES", 1000)
    near = _analysis(TWO_CHAINS, samples=5000, seed=1).consumer("near").accuracy
    assert len(near.monte_carlo_errors().errors) == 1000


def test_keeping_samples_does_not_change_the_draws():
    from clockplan.ppm.accuracy import ConsumerBudget
    from clockplan.ppm.montecarlo import ConsumerChain, monte_carlo_yield
    from clockplan.ppm.oscillator import OscillatorSpec
    from clockplan.units import parse_ppm

    xo = OscillatorSpec("xo", parse_ppm("±20 ppm"))
    chain = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±10 ppm")))
    plain = monte_carlo_yield([xo], [chain], (25, 25), 0.0, samples=30_000, seed=9, chunk=7000)
    kept = monte_carlo_yield([xo], [chain], (25, 25), 0.0, samples=30_000, seed=9, chunk=7000, keep_errors=10_000)
    assert plain.yields == kept.yields and plain.reference_errors == ()
    (errors,) = kept.reference_errors
    assert len(errors) == 10_000 and np.all(np.abs(errors) <= 20e-6)


# --------------------------------------------------------------------------- reports


def test_plots_command_draws_the_ppm_curve_and_the_histogram(tmp_path, capsys):
    pytest.importorskip("matplotlib", reason="plots are the optional 'plots' extra")
    from .test_report_plots import png_facts

    assert main(["plots", "boards/industrial-gateway.toml", "--samples", "5000", "--output-dir", str(tmp_path)]) == 0
    names = sorted(p.name for p in tmp_path.iterdir())
    # The gateway gives no phase noise; the overview of every margin comes with the curves.
    assert names == ["margins.png", "monte-carlo.png", "ppm-temperature.png"]
    for name in names:
        assert png_facts((tmp_path / name).read_bytes())[2] > 16


def test_explain_shows_the_assumed_figures_note(capsys):
    text = TWO_CHAINS.replace('tolerance = "±20 ppm"\n', "")  # no figures: the XO's typical grade is assumed
    text = text.replace('temperature = ["-40 C", "85 C"]', 'temperature = ["-40 C", "85 C"]\nlifetime = "10 years"')
    near = _analysis(text).consumer("near").accuracy
    assert any("Typical grade figures, assumed" in n for n in near.notes)
    headroom, margin_text = near.budget_margin()
    assert margin_text.startswith("typ. ")


def test_markdown_gets_the_reference_advice_as_a_table(capsys):
    assert main(["audit", "boards/sampling-receiver.toml", "--format", "markdown"]) in (0, 1)
    out = capsys.readouterr().out
    header = "| reference | kind | figures | verdict | least demanding grade | its typical figures | note |"
    assert header in out
    row = next(line for line in out.splitlines() if line.startswith("| ocxo_10m |"))
    # docs/frequency-accuracy.md: the demo's oven is more than its ppm budgets need.
    assert "| over-specified |" in row and "7.2 W" in row
