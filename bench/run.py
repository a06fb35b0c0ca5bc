"""Every benchmark of the project, one table: benchmark, figure, unit, baseline, ratio.

Run from the repository root::

    python -m bench                     # every benchmark, full sizes (minutes)
    python bench/run.py --quick         # small sizes, a few seconds
    python -m bench --only planner --only boards
    python -m bench --json > figures.json

Each benchmark is a script in ``bench/`` that also runs on its own; its
``rows(quick)`` function (``planner_rows`` and ``board_rows`` in
``bench_planner.py``) returns the figures as :class:`bench.common.Row`, each
with a baseline measured in the same run. The ratio is figure / baseline.

The benchmarks run in one process, in the order below: ``jitter-stage``
first, because it measures the first analysis of the process and the sympy
import before anything else loads them. This prints figures; nothing here is a
test (``tests/test_bench_suite.py`` only checks that ``--quick`` runs).
"""

from __future__ import annotations

import argparse
import importlib
import os
import platform
import sys
import time
from collections.abc import Callable
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from bench.common import Row, render_table, rows_json  # noqa: E402

#: name -> (module, function, what it measures); run in this order.
BENCHMARKS: dict[str, tuple[str, str, str]] = {
    "startup": ("bench.bench_startup", "rows", "fresh-process start-up: --help and an audit, against python -c pass"),
    "jitter-stage": ("bench.bench_jitter_stage", "rows", "what the jitter stage adds to analyze"),
    "jitter": ("bench.bench_jitter", "rows", "integrating a phase-noise profile"),
    "reports": ("bench.report_speed", "rows", "rendering each report format, against analyze"),
    "montecarlo": ("bench.bench_montecarlo", "rows", "Monte Carlo yield throughput, against a naive loop"),
    "planner": ("bench.bench_planner", "planner_rows", "the planner against exhaustive search on one loop"),
    "boards": ("bench.bench_planner", "board_rows", "plan and audit of synthetic boards, 10 to 5,000 consumers"),
    "synthesis": ("bench.bench_synthesis", "rows", "tree synthesis by size; branch and bound against exhaustive"),
    "time-limits": ("bench.bench_time_limits", "rows", "pathological runs with --time-limit 1 and 2, against limit + 1 s"),
}


def _collector(name: str) -> Callable[[bool], list[Row]]:
    module, function, _ = BENCHMARKS[name]
    return getattr(importlib.import_module(module), function)


def machine() -> dict[str, object]:
    """Where the figures were measured."""
    return {
        "python": platform.python_version(),
        "implementation": platform.python_implementation(),
        "system": f"{platform.system()} {platform.release()}",
        "machine": platform.machine(),
        "cpus": os.cpu_count(),
        "usable_cpus": len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count(),
    }


def collect(names: list[str], quick: bool, say: Callable[[str], None] = lambda text: None) -> list[Row]:
    """The rows of the benchmarks ``names``, in the suite's order."""
    rows: list[Row] = []
    for name in [n for n in BENCHMARKS if n in names]:
        say(f"running {name}: {BENCHMARKS[name][2]} ...")
        started = time.perf_counter()
        found = _collector(name)(quick)
        if not found:
            raise RuntimeError(f"benchmark {name} returned no rows")
        rows += found
        say(f"  {name}: {len(found)} rows in {time.perf_counter() - started:.1f} s")
    return rows


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m bench", description=__doc__.splitlines()[0],
                                     epilog="benchmarks: " + ", ".join(BENCHMARKS))
    parser.add_argument("--quick", action="store_true", help="small sizes: the whole suite in a few seconds")
    parser.add_argument("--only", action="append", choices=list(BENCHMARKS), metavar="NAME",
                        help="run only this benchmark (repeatable): " + ", ".join(BENCHMARKS))
    parser.add_argument("--json", action="store_true", help="print the rows as JSON instead of the table")
    args = parser.parse_args(argv)
    names = args.only or list(BENCHMARKS)
    started = time.perf_counter()
    rows = collect(names, args.quick, say=lambda text: print(text, file=sys.stderr, flush=True))
    elapsed = time.perf_counter() - started
    context = {"quick": args.quick, "benchmarks": [n for n in BENCHMARKS if n in names],
               "elapsed_s": round(elapsed, 1), "machine": machine()}
    if args.json:
        sys.stdout.write(rows_json(rows, **context))
    else:
        info = context["machine"]
        sys.stdout.write(
            f"clockplan benchmarks{' (--quick)' if args.quick else ''}: {len(rows)} figures in {elapsed:.0f} s on "
            f"{info['usable_cpus']} CPUs, {info['system']} {info['machine']}, Python {info['python']}\n"
            "ratio = figure / baseline; every baseline is measured in the same run\n\n"
        )
        sys.stdout.write(render_table(rows))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
