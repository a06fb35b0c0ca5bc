"""How fast the reports are, and how fast ``clockplan --help`` starts.

Prints, for each figure, the median of several runs and its ratio against a
baseline measured in the same run:

* start-up: ``python -m clockplan --help`` against a bare ``python -c pass``
  (the CLI must stay at tens of milliseconds: heavy modules load lazily);
* rendering: each report format on each demo board against the analysis
  itself (``analyze``), in-process, after one warm-up.

    python bench/report_speed.py [--runs 7]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


def _median_seconds(action, runs: int) -> float:
    action()  # warm-up: imports and caches
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        action()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def _process(*args: str):
    return lambda: subprocess.run([sys.executable, *args], cwd=ROOT, check=True, capture_output=True)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7)
    runs = parser.parse_args().runs

    bare = _median_seconds(_process("-c", "pass"), runs)
    helped = _median_seconds(_process("-m", "clockplan", "--help"), runs)
    print(f"{'what':<44} {'median ms':>10} {'ratio':>8}")
    print(f"{'python -c pass (baseline)':<44} {bare * 1e3:10.1f} {1:8.2f}")
    print(f"{'python -m clockplan --help':<44} {helped * 1e3:10.1f} {helped / bare:8.2f}")

    from clockplan.analysis import analyze
    from clockplan.boardfile import load_board
    from clockplan.report.formats import FORMATS, render_report

    for board_path in sorted((ROOT / "boards").glob("*.toml")):
        board = load_board(board_path)
        base = _median_seconds(lambda: analyze(board), runs)
        analysis = analyze(board)
        print(f"{board_path.stem + ': analyze (baseline)':<44} {base * 1e3:10.2f} {1:8.2f}")
        for fmt in FORMATS:
            took = _median_seconds(lambda: render_report(analysis, fmt), runs)
            print(f"{board_path.stem + ': ' + fmt:<44} {took * 1e3:10.2f} {took / base:8.2f}")


if __name__ == "__main__":
    main()
