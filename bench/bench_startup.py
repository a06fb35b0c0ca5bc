"""Start-up: how long the command line takes in a fresh process, against a bare Python.

Prints, for each figure, the median wall time of several fresh processes and
its ratio against ``python -c pass`` measured in the same run:

* ``python -m clockplan --help`` (heavy modules load lazily: tens of ms over the bare start);
* ``python -m clockplan audit`` on a demo board (imports, reading, the whole analysis, the table).

    python bench/bench_startup.py [--runs 7] [--quick]

(``python -m bench`` runs it with every other benchmark: ``startup``.)
"""

from __future__ import annotations

import argparse
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from bench.common import Row, median_seconds  # noqa: E402

DEMO = "boards/industrial-gateway.toml"
FULL_RUNS = 7
QUICK_RUNS = 1


def _process(*args: str, statuses: tuple[int, ...] = (0,)):
    """A fresh ``python ARGS`` in the repository root (so ``-m clockplan`` is this checkout's)."""

    def run() -> None:
        done = subprocess.run([sys.executable, *args], cwd=ROOT, capture_output=True, text=True)
        if done.returncode not in statuses:
            raise SystemExit(f"{' '.join(args)} exited {done.returncode}: {done.stderr[-2000:]}")

    return run


def rows(quick: bool = False, runs: int | None = None) -> list[Row]:
    """The ``startup`` benchmark's rows: median of ``runs`` fresh processes each (after one warm-up)."""
    runs = runs or (QUICK_RUNS if quick else FULL_RUNS)
    warm = not quick  # a warm-up run first fills the file cache; quick skips it
    bare = median_seconds(_process("-c", "pass"), runs, warm)
    helped = median_seconds(_process("-m", "clockplan", "--help"), runs, warm)
    # 1: the demo's audit finds a broken budget; it is still a whole run.
    audited = median_seconds(_process("-m", "clockplan", "audit", DEMO, "--no-color", statuses=(0, 1)), runs, warm)
    baseline = "python -c pass"
    return [
        Row("startup", "python -c pass", bare * 1e3, "ms", bare * 1e3, baseline),
        Row("startup", "clockplan --help", helped * 1e3, "ms", bare * 1e3, baseline, f"median of {runs} fresh processes"),
        Row("startup", f"clockplan audit {Path(DEMO).name}", audited * 1e3, "ms", bare * 1e3, baseline,
            f"median of {runs} fresh processes"),
    ]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=FULL_RUNS)
    parser.add_argument("--quick", action="store_true", help=f"{QUICK_RUNS} run each")
    args = parser.parse_args()
    print(f"{'what':<44} {'median ms':>10} {'ratio':>8}")
    for row in rows(args.quick, None if args.quick else args.runs):
        print(f"{row.name:<44} {row.figure:10.1f} {row.ratio:8.2f}")


if __name__ == "__main__":
    main()
