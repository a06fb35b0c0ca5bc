"""Time limits as walls: the wall time of each pathological run with ``--time-limit 1`` and ``2`` (``--quick``: 0.5).

Each case of :mod:`bench.pathological` (coprime outputs that make the plan
fail and the explanation relax every PLL, one loop whose R, N and dividers
allow 10^12 values, a 60-PLL cascade, synthesis with a part of a million
outputs and with 300 consumer classes) runs in a fresh process. The goal (issue 15) is the limit plus 1 s
plus start-up: each row's baseline is that goal, with start-up measured in the
same run (``python -m clockplan --help``), so a ratio at or under 1 meets it.

    python bench/bench_time_limits.py [--quick]

(``python -m bench`` runs it with every other benchmark: ``time-limits``.)
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from bench.common import Row, median_seconds, render_table  # noqa: E402
from bench.pathological import CASES, write_case  # noqa: E402

FULL_LIMITS = (1.0, 2.0)
QUICK_LIMITS = (0.5,)  # keeps `python -m bench --quick` (run by the suite) short
#: Exit statuses a pathological run may end with: a plan or tree (0, 1) or none found (3); never 2 or 4.
STATUSES = (0, 1, 3)


def wall_seconds(argv: list[str], limit: float) -> tuple[float, int]:
    """Wall time and exit status of ``python -m clockplan ARGV --time-limit LIMIT --json`` in a fresh process."""
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "clockplan", *argv, "--time-limit", f"{limit:g}", "--json"],
                          cwd=ROOT, capture_output=True, text=True)
    seconds = time.perf_counter() - start
    if done.returncode not in STATUSES:
        raise SystemExit(f"{' '.join(argv)} exited {done.returncode}: {done.stderr[-2000:]}")
    return seconds, done.returncode


def rows(quick: bool = False) -> list[Row]:
    """The ``time-limits`` benchmark's rows: one per case and limit, against limit + 1 s + start-up."""

    def start() -> None:
        subprocess.run([sys.executable, "-m", "clockplan", "--help"], cwd=ROOT, capture_output=True, check=True)

    startup = median_seconds(start, 1 if quick else 3, warm_up=not quick)
    result = []
    with tempfile.TemporaryDirectory() as folder:
        for case in CASES:
            argv = write_case(case, folder)
            for limit in QUICK_LIMITS if quick else FULL_LIMITS:
                seconds, status = wall_seconds(argv, limit)
                goal = limit + 1.0 + startup
                result.append(Row("time-limits", f"{case.name}, --time-limit {limit:g}", seconds, "s", goal,
                                  "limit + 1 s + start-up", f"exit {status}; start-up {startup * 1e3:.0f} ms"))
    return result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="--time-limit 0.5 only")
    args = parser.parse_args()
    print(render_table(rows(args.quick)))


if __name__ == "__main__":
    main()
