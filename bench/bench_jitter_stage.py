"""Benchmark: what the jitter stage adds to ``analyze`` on the demo receiver board.

Prints, measured in the same run:

- the first ``analyze`` in a fresh process (it includes the one-time symbolic
  derivation of the loop-filter formulas, cached for the process afterwards);
- the median of later ``analyze`` calls with every stage;
- the median with the jitter stage left out (the baseline: exact audit and the
  other budget stages);
- the same board with the designed loop filter replaced by the
  bandwidth-and-phase-margin approximation (no symbolic work at all).

    python bench/bench_jitter_stage.py [--repeats R]
"""

from __future__ import annotations

import argparse
import re
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from clockplan import analysis as pipeline  # noqa: E402
from clockplan.boardfile import load_board, parse_board  # noqa: E402

BOARD = ROOT / "boards" / "sampling-receiver.toml"


def _median_seconds(action, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        action()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def _approximated_board():
    text = BOARD.read_text()
    block = re.search(r"\[pll\.loop_filter\].*?\n\n", text, re.S).group(0)
    loop = 'loop = { bandwidth = "50 kHz", phase_margin = 55, bandwidth_is = "crossover" }\n'
    return parse_board(text.replace(block, "\n").replace('noise = { fom = "-227', loop + 'noise = { fom = "-227'))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=20)
    args = parser.parse_args()
    board = load_board(BOARD)
    approximated = _approximated_board()
    start = time.perf_counter()
    pipeline.analyze(board)
    first = time.perf_counter() - start
    warm = _median_seconds(lambda: pipeline.analyze(board), args.repeats)
    plain = _median_seconds(lambda: pipeline.analyze(approximated), args.repeats)
    stages = list(pipeline.STAGES)
    pipeline.STAGES[:] = [s for s in stages if s.__name__ != "_jitter_stage"]
    try:
        baseline = _median_seconds(lambda: pipeline.analyze(board), args.repeats)
    finally:
        pipeline.STAGES[:] = stages
    print(f"board: {BOARD.name}, {len(board.consumers)} consumers, median of {args.repeats}")
    print(f"first analyze (with the one-time loop-filter derivation): {first * 1e3:8.1f} ms")
    print(f"analyze, all stages, warm:                                {warm * 1e3:8.1f} ms")
    print(f"analyze without the jitter stage (baseline):              {baseline * 1e3:8.1f} ms")
    print(f"analyze, loop filter replaced by the approximation:       {plain * 1e3:8.1f} ms")
    print(f"jitter stage, warm: {(warm - baseline) * 1e3:.1f} ms ({warm / baseline:.2f} x the baseline)")


if __name__ == "__main__":
    main()
