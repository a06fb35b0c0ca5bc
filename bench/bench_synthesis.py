"""Benchmark: synthesis time for consumer lists of 10, 20 and 40 consumers, with baselines.

Run from the repository root::

    python bench/bench_synthesis.py            # 10, 20 and 40 consumers
    python bench/bench_synthesis.py --quick    # 4 consumers, exhaustive baseline on the same list

(``python -m bench`` runs it with every other benchmark: ``synthesis``.)

Consumer lists are drawn (fixed seed) from a pool of interface clocks with
their standards -- Ethernet and PCI Express references, the 48 kHz audio
family, SDI and pixel clocks at both frame-rate families, USB, DDR, a UART
allowed 2 % and a real-time clock -- the kind of list a product's block
diagram gives. Every list is synthesized with the shipped library and the
default search (every stock reference frequency, 30 s time limit); the
script prints the time, whether the search completed, the groupings judged,
the block checks (planner and budget stages) and the best tree's objective.

Baselines measured in the same run:

* **naive tree**: one PLL template per frequency (the cheapest that passes
  alone) on the best tree's reference, priced with the same objective: what
  synthesis saves.
* **exhaustive enumeration** on the 10-consumer list with the main
  reference at 25 or 27 MHz: every grouping judged with no pruning, against
  the branch and bound on the same list; the same best tree is required, and
  the ratio of their times printed.

This is a script that prints figures, not a timed test.
"""

from __future__ import annotations

import argparse
import random
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench.common import Row  # noqa: E402
from clockplan.synth.evaluate import Evaluator  # noqa: E402
from clockplan.synth.grouping import BranchAndBound, LeafJudge, SearchStats, TopTrees, enumerate_groupings, exhaustive_search  # noqa: E402
from clockplan.synth.input import parse_consumer_list  # noqa: E402
from clockplan.synth.synthesize import SynthesisOptions, library_for, synthesize  # noqa: E402
from clockplan.synth.tree import Block, Problem, Tree  # noqa: E402

# (frequency, standard or inline budget keys); invented product mixes, standard frequencies.
POOL = [
    ('"156.25 MHz"', 'standard = "10GBASE-R"'),
    ('"125 MHz"', 'standard = "1000BASE-X"'),
    ('"100 MHz"', 'standard = "PCIe Gen3"'),
    ('"100 MHz"', 'standard = "PCIe Gen4"'),
    ('"25 MHz"', 'standard = "1000BASE-T"'),
    ('"50 MHz"', 'standard = "100BASE-TX"'),
    ('"100/3 MHz"', 'standard = "DDR4"'),
    ('"12.288 MHz"', 'standard = "audio-mclk-48k"'),
    ('"24.576 MHz"', 'standard = "audio-mclk-48k"'),
    ('"11.2896 MHz"', 'standard = "audio-mclk-44k1"'),
    ('"148.5 MHz"', 'standard = "3G-SDI"'),
    ('"148.5/1.001 MHz"', 'standard = "3G-SDI"'),
    ('"74.25 MHz"', 'standard = "CTA-861"'),
    ('"27 MHz"', 'standard = "CTA-861"'),
    ('"24 MHz"', 'standard = "USB 2.0 high speed"'),
    ('"200 MHz"', 'ppm = "±100 ppm"'),
    ('"1.8432 MHz"', 'max_synthesis_error = "±2 %"'),
    ('"32.768 kHz"', 'standard = "rtc-32k"'),
    ('"32 MHz"', 'standard = "Bluetooth LE"'),
    ('"40 MHz"', 'standard = "WiFi"'),
]


def consumer_list(count: int, seed: int) -> str:
    """A consumer-list board of ``count`` consumers drawn from the pool."""
    rng = random.Random(seed)
    lines = [f'[board]\nname = "bench {count}"\ntemperature = ["-20 C", "70 C"]\nlifetime = "10 years"\n']
    for index in range(count):
        frequency, budget = rng.choice(POOL)
        lines.append(f'[[consumer]]\nid = "c{index}"\nfrequency = {frequency}\n{budget}\n')
    return "\n".join(lines)


def naive_cost(result) -> str:
    """One PLL per frequency (cheapest passing template alone) on the best tree's reference."""
    best = result.best
    if best is None or best.candidate.tree.reference is None:
        return "-"
    judge = result.judge
    problem: Problem = result.problem
    reference = best.candidate.tree.reference
    blocks = []
    for klass in problem.classes:
        kinds = judge.kinds(reference.hz, (klass.index,), ())
        for kind in kinds:
            block = Block(kind, (klass.index,))
            if judge.evaluator.block(reference if block.is_pll else None, block).ok:
                blocks.append(block)
                break
        else:
            return "no naive tree"
    cost = problem.tree_cost(Tree(reference, tuple(blocks)))
    return f"{cost.parts} parts, {float(cost.power_w):.3f} W, cost {float(cost.cost):g}" if cost else "-"


def run_sizes(sizes: list[int], verbose: bool = True) -> list[Row]:
    """Synthesize one drawn list per size; rows: the time against the first size's time scaled linearly."""
    say = print if verbose else (lambda *args, **kwargs: None)
    say(f"{'consumers':>9} {'classes':>7} {'time s':>8} {'complete':>8} {'groupings':>9} {'checks':>6}  best tree / naive one-PLL-per-frequency tree")
    rows: list[Row] = []
    first: tuple[int, float] | None = None
    for size in sizes:
        spec = parse_consumer_list(consumer_list(size, seed=size), f"bench-{size}.toml")
        started = time.perf_counter()
        result = synthesize(spec, options=SynthesisOptions(alternatives=2, time_limit_s=30.0))
        elapsed = time.perf_counter() - started
        best = result.best
        objective = f"{best.candidate.cost.parts} parts, {float(best.candidate.cost.power_w):.3f} W, cost {float(best.candidate.cost.cost):g}" if best else "none"
        naive = naive_cost(result)
        say(
            f"{size:>9} {len(result.problem.classes):>7} {elapsed:>8.2f} {str(not result.stats.stopped):>8} "
            f"{result.stats.leaves:>9} {result.evaluator.checked:>6}  {objective} / {naive}"
        )
        first = first or (size, elapsed)
        rows.append(Row("synthesis", f"synthesize {size} consumers", elapsed, "s", first[1] * size / first[0],
                        f"{first[0]}-consumer time x {size / first[0]:g}",
                        f"complete: {not result.stats.stopped}; best {objective}; naive tree {naive}"))
    return rows


def run_exhaustive(count: int = 10, verbose: bool = True) -> list[Row]:
    """Branch and bound against every grouping judged, on the ``count``-consumer list; one row."""
    spec = parse_consumer_list(consumer_list(count, seed=count), f"bench-{count}.toml")
    problem = Problem.of(spec, library_for(spec))
    references: dict = {}
    for reference in problem.reference_candidates():
        if reference.hz in (25_000_000, 27_000_000):
            references.setdefault(reference.hz, []).append(reference)
    frequencies = list(references) + [None]
    groupings = sum(1 for hz in frequencies for _ in enumerate_groupings(problem, hz))
    judge = LeafJudge(problem, Evaluator(problem), references)
    started = time.perf_counter()
    full = exhaustive_search(judge, frequencies, keep=1)
    exhaustive_s = time.perf_counter() - started
    judge_bb = LeafJudge(problem, Evaluator(problem), references)
    top, stats = TopTrees(1), SearchStats()
    started = time.perf_counter()
    search = BranchAndBound(judge_bb, top, None, stats)
    for hz in frequencies:
        search.run(hz)
    bb_s = time.perf_counter() - started
    same = bool(full.items) and bool(top.items) and full.items[0].key == top.items[0].key
    if verbose:
        print(
            f"\nexhaustive enumeration vs branch and bound on the {count}-consumer list ({len(problem.classes)} classes), "
            f"main reference at 25 or 27 MHz, each search with its own block-check cache:"
        )
        print(f"  exhaustive: {groupings} groupings judged in {exhaustive_s:.2f} s; branch and bound: {stats.leaves} judged in "
              f"{bb_s:.2f} s; ratio {exhaustive_s / bb_s:.1f}x; same best tree: {same}")
    return [Row("synthesis", f"branch and bound, {count}-consumer list", bb_s, "s", exhaustive_s,
                f"exhaustive, {groupings:,} groupings", f"{stats.leaves} groupings judged; same best tree: {same}")]


FULL = {"sizes": [10, 20, 40], "exhaustive": 10}
QUICK = {"sizes": [4], "exhaustive": 4}


def rows(quick: bool = False) -> list[Row]:
    """The ``synthesis`` benchmark's rows."""
    chosen = QUICK if quick else FULL
    return run_sizes(chosen["sizes"], verbose=False) + run_exhaustive(chosen["exhaustive"], verbose=False)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="4 consumers; exhaustive baseline on the same list")
    args = parser.parse_args()
    chosen = QUICK if args.quick else FULL
    run_sizes(chosen["sizes"])
    run_exhaustive(chosen["exhaustive"])


if __name__ == "__main__":
    main()
