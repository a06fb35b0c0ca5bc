"""Pathological boards finish, or stop with a clear message, within the planner's time limit.

No wall-clock assertion (speed is measured in bench/): each test asserts the
outcome, a plan (with its notes saying what bounded the search) or a clear
time-limit message, and that nothing materialises a huge range. The boards are
invented stress cases.
"""

from __future__ import annotations

import io
from contextlib import redirect_stderr, redirect_stdout
from fractions import Fraction

import pytest

from clockplan.boardfile import parse_board
from clockplan.plan.board_planner import PlanOptions, plan_board

_REF = '[[reference]]\nid = "ref"\nfrequency = "25 MHz"\n\n'


def _pll(pll_id: str, source: str, outputs: dict[str, str], n: str = "[16, 4095]", extra: str = "") -> str:
    outs = ", ".join(f"{name} = {{ divider = {choices} }}" for name, choices in outputs.items())
    return (f'[[pll]]\nid = "{pll_id}"\ninput = "{source}"\nvco = ["2.4 GHz", "4.8 GHz"]\npfd = ["1 MHz", "100 MHz"]\n'
            f"r = [1, 255]\nn = {n}\noutputs = {{ {outs} }}\n{extra}\n")


def _consumer(consumer_id: str, source: str, frequency: str, extra: str = "") -> str:
    return f'[[consumer]]\nid = "{consumer_id}"\nsource = "{source}"\nfrequency = "{frequency}"\n{extra}\n'


def _plan(text: str, seconds: float = 0.5):
    board = parse_board(text, "stress.toml")
    return board, plan_board(board, PlanOptions(alternatives=1, time_limit_s=seconds))


def _bounded_note(plan) -> bool:
    return plan.feasible or any("time limit" in note or "not proven optimal" in note for note in plan.notes)


def test_divider_ranges_of_a_million_million_values_are_searched_on_a_subset():
    # A 1 Hz output of a GHz VCO: 2.4e9 allowed output dividers. The search must not build
    # a list of them (it used to hang building one Fraction per divider, found by bench/fuzz.py).
    text = _REF + _pll("big", "ref", {"slow": "[1, 1000000000000]", "fast": "[1, 1000000]"}, n="[1, 1000000]")
    text += _consumer("tick", "big.slow", "1 Hz") + _consumer("clk", "big.fast", "11.2896 MHz")
    board, plan = _plan(text)
    assert _bounded_note(plan)
    assert any("too many to search" in note for note in plan.notes)
    # Whatever was chosen is a setting the part allows (parts.IntChoices membership).
    chosen = plan.settings.plls["big"]
    assert chosen.dividers["slow"] in board.plls[0].outputs[0].divider


def test_many_outputs_with_coprime_frequencies_return_a_plan():
    # Eight outputs at frequencies whose common multiple is far above any VCO:
    # no exact plan exists, the search ranks nearest plans within its limits.
    primes = ["7", "11", "13", "17", "19", "23", "29", "31"]
    outputs = {f"o{k}": "[1, 1024]" for k in range(len(primes))}
    text = _REF + _pll("wide", "ref", outputs, extra='mode = "fractional"\nmax_denominator = 4194303')
    for k, p in enumerate(primes):
        text += _consumer(f"c{k}", f"wide.o{k}", f"{p}.{k + 1} MHz", 'max_synthesis_error = "±100 ppm"')
    _, plan = _plan(text)
    assert plan.best is not None
    assert _bounded_note(plan) or plan.best.score.violations >= 0  # a ranked plan exists either way


def _cascade(depth: int) -> str:
    """ref -> pll0 -> div0 -> pll1 -> div1 -> ... -> consumer: ``depth`` PLLs and ``depth`` dividers."""
    text, source = _REF, "ref"
    for k in range(depth):
        text += _pll(f"p{k}", source, {"out": "[1, 64]"})
        text += f'[[divider]]\nid = "d{k}"\ninput = "p{k}.out"\nratio = [1, 16]\n\n'
        source = f"d{k}"
    return text + _consumer("end", source, "25 MHz", 'max_synthesis_error = "±1 %"')


def test_a_cascade_of_fifty_parts_returns_within_its_time_limit():
    board, plan = _plan(_cascade(26), seconds=0.5)  # 26 PLLs and 26 dividers
    assert len(board.plls) + len(board.dividers) == 52
    assert plan.best is not None
    assert _bounded_note(plan) or not plan.best.blocked


def test_a_cascade_through_the_cli_ends_in_a_status_not_a_traceback(tmp_path):
    from clockplan.cli import main

    path = tmp_path / "cascade.toml"
    path.write_text(_cascade(26))
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        status = main(["plan", str(path), "--time-limit", "0.5", "--alternatives", "2", "--json"])
    assert status in (0, 1, 3)
    assert "Traceback" not in err.getvalue()
    if status == 3:
        assert "time limit" in err.getvalue() or "no plan" in err.getvalue()


def test_five_thousand_consumers_load_plan_and_audit():
    text = _REF + _pll("main", "ref", {"a": "[1, 256]", "b": "[1, 256]"})
    text += '[[buffer]]\nid = "fan"\ninput = "main.a"\noutputs = 5000\n\n'
    text += "".join(_consumer(f"c{k}", "fan", "125 MHz") for k in range(4999)) + _consumer("last", "main.b", "100 MHz")
    board, plan = _plan(text, seconds=2.0)
    assert len(board.consumers) == 5000
    from clockplan.analysis import analyze

    analysis = analyze(board, plan.settings)
    # 2.5 GHz / 20 = 125 MHz and 2.5 GHz / 25 = 100 MHz: an exact plan exists (Fraction arithmetic).
    assert plan.feasible
    assert all(result.synthesis_error == 0 for result in analysis.consumers)


def test_planner_materialises_no_huge_range():
    # The solver's per-output divider bottoms stay lazy: a range of 10^12 values has a length
    # and indexed access, never a list (pll_solver._Scaled).
    from clockplan.plan.pll_solver import _Scaled

    bottoms = _Scaled(range(1, 10**12 + 1), Fraction(1, 3))
    assert len(bottoms) == 10**12
    assert bottoms[-1] == Fraction(10**12, 3)
    import bisect

    assert bisect.bisect_left(bottoms, Fraction(7, 3)) == 6


@pytest.mark.parametrize("seconds", [0.05, 0.3])
def test_time_limit_reaches_the_alternatives_search(seconds):
    # Alternatives multiply the ranked plans kept at every node; the limit still holds.
    text = _cascade(6)
    board = parse_board(text, "stress.toml")
    plan = plan_board(board, PlanOptions(alternatives=5, time_limit_s=seconds))
    assert plan.best is not None
    assert plan.feasible or _bounded_note(plan)
