"""The file-system fuzz campaign: every writing command against generated path and special-file hazards.

Each case (``tests/file_strategies.py``) runs one writing command in a fresh
folder with an output hazard (names at and over the limit, a path over the
limit, a NUL byte, a missing folder, a FIFO, a device node, a link to the
board, the board itself, a folder) and a board hazard (byte-order mark, CRLF,
a FIFO, a NUL byte), and checks the promises of docs/files-and-time-limits.md.

Usage::

    python bench/fuzz_files.py --cases 2000 --seed 1

Case ``i`` of seed ``s`` is always the same (``random.Random(s * 1000003 + i)``).
"""

from __future__ import annotations

import argparse
import collections
import random
import signal
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tests.file_strategies import generate_file_case, run_file_case  # noqa: E402


class _Hang(Exception):
    """A case that ran past --hang seconds (a blocked open of a FIFO, say)."""


def _hung(signum, frame) -> None:  # noqa: ARG001 - signal handler signature
    raise _Hang("no answer within the hang limit")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--cases", type=int, default=500)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--first", type=int, default=0)
    parser.add_argument("--hang", type=float, default=30.0, help="a case running longer is a hang (s)")
    args = parser.parse_args(argv)
    signal.signal(signal.SIGALRM, _hung)
    statuses: collections.Counter = collections.Counter()
    failures = []
    started = time.monotonic()
    for index in range(args.first, args.first + args.cases):
        case = generate_file_case(random.Random(args.seed * 1_000_003 + index))
        with tempfile.TemporaryDirectory() as folder:
            signal.setitimer(signal.ITIMER_REAL, args.hang)
            try:
                status, _ = run_file_case(case, Path(folder))
                statuses[status] += 1
            except (AssertionError, _Hang) as err:
                failures.append((index, case, f"{type(err).__name__}: {err}"[:300]))
            except Exception as err:  # noqa: BLE001 - an exception escaping main() is a broken promise too
                failures.append((index, case, f"{type(err).__name__}: {err}"[:300]))
            finally:
                signal.setitimer(signal.ITIMER_REAL, 0)
    seconds = time.monotonic() - started
    print(f"{args.cases} file cases in {seconds:.1f} s; exit statuses {dict(sorted(statuses.items()))}; "
          f"{len(failures)} broken promises")
    kinds = collections.Counter((case.command, case.output, case.board) for _, case, _ in failures)
    print(f"  distinct (command, output, board) among them: {len(kinds)}")
    for index, case, why in failures[:20]:
        print(f"  case {index}: {case}: {why}")
    return 1 if failures else 0


if __name__ == "__main__":
    raise SystemExit(main())
