"""The benchmark suite runs: ``python -m bench --quick`` prints one table with a row of every benchmark.

Only that the suite runs and reports each benchmark is checked; the figures are
speeds, and no test here asserts a speed (the figures go in docs/benchmarks.md).
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest

from bench.run import BENCHMARKS, main

ROOT = Path(__file__).resolve().parents[1]


def test_quick_suite_prints_a_row_of_every_benchmark():
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    done = subprocess.run([sys.executable, "-m", "bench", "--quick"], cwd=ROOT, env=env,
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr[-3000:]
    lines = done.stdout.splitlines()
    header = next(i for i, line in enumerate(lines) if line.startswith("benchmark"))
    assert lines[header].split() == ["benchmark", "figure", "unit", "baseline", "ratio"]
    body = lines[header + 2:lines.index("", header)]
    for name in BENCHMARKS:
        assert any(line.startswith(f"{name}: ") for line in body), f"no row for {name}"


def test_only_and_json_give_the_rows_of_one_benchmark(capsys):
    assert main(["--quick", "--only", "jitter", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["context"]["benchmarks"] == ["jitter"] and doc["context"]["machine"]["cpus"] >= 1
    assert doc["rows"] and {row["benchmark"] for row in doc["rows"]} == {"jitter"}
    for row in doc["rows"]:
        assert math.isfinite(row["figure"]) and row["figure"] > 0 and row["unit"]
        if row["baseline"] is not None:
            assert row["ratio"] == row["figure"] / row["baseline"]


def test_an_unknown_benchmark_is_refused(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["--only", "nonesuch"])
    assert stop.value.code == 2 and "invalid choice" in capsys.readouterr().err
