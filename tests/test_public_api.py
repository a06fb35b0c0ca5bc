"""The package's public API: every re-exported name resolves, and importing it stays light."""

import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import clockplan

ROOT = Path(__file__).resolve().parents[1]


def test_every_public_name_resolves():
    missing = [name for name in clockplan.__all__ if getattr(clockplan, name, None) is None]
    assert missing == []


def test_library_round_trip_matches_the_board_file():
    # The library path the module docstring shows: load, plan, analyse. Every consumer of the
    # edge-router demo has a frequency reachable exactly except the UART clock, whose allowed
    # error the board states; the achieved frequencies are exact rationals (fractions module).
    board = clockplan.load_board(ROOT / "boards" / "edge-router.toml")
    plan = clockplan.plan_board(board, clockplan.PlanOptions(time_limit_s=10.0))
    assert plan.feasible
    analysis = clockplan.analyze(board, plan.settings)
    for consumer in board.consumers:
        result = analysis.consumer(consumer.id)
        assert isinstance(result.synthesis_error, Fraction)
        assert abs(result.synthesis_error) <= consumer.max_synthesis_error


def test_import_does_not_load_the_heavy_modules():
    # Start-up speed rule of the house (DEVELOPERS.md): numpy, sympy, networkx and rich load on use.
    code = "import sys, clockplan; print(sorted(m for m in ('numpy', 'sympy', 'networkx', 'rich') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
