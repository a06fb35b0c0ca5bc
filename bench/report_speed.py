"""How fast the reports are rendered, and how fast ``clockplan --help`` starts.

Prints, for each figure, the median of several runs and its ratio against a
baseline measured in the same run:

* start-up (``bench/bench_startup.py``): ``python -m clockplan --help`` and an
  audit against a bare ``python -c pass``;
* rendering: each report format on each demo board against the analysis
  itself (``analyze``), in-process, after one warm-up.

    python bench/report_speed.py [--runs 7] [--quick]

(``python -m bench`` runs it with every other benchmark: ``reports``.)
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


from bench.common import Row, median_seconds  # noqa: E402

FULL_RUNS = 7
QUICK_RUNS = 1


def rows(quick: bool = False, runs: int | None = None) -> list[Row]:
    """The ``reports`` benchmark's rows: every format on every demo board (the first board only if ``quick``)."""
    from clockplan.analysis import analyze
    from clockplan.boardfile import load_board
    from clockplan.report.formats import FORMATS, render_report

    runs = runs or (QUICK_RUNS if quick else FULL_RUNS)
    boards = sorted((ROOT / "boards").glob("*.toml"))
    found = []
    for board_path in boards[:1] if quick else boards:
        board = load_board(board_path)
        base = median_seconds(lambda: analyze(board), runs)
        analysis = analyze(board)
        for fmt in FORMATS:
            took = median_seconds(lambda: render_report(analysis, fmt), runs)
            found.append(Row("reports", f"{board_path.stem}: {fmt}", took * 1e3, "ms", base * 1e3, "analyze"))
    return found


def main() -> None:
    from bench import bench_startup

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=FULL_RUNS)
    parser.add_argument("--quick", action="store_true", help=f"{QUICK_RUNS} run, first demo board")
    args = parser.parse_args()
    runs = QUICK_RUNS if args.quick else args.runs
    print(f"{'what':<44} {'median ms':>10} {'ratio':>8}")
    for row in bench_startup.rows(runs=runs) + rows(args.quick, runs):
        baseline = f" (baseline: {row.baseline_name} {row.baseline:.2f} ms)" if row.benchmark == "reports" else ""
        print(f"{row.name:<44} {row.figure:10.2f} {row.ratio:8.2f}{baseline}")


if __name__ == "__main__":
    main()
