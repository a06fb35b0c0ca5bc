"""The fuzz campaign: many generated board files through every stage and report.

Each case is a board from ``tests/strategies.py`` (valid, or mutated: dropped
keys, wrong types, absurd values, deep nesting, unicode and duplicate ids,
loops, dangling sources, empty or binary files...), run by
``tests/fuzz_harness.run_case`` through load, audit, every report, plan and
the plan reports, and every ``--cli-every``-th case also through
``clockplan.cli.main``; every ``--commands-every``-th case also runs one command
line drawn by ``tests/fuzz_commands.py`` over it (every command: ``loop``,
``plots``, ``synthesize`` with a consumer list and a mutated parts library,
``explain``, ``standards``, ``new``, ``diagram``, ``audit``, ``plan``), which
must also end within its ``--time-limit`` plus 2 s and leave its inputs
unchanged. A case must end in results or a located
``ClockplanError``; anything else is a crash. Crashes are grouped by cause,
cut down to a small reproducer (lines dropped while the same crash stays) and
saved to ``--crash-dir``.

Usage::

    python bench/fuzz.py --cases 20000 --seed 1 --jobs 2 --crash-dir fuzz-crashes

Case ``i`` of seed ``s`` is always the same input (``random.Random(s * 1000003 + i)``),
so ``--first i --cases 1`` replays it. Ctrl-C (or SIGTERM) stops the campaign
and reports the cases finished so far.
"""

from __future__ import annotations

import argparse
import collections
import multiprocessing
import os
import random
import signal
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tests.fuzz_commands import command_case  # noqa: E402
from tests.fuzz_harness import FuzzCrash, crash_signature, run_case, run_cli_case, run_command_case  # noqa: E402
from tests.strategies import RandomPicker, generate_case  # noqa: E402

_CLI_ARGS = (["audit", "--json"], ["plan", "--time-limit", "0.3"], ["audit", "--format", "markdown"],
             ["diagram"], ["explain", "load0"], ["plan", "--format", "csv", "--time-limit", "0.3", "--alternatives", "2"])


def _case_seed(seed: int, index: int) -> int:
    return seed * 1_000_003 + index


def _run_one(job: tuple[int, int, dict]) -> tuple[int, str, tuple[str, str] | None, float, str | None]:
    """Worker: run case ``index``; return (index, mutation, outcome, seconds, crash signature)."""
    seed, index, options = job
    case = generate_case(RandomPicker(random.Random(_case_seed(seed, index))))
    started = time.monotonic()
    try:
        outcome = run_case(case.data, time_limit_s=options["time_limit"], hang_s=options["hang"],
                           samples=50 if index % 7 == 0 else 0, full_html=index % options["html_every"] == 0)
        result = (outcome.label, outcome.stage)
        if options["cli_every"] and index % options["cli_every"] == 0:
            args = _CLI_ARGS[(index // options["cli_every"]) % len(_CLI_ARGS)]
            status, _, _ = run_cli_case(case.data, list(args), hang_s=options["hang"])
            result = (f"{result[0]}; cli exit {status}", result[1])
        if options.get("commands_every") and index % options["commands_every"] == 0:
            command = command_case(RandomPicker(random.Random(_case_seed(seed, index) ^ 0x5A5A)), case.data)
            try:
                status, _, _ = run_command_case(command, hang_s=options["hang"])
            except FuzzCrash as crash:  # the saved reproducer is the board: say which command line failed on it
                crash.detail = f"command line: clockplan {' '.join(command.args)}\n{crash.detail}"
                raise
            result = (f"{result[0]}; {command.command} exit {status}", result[1])
        return index, case.mutation, result, time.monotonic() - started, None
    except FuzzCrash as crash:
        return index, case.mutation, None, time.monotonic() - started, crash_signature(crash) + "\n" + crash.detail


def _interrupt(signum, frame) -> None:  # noqa: ANN001 - signal handler signature
    raise KeyboardInterrupt


def _limit_memory(gigabytes: float) -> None:
    signal.signal(signal.SIGTERM, signal.SIG_DFL)  # workers end when the pool ends them
    try:
        import resource

        limit = int(gigabytes * 1024**3)
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    except (ImportError, ValueError, OSError):
        pass


def _same_crash(data: bytes, signature: str, options: dict) -> bool:
    full_html = "html" in signature.split(":")[0]
    try:
        run_case(data, time_limit_s=options["time_limit"], hang_s=min(options["hang"], 20.0), full_html=full_html)
    except FuzzCrash as crash:
        return crash_signature(crash).split(":")[0] == signature.split(":")[0]
    return False


def reduce_case(data: bytes, signature: str, options: dict, budget: int = 60) -> bytes:
    """Drop chunks of lines while the same kind of crash in the same stage stays (a small delta debugging)."""
    lines = data.split(b"\n")
    chunk = max(1, len(lines) // 2)
    tries = 0
    while chunk >= 1 and tries < budget:
        start, changed = 0, False
        while start < len(lines) and tries < budget:
            candidate = lines[:start] + lines[start + chunk :]
            tries += 1
            if candidate and _same_crash(b"\n".join(candidate), signature, options):
                lines, changed = candidate, True
            else:
                start += chunk
        if not changed:
            chunk //= 2
    return b"\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--cases", type=int, default=2000, help="number of cases (default 2000)")
    parser.add_argument("--seed", type=int, default=1, help="campaign seed (default 1)")
    parser.add_argument("--first", type=int, default=0, help="index of the first case (default 0)")
    parser.add_argument("--jobs", type=int, default=max(1, (os.cpu_count() or 1)), help="worker processes")
    parser.add_argument("--crash-dir", default="fuzz-crashes", help="folder for the reduced reproducers")
    parser.add_argument("--time-limit", type=float, default=0.3, help="the planner's time limit per case (s)")
    parser.add_argument("--hang", type=float, default=60.0, help="a case running longer than this is a hang (s)")
    parser.add_argument("--cli-every", type=int, default=10, help="also run every N-th case through the CLI (0: never)")
    parser.add_argument("--commands-every", type=int, default=1,
                        help="also run one drawn command line (tests/fuzz_commands.py) every N-th case (0: never)")
    parser.add_argument("--html-every", type=int, default=10, help="draw the HTML report's plots every N-th case")
    parser.add_argument("--memory-gb", type=float, default=3.0, help="address-space limit per worker")
    parser.add_argument("--no-reduce", action="store_true", help="save crashes as found, without cutting them down")
    args = parser.parse_args(argv)
    sys.stdout.reconfigure(line_buffering=True)
    options = {"time_limit": args.time_limit, "hang": args.hang, "cli_every": args.cli_every, "html_every": args.html_every,
               "commands_every": args.commands_every}

    started = time.monotonic()
    outcomes: collections.Counter[tuple[str, str]] = collections.Counter()
    mutations: collections.Counter[str] = collections.Counter()
    commands: collections.Counter[str] = collections.Counter()
    crashes: dict[str, list[int]] = {}
    details: dict[str, str] = {}
    slowest: list[tuple[float, int]] = []
    jobs = [(args.seed, index, options) for index in range(args.first, args.first + args.cases)]
    done = 0
    # Started in the background, a process ignores SIGINT: let SIGTERM stop the campaign the same way.
    signal.signal(signal.SIGTERM, _interrupt)
    pool = multiprocessing.Pool(args.jobs, initializer=_limit_memory, initargs=(args.memory_gb,), maxtasksperchild=200)
    try:
        for index, mutation, outcome, seconds, crash in pool.imap_unordered(_run_one, jobs, chunksize=4):
            done += 1
            mutations[mutation] += 1
            slowest = sorted(slowest + [(seconds, index)])[-5:]
            if crash is None:
                label, stage = outcome
                outcomes[(label.split(";")[0], stage)] += 1
                for run in label.split(";")[1:]:  # "cli exit 2", "synthesize exit 3": the command lines run
                    commands[run.strip()] += 1
            else:
                signature, _, detail = crash.partition("\n")
                if signature not in crashes:
                    print(f"  new crash at case #{index} ({mutation}): {signature[:200]}", flush=True)
                crashes.setdefault(signature, []).append(index)
                details.setdefault(signature, detail)
                outcomes[("CRASH", signature.split(":")[0])] += 1
            if done % 500 == 0:
                print(f"  {done} cases, {len(crashes)} distinct crashes, {time.monotonic() - started:.0f} s; outcomes so far: "
                      + ", ".join(f"{label}@{stage} {count}" for (label, stage), count in outcomes.most_common()), flush=True)
    except KeyboardInterrupt:  # Ctrl-C (or kill -INT): stop and report the cases finished so far
        print("  interrupted: reporting the cases finished so far", flush=True)
    finally:
        pool.terminate()
        pool.join()
    elapsed = time.monotonic() - started

    print(f"cases run: {done} of {args.cases} (seed {args.seed}, from #{args.first}) in {elapsed:.0f} s, "
          f"{done / elapsed:.1f} cases/s on {args.jobs} workers")
    print("inputs by mutation:")
    for name, count in sorted(mutations.items()):
        print(f"  {name:16} {count}")
    print("outcomes (result or error class, stage that ended the case):")
    for (label, stage), count in sorted(outcomes.items(), key=lambda kv: -kv[1]):
        print(f"  {count:7}  {label:18} {stage}")
    print("command lines run (command, exit status), crashes aside:")
    for name, count in sorted(commands.items()):
        print(f"  {count:7}  {name}")
    print("slowest cases: " + ", ".join(f"#{index} {seconds:.1f} s" for seconds, index in reversed(slowest)))
    print(f"distinct crashes: {len(crashes)}")
    if crashes:
        folder = Path(args.crash_dir)
        folder.mkdir(parents=True, exist_ok=True)
        for number, (signature, indices) in enumerate(sorted(crashes.items()), 1):
            case = generate_case(RandomPicker(random.Random(_case_seed(args.seed, indices[0]))))
            # A hang takes the alarm's time per try: saved as found rather than cut down.
            data = case.data if args.no_reduce or signature.startswith("hang") else reduce_case(case.data, signature, options)
            path = folder / f"crash-{number:03d}.toml"
            path.write_bytes(data)
            (folder / f"crash-{number:03d}.txt").write_text(
                f"{signature}\ncases: {indices[:20]} (seed {args.seed}), mutation {case.mutation}\n\n{details[signature]}\n")
            print(f"  {path} ({len(indices)} cases, first #{indices[0]}): {signature[:160]}")
    return 1 if crashes else 0


if __name__ == "__main__":
    sys.exit(main())
