"""Benchmark: what the jitter stage adds to ``analyze`` on the demo receiver board.

Prints, measured in the same run:

- the wall time of ``python -m clockplan audit`` on the board (fresh
  processes, median), and whether that path imports sympy;
- the first ``analyze`` in this process (the loop filter uses the closed forms
  of ``clockplan.loopfilter.closed_form``; no symbolic work), and, as the
  baseline measured afterwards in the same run, what the sympy import and the
  derivation the closed forms replace cost (what every start-up paid before);
- the median of a warm ``design_filter`` call (third order);
- the median of later ``analyze`` calls with every stage;
- the median with the jitter stage left out (the baseline: exact audit and the
  other budget stages);
- the same board with the designed loop filter replaced by the
  bandwidth-and-phase-margin approximation (no filter to design).

    python bench/bench_jitter_stage.py [--repeats R] [--cli-runs C]
"""

from __future__ import annotations

import argparse
import re
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from clockplan import analysis as pipeline  # noqa: E402
from clockplan.boardfile import load_board, parse_board  # noqa: E402
from clockplan.loopfilter.design import LoopSpec, design_filter  # noqa: E402

BOARD = ROOT / "boards" / "sampling-receiver.toml"


def _median_seconds(action, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        action()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def _cli_seconds(runs: int) -> tuple[float, bool]:
    """Median wall time of the audit command in fresh processes, and whether sympy was imported."""
    times, imported = [], False
    for _ in range(runs):
        start = time.perf_counter()
        done = subprocess.run(
            [sys.executable, "-X", "importtime", "-m", "clockplan", "audit", str(BOARD)],
            cwd=ROOT, capture_output=True, text=True,
        )
        times.append(time.perf_counter() - start)
        if done.returncode not in (0, 1):  # 1: the audit found a failing budget, still a full run
            raise SystemExit(done.stderr[-2000:])
        imported = imported or "sympy" in done.stderr
    return statistics.median(times), imported


def _derivation_seconds(order: int) -> float:
    """sympy import plus the derivations the run-time path used to do for a filter of ``order``."""
    assert "sympy" not in sys.modules, "measure the derivation before anything imports sympy"
    start = time.perf_counter()
    from clockplan.loopfilter import symbolic

    symbolic.impedance_coefficients(order)
    symbolic.phase_margin_expression(order)
    symbolic.total_capacitance(order)
    symbolic.component_formulas(order)
    for resistor in ("r1", "r3")[: order - 1]:
        symbolic.resistor_noise_transfer(order, resistor)
    return time.perf_counter() - start


def _approximated_board():
    text = BOARD.read_text()
    block = re.search(r"\[pll\.loop_filter\].*?\n\n", text, re.S).group(0)
    loop = 'loop = { bandwidth = "50 kHz", phase_margin = 55, bandwidth_is = "crossover" }\n'
    return parse_board(text.replace(block, "\n").replace('noise = { fom = "-227', loop + 'noise = { fom = "-227'))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=20)
    parser.add_argument("--cli-runs", type=int, default=5)
    args = parser.parse_args()
    cli, cli_sympy = _cli_seconds(args.cli_runs)
    board = load_board(BOARD)
    approximated = _approximated_board()
    start = time.perf_counter()
    pipeline.analyze(board)
    first = time.perf_counter() - start
    analysed_sympy = "sympy" in sys.modules
    derivation = _derivation_seconds(3)
    spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    design = _median_seconds(lambda: design_filter(spec, 100e3, 55, order=3), 20 * args.repeats)
    warm = _median_seconds(lambda: pipeline.analyze(board), args.repeats)
    plain = _median_seconds(lambda: pipeline.analyze(approximated), args.repeats)
    stages = list(pipeline.STAGES)
    pipeline.STAGES[:] = [s for s in stages if s.__name__ != "_jitter_stage"]
    try:
        baseline = _median_seconds(lambda: pipeline.analyze(board), args.repeats)
    finally:
        pipeline.STAGES[:] = stages
    print(f"board: {BOARD.name}, {len(board.consumers)} consumers, median of {args.repeats}")
    print(f"{f'audit command, fresh process (median of {args.cli_runs}):':<57} {cli * 1e3:8.1f} ms"
          f"  (sympy imported: {'yes' if cli_sympy else 'no'})")
    print(f"first analyze in this process (closed forms):             {first * 1e3:8.1f} ms"
          f"  (sympy imported: {'yes' if analysed_sympy else 'no'})")
    print(f"sympy import + the derivation it replaces (baseline):     {derivation * 1e3:8.1f} ms"
          f"  (first analyze would take {(first + derivation) / first:.1f} x as long)")
    print(f"design_filter, third order, warm:                         {design * 1e6:8.1f} us")
    print(f"analyze, all stages, warm:                                {warm * 1e3:8.1f} ms")
    print(f"analyze without the jitter stage (baseline):              {baseline * 1e3:8.1f} ms")
    print(f"analyze, loop filter replaced by the approximation:       {plain * 1e3:8.1f} ms")
    print(f"jitter stage, warm: {(warm - baseline) * 1e3:.1f} ms ({warm / baseline:.2f} x the baseline)")


if __name__ == "__main__":
    main()
