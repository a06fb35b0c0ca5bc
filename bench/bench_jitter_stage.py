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

- the jitter stage alone (``jitter_stage`` on an analysed board, best CPU time
  of many runs, in a fresh process) on the receiver and on the largest demo
  board, the edge router, planned; with ``--baseline PATH`` the same timing of
  another checkout (e.g. the main branch) in the same run, and the ratio.

    python bench/bench_jitter_stage.py [--repeats R] [--cli-runs C] [--quick] [--baseline PATH]

(``python -m bench`` runs it with every other benchmark: ``jitter-stage``; it runs
first there, so that the sympy import is measured before anything else loads it.)
"""

from __future__ import annotations

import argparse
import json
import re
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from bench.common import Row, median_seconds  # noqa: E402
from clockplan import analysis as pipeline  # noqa: E402
from clockplan.boardfile import load_board, parse_board  # noqa: E402
from clockplan.loopfilter.design import LoopSpec, design_filter  # noqa: E402

BOARD = ROOT / "boards" / "sampling-receiver.toml"

# Timed in a fresh process with the checkout under test first on the path, so the
# same code times this checkout and a baseline one. Prints {board: best seconds}.
_STAGE_TIMER = r"""
import json, sys, time
sys.path.insert(0, sys.argv[1])
from clockplan import analysis as pipeline
from clockplan.boardfile import load_board
from clockplan.jitter.stage import jitter_stage
from clockplan.plan.board_planner import plan_board
out = {}
for name, planned in (("edge-router", True), ("sampling-receiver", False)):
    board = load_board(sys.argv[1] + "/boards/" + name + ".toml")
    settings = plan_board(board).settings if planned else None
    stages = list(pipeline.STAGES)
    pipeline.STAGES[:] = [s for s in stages if s.__name__ != "_jitter_stage"]
    try:
        analysed = pipeline.analyze(board, settings)
    finally:
        pipeline.STAGES[:] = stages
    jitter_stage(analysed, None)
    best = float("inf")
    for _ in range(int(sys.argv[2])):
        start = time.process_time()
        jitter_stage(analysed, None)
        best = min(best, time.process_time() - start)
    out[name] = best
print(json.dumps(out))
"""


def stage_seconds(root: Path, runs: int) -> dict[str, float]:
    """Best CPU time of the jitter stage alone per demo board, for the checkout at ``root``."""
    done = subprocess.run(
        [sys.executable, "-c", _STAGE_TIMER, str(root), str(runs)], capture_output=True, text=True, cwd=root
    )
    if done.returncode != 0:
        raise SystemExit(done.stderr[-2000:])
    return json.loads(done.stdout.strip().splitlines()[-1])


def stage_rows(runs: int, baseline: Path | None, verbose: bool = True) -> list[Row]:
    """The stage-alone rows, alternating this checkout and the baseline's three times (best of each)."""
    mine: dict[str, float] = {}
    theirs: dict[str, float] = {}
    for _ in range(3 if baseline is not None else 1):
        for name, seconds in stage_seconds(ROOT, runs).items():
            mine[name] = min(mine.get(name, float("inf")), seconds)
        if baseline is not None:
            for name, seconds in stage_seconds(baseline, runs).items():
                theirs[name] = min(theirs.get(name, float("inf")), seconds)
    rows = []
    for name, seconds in mine.items():
        old = theirs.get(name)
        rows.append(Row("jitter-stage", f"{name}: jitter stage alone (best CPU time)", seconds * 1e3, "ms",
                        None if old is None else old * 1e3, f"the same at {baseline}" if old is not None else ""))
        if verbose:
            against = f"  (baseline {old * 1e3:.2f} ms, {seconds / old:.2f} x)" if old else ""
            print(f"{name + ': jitter stage alone, best CPU time:':<57} {seconds * 1e3:8.2f} ms{against}")
    return rows


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
    """sympy import plus the derivations the run-time path used to do for a filter of ``order``.

    If something in this process imported sympy already, the import is not in the figure.
    """
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


FULL = {"repeats": 20, "cli_runs": 5, "derive": True}
# Quick: no audit command (start-up has it) and no symbolic derivation (seconds of sympy).
QUICK = {"repeats": 2, "cli_runs": 0, "derive": False}


def measure(repeats: int, cli_runs: int, derive: bool = True, verbose: bool = True) -> list[Row]:
    """Measure the jitter stage and its baselines; print them if ``verbose``.

    ``cli_runs`` 0 skips the audit command; ``derive`` False skips the sympy baseline.
    """
    had_sympy = "sympy" in sys.modules
    cli, cli_sympy = _cli_seconds(cli_runs) if cli_runs else (float("nan"), False)
    board = load_board(BOARD)
    approximated = _approximated_board()
    start = time.perf_counter()
    pipeline.analyze(board)
    first = time.perf_counter() - start
    analysed_sympy = "sympy" in sys.modules and not had_sympy
    derivation = _derivation_seconds(3) if derive else float("nan")
    spec = LoopSpec(2.5e-3, 30e6, 100, 25e6)
    design = median_seconds(lambda: design_filter(spec, 100e3, 55, order=3), 20 * repeats, warm_up=False)
    warm = median_seconds(lambda: pipeline.analyze(board), repeats, warm_up=False)
    plain = median_seconds(lambda: pipeline.analyze(approximated), repeats, warm_up=False)
    stages = list(pipeline.STAGES)
    pipeline.STAGES[:] = [s for s in stages if s.__name__ != "_jitter_stage"]
    try:
        baseline = median_seconds(lambda: pipeline.analyze(board), repeats, warm_up=False)
    finally:
        pipeline.STAGES[:] = stages
    derivation_name = "derivation only (sympy was loaded)" if had_sympy else "sympy import + the derivation"
    if verbose:
        print(f"board: {BOARD.name}, {len(board.consumers)} consumers, median of {repeats}")
        if cli_runs:
            print(f"{f'audit command, fresh process (median of {cli_runs}):':<57} {cli * 1e3:8.1f} ms"
                  f"  (sympy imported: {'yes' if cli_sympy else 'no'})")
        print(f"first analyze in this process (closed forms):             {first * 1e3:8.1f} ms"
              f"  (sympy imported: {'yes' if analysed_sympy else 'no'})")
        if derive:
            print(f"{derivation_name + ' it replaces (baseline):':<57} {derivation * 1e3:8.1f} ms"
                  f"  (first analyze would take {(first + derivation) / first:.1f} x as long)")
        print(f"design_filter, third order, warm:                         {design * 1e6:8.1f} us")
        print(f"analyze, all stages, warm:                                {warm * 1e3:8.1f} ms")
        print(f"analyze without the jitter stage (baseline):              {baseline * 1e3:8.1f} ms")
        print(f"analyze, loop filter replaced by the approximation:       {plain * 1e3:8.1f} ms")
        print(f"jitter stage, warm: {(warm - baseline) * 1e3:.1f} ms ({warm / baseline:.2f} x the baseline)")
    name = BOARD.stem
    sympy_note = f"sympy imported by the audit command: {'yes' if cli_sympy else 'no'}" if cli_runs else "audit command not run"
    return [
        Row("jitter-stage", f"{name}: first analyze (closed forms)", first * 1e3, "ms",
            (first + derivation) * 1e3 if derive else None, f"same + {derivation_name}",
            sympy_note + ("" if derive else "; symbolic baseline skipped (--quick)")),
        Row("jitter-stage", f"{name}: analyze, all stages, warm", warm * 1e3, "ms", baseline * 1e3, "without the jitter stage"),
        Row("jitter-stage", f"{name}: analyze, approximated loop", plain * 1e3, "ms", baseline * 1e3, "without the jitter stage"),
        Row("jitter-stage", "design_filter, third order, warm", design * 1e3, "ms"),
    ]


def rows(quick: bool = False) -> list[Row]:
    """The ``jitter-stage`` benchmark's rows (the audit command's time is in ``startup``)."""
    return measure(**(QUICK if quick else FULL), verbose=False) + stage_rows(5 if quick else 60, None, verbose=False)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=FULL["repeats"])
    parser.add_argument("--cli-runs", type=int, default=FULL["cli_runs"])
    parser.add_argument("--quick", action="store_true", help="2 repeats; no audit command, no symbolic baseline")
    parser.add_argument("--baseline", type=Path, help="another checkout to time the jitter stage alone against")
    args = parser.parse_args()
    if args.quick:
        measure(**QUICK)
    else:
        measure(args.repeats, args.cli_runs)
    stage_rows(5 if args.quick else 60, args.baseline)


if __name__ == "__main__":
    main()
