"""Numeric edges: 1 Hz to 100 GHz, ppb-level errors, denominators of 2^48, huge exact rationals, determinism.

The reference for every exact value is Python's ``fractions.Fraction`` computed
here from the board's own numbers (f_out = f_ref / R * N / D, the PLL relation
of docs/board-format.md).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import parse_board
from clockplan.report.formats import render_report
from clockplan.report.json import analysis_document, dumps
from clockplan.units import format_frequency, format_ppm, parse_frequency

ROOT = Path(__file__).resolve().parents[1]


def _direct(ref: str, target: str) -> str:
    return (f'[[reference]]\nid = "ref"\nfrequency = "{ref}"\n\n'
            f'[[consumer]]\nid = "c"\nsource = "ref"\nfrequency = "{target}"\n')


@pytest.mark.parametrize("text, hz", [("1 Hz", Fraction(1)), ("100 GHz", Fraction(10**11)), ("1 mHz", Fraction(1, 1000))])
def test_extreme_frequencies_audit_exactly(text, hz):
    analysis = analyze(parse_board(_direct(text, text), "edge.toml"))
    result = analysis.consumer("c")
    assert result.actual_hz == hz and result.synthesis_error == 0  # exact zero, not a float near it
    for fmt in ("table", "json", "markdown", "csv", "html"):
        assert render_report(analysis, fmt)
    assert format_frequency(hz) == {Fraction(1): "1 Hz", Fraction(10**11): "100 GHz", Fraction(1, 1000): "1 mHz"}[hz]


def test_an_error_of_one_ppb_is_reported_as_not_exact():
    # 100.0000001 MHz for 100 MHz is +1e-9 exactly (Fraction: 1000000001/10 / 10^8 - 1).
    analysis = analyze(parse_board(_direct("100.0000001 MHz", "100 MHz"), "ppb.toml"))
    assert analysis.consumer("c").synthesis_error == Fraction(1, 10**9)
    document = analysis_document(analysis, "audit")
    consumer = document["consumers"][0]
    assert consumer["synthesis_error_exact"] == "1/1000000000" and consumer["status"] == "fail"
    text = render_report(analysis, "table", width=160)
    assert "+0.001 ppm" in text and "exact target missed" in text
    assert format_ppm(Fraction(1, 10**9)) == "+0.001 ppm"


@pytest.mark.parametrize("error", [Fraction(1, 10**12), Fraction(-1, 10**400), Fraction(7, 10**330)])
def test_errors_below_float_resolution_never_print_as_zero(error):
    text = format_ppm(error)
    assert text != "0 ppm" and ("+" if error > 0 else "-") in text
    mantissa = float(text.split("e")[0])
    assert mantissa != 0


def _fractional(denominator: str, n: str, divider: int) -> str:
    return f'''[[reference]]
id = "ref"
frequency = "25 MHz"

[[pll]]
id = "frac"
input = "ref"
vco = ["2.4 GHz", "3.2 GHz"]
pfd = ["1 MHz", "100 MHz"]
n = [16, 4095]
mode = "fractional"
{denominator}
outputs.out = {{ divider = [1, 256] }}
settings = {{ r = 1, n = "{n}", outputs = {{ out = {divider} }} }}

[[consumer]]
id = "c"
source = "frac.out"
frequency = "125 MHz"
max_synthesis_error = "±1 ppm"
'''


def test_a_denominator_of_two_to_the_forty_eighth_is_exact():
    n = Fraction(100) + Fraction(1, 2**48)
    analysis = analyze(parse_board(_fractional('denominator = "2^48"', "100 + 1/2^48", 20), "frac.toml"))
    expected = Fraction(25_000_000) * n / 20  # f_ref / R * N / D with Fraction
    result = analysis.consumer("c")
    assert result.actual_hz == expected
    assert result.synthesis_error == expected / 125_000_000 - 1 == Fraction(1, 100 * 2**48)
    consumer = json.loads(dumps(analysis_document(analysis, "audit")))["consumers"][0]
    assert Fraction(consumer["actual_hz_exact"]) == expected
    assert consumer["status"] == "pass"  # 3.6e-17 is inside ±1 ppm, and it is not printed as 0
    assert format_ppm(result.synthesis_error) != "0 ppm"


def test_exact_rationals_with_huge_numerators_survive_every_report():
    # N = 100 + 1/(2^48 - 1) with a programmable denominator: the output frequency's
    # numerator and denominator run to 20 digits each (Fraction as the reference).
    n_text = "100 + 1/(2^48 - 1)"
    analysis = analyze(parse_board(_fractional("max_denominator = 281474976710655", n_text, 20), "big.toml"))
    expected = Fraction(25_000_000) * (100 + Fraction(1, 2**48 - 1)) / 20
    assert analysis.consumer("c").actual_hz == expected
    for fmt in ("table", "json", "markdown", "csv", "html"):
        render_report(analysis, fmt)
    consumer = json.loads(render_report(analysis, "json"))["consumers"][0]
    assert Fraction(consumer["actual_hz_exact"]) == expected
    assert format_frequency(expected).startswith("≈")  # inexact to 12 digits: marked, never shown as 125 MHz


def test_json_is_byte_identical_across_two_runs():
    from clockplan.plan.board_planner import PlanOptions, plan_board
    from clockplan.plan.output import plan_document

    text = (ROOT / "boards" / "industrial-gateway.toml").read_text(encoding="utf-8")
    outputs = []
    for _ in range(2):
        board = parse_board(text, "boards/industrial-gateway.toml")
        plan = plan_board(board, PlanOptions(alternatives=2, time_limit_s=30))
        outputs.append(dumps(plan_document(analyze(board, plan.settings), plan)))
    assert outputs[0] == outputs[1]


def test_json_is_byte_identical_across_hash_seeds(tmp_path):
    # Set and dict iteration orders of strings change with PYTHONHASHSEED; the output must not.
    from tests.boards import MINIMAL

    board = tmp_path / "small.toml"
    board.write_text(MINIMAL.replace("settings = ", "# settings = "), encoding="utf-8")
    outputs = set()
    for seed in ("0", "1", "4242"):
        env = {**os.environ, "PYTHONHASHSEED": seed, "PYTHONPATH": str(ROOT), "NO_COLOR": "1"}
        env.pop("CLOCKPLAN_DEBUG", None)
        done = subprocess.run(
            [sys.executable, "-m", "clockplan", "plan", str(board), "--json", "--alternatives", "2", "--samples", "200"],
            capture_output=True, env=env, cwd=tmp_path, timeout=300,
        )
        assert done.returncode in (0, 1), done.stderr.decode()
        outputs.add(done.stdout)
    assert len(outputs) == 1


def test_parsed_frequency_bounds_are_exact_fractions():
    assert parse_frequency("1 THz") == Fraction(10**12)
    assert parse_frequency("1 mHz") == Fraction(1, 1000)
