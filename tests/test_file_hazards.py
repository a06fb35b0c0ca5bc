"""Files the file system makes hard: issue 15, classes 3 to 7.

3. ``plan --write``/``--in-place`` writes from the bytes it loaded and planned
   (byte-order mark and line endings kept) and refuses a board changed on disk.
4. Paths no file system takes (NUL byte, names over NAME_MAX, paths over
   PATH_MAX) are located errors, and outputs are checked before the work.
5. Special files: a device or FIFO output is written in place, never replaced;
   ``/dev/stdout`` appended to a log appends; a FIFO input is refused at once.
6. ``plots`` goes through the same input guard as every writing command.
7. SIGTERM and SIGINT leave no temporary file; exit 143 and 130.

Sources for the facts checked: the UTF-8 byte-order mark is EF BB BF (The
Unicode Standard, section 23.8 "Specials", and RFC 3629 section 6); TOML
allows LF and CRLF line endings (TOML v1.0.0, "Spec"); NAME_MAX and PATH_MAX
are the POSIX limits read with pathconf (POSIX.1-2017, <limits.h> and
fpathconf); O_APPEND writes at the end of the file (POSIX.1-2017, open());
exit status 128 + signal number is the shell's convention (POSIX Shell Command
Language, 2.8.2), SIGINT 2 and SIGTERM 15 (POSIX <signal.h>, XSI values).
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import stat
import subprocess
import sys
import threading
import time
import tomllib
from pathlib import Path

import pytest

from clockplan.boardfile import load_board
from clockplan.cli import main

ROOT = Path(__file__).resolve().parents[1]
BOARDS = ROOT / "boards"
BOM = b"\xef\xbb\xbf"


def _board(tmp_path: Path, data: bytes | None = None, name: str = "board.toml") -> Path:
    board = tmp_path / name
    board.write_bytes((BOARDS / "edge-router.toml").read_bytes() if data is None else data)
    return board


def _temporaries(folder: Path) -> list[str]:
    return [p.name for p in folder.iterdir() if p.name.endswith(".tmp")]


# --------------------------------------------------------------------------- 3. the write path


@pytest.mark.parametrize("newline", [b"\n", b"\r\n"])
@pytest.mark.parametrize("bom", [b"", BOM])
def test_plan_write_keeps_the_bom_and_the_line_endings(bom, newline, tmp_path, capsys):
    plain = (BOARDS / "edge-router.toml").read_bytes()
    board = _board(tmp_path, bom + plain.replace(b"\n", newline))
    out = tmp_path / "planned.toml"
    status = main(["plan", str(board), "--write", str(out), "--json"])
    err = capsys.readouterr().err
    assert status in (0, 1), err
    written = out.read_bytes()
    assert written.startswith(bom) and written[len(bom):len(bom) + 3] != BOM
    body = written[len(bom):]
    if newline == b"\r\n":
        assert body.count(b"\n") == body.count(b"\r\n") > 0
    else:
        assert b"\r" not in body
    # Round trip through the standard library's TOML reader: the same board, plus settings.
    before = tomllib.loads(plain.decode("utf-8"))
    after = tomllib.loads(body.decode("utf-8"))
    for section in ("pll", "divider"):
        for entry in after.get(section, []):
            entry.pop("settings", None)
        for entry in before.get(section, []):
            entry.pop("settings", None)
    assert after == before
    for line in plain.decode("utf-8").splitlines():  # every comment is kept
        if line.lstrip().startswith("#"):
            assert line in body.decode("utf-8")
    assert load_board(out).given_settings().plls  # the settings are there and load


def _change_during_planning(monkeypatch, board: Path, how: str) -> None:
    from clockplan.plan import board_planner

    real = board_planner.plan_board

    def planning_while_edited(*args, **kwargs):
        result = real(*args, **kwargs)
        if how == "edit":
            board.write_bytes(board.read_bytes() + b"\n# an edit made during the run\n")
        else:
            board.unlink()
        return result

    monkeypatch.setattr(board_planner, "plan_board", planning_while_edited)


@pytest.mark.parametrize("how", ["edit", "delete"])
@pytest.mark.parametrize("mode", ["--write", "--in-place"])
def test_a_board_changed_during_the_run_is_not_written(how, mode, tmp_path, monkeypatch, capsys):
    board = _board(tmp_path)
    out = tmp_path / "planned.toml"
    _change_during_planning(monkeypatch, board, how)
    args = ["plan", str(board), "--no-color", "--write", str(out)] if mode == "--write" else \
        ["plan", str(board), "--no-color", "--in-place"]
    status = main(args)
    err = capsys.readouterr().err
    assert status == 2, err
    assert "changed" in err and "Traceback" not in err and "internal error" not in err
    assert not out.exists()
    if how == "edit":  # the user's edit is still there, no settings were written into it
        assert board.read_bytes().endswith(b"# an edit made during the run\n")
    assert _temporaries(tmp_path) == []


# --------------------------------------------------------------------------- 4. paths


def _name_max(folder: Path) -> int:
    return os.pathconf(folder, "PC_NAME_MAX")


@pytest.mark.parametrize("command", ["audit", "plan --write", "new", "plan"])
def test_output_names_over_the_limit_are_located_errors_before_the_work(command, tmp_path, monkeypatch, capsys):
    board = _board(tmp_path)
    long_name = str(tmp_path / ("x" * (_name_max(tmp_path) + 1) + ".json"))
    monkeypatch.setattr("clockplan.analysis.analyze", _no_work)
    args = {"audit": ["audit", str(board), "--output", long_name],
            "plan": ["plan", str(board), "--output", long_name],
            "plan --write": ["plan", str(board), "--write", long_name],
            "new": ["new", long_name]}[command]
    status = main(args)
    err = capsys.readouterr().err
    assert status == 2, err
    assert "longer than" in err and "limit" in err and "internal error" not in err


def _no_work(*args, **kwargs):
    raise AssertionError("the work started before the outputs were checked")


def test_a_legal_name_too_long_for_the_temporary_suffix_is_written(tmp_path, capsys):
    board = _board(tmp_path)
    out = tmp_path / ("r" * (_name_max(tmp_path) - 5) + ".json")
    assert len(out.name) == _name_max(tmp_path)
    assert main(["audit", str(board), "--output", str(out)]) in (0, 1), capsys.readouterr().err
    json.loads(out.read_text(encoding="utf-8"))
    assert _temporaries(tmp_path) == []


@pytest.mark.parametrize("where", ["board", "library", "output"])
def test_nul_bytes_and_huge_paths_are_located_errors(where, tmp_path, capsys):
    board = _board(tmp_path)
    consumers = tmp_path / "list.toml"
    shutil.copyfile(BOARDS / "synthesis" / os.listdir(BOARDS / "synthesis")[0], consumers)
    for bad in (str(tmp_path / "a\x00b.toml"), "a/" * 2250 + "b.toml"):
        args = {"board": ["audit", bad],
                "library": ["synthesize", str(consumers), "--library", bad],
                "output": ["audit", str(board), "--output", bad]}[where]
        status = main(args)
        err = capsys.readouterr().err
        assert status == 2, err
        assert "internal error" not in err and "Traceback" not in err
        assert "NUL" in err or "longer than" in err


@pytest.mark.parametrize("command", ["audit", "explain", "diagram", "plan", "plan --write", "synthesize", "new"])
def test_a_missing_output_folder_is_refused_before_the_work(command, tmp_path, monkeypatch, capsys):
    board = _board(tmp_path)
    consumers = tmp_path / "list.toml"
    shutil.copyfile(BOARDS / "synthesis" / sorted(os.listdir(BOARDS / "synthesis"))[0], consumers)
    missing = str(tmp_path / "no-such-folder" / "out")
    monkeypatch.setattr("clockplan.analysis.analyze", _no_work)
    import importlib

    monkeypatch.setattr(importlib.import_module("clockplan.synth.synthesize"), "synthesize", _no_work)
    args = {"audit": ["audit", str(board), "-o", missing + ".json"],
            "explain": ["explain", str(board), "sfp_a", "-o", missing + ".md"],
            "diagram": ["diagram", str(board), "-o", missing + ".dot"],
            "plan": ["plan", str(board), "-o", missing + ".json"],
            "plan --write": ["plan", str(board), "--write", missing + ".toml"],
            "synthesize": ["synthesize", str(consumers), "--write", missing + ".toml"],
            "new": ["new", missing + ".toml"]}[command]
    started = time.monotonic()
    status = main(args)
    err = capsys.readouterr().err
    assert status == 2, err
    assert "does not exist" in err and "no-such-folder" in err
    assert time.monotonic() - started < 5


# --------------------------------------------------------------------------- 5. special files


def _fifo_reader(path: Path, sink: list[bytes]) -> threading.Thread:
    def read() -> None:
        with open(path, "rb") as stream:
            sink.append(stream.read())

    thread = threading.Thread(target=read, daemon=True)
    thread.start()
    return thread


def test_output_onto_a_fifo_writes_into_it(tmp_path, capsys):
    board = _board(tmp_path)
    fifo = tmp_path / "pipe.json"
    os.mkfifo(fifo)
    got: list[bytes] = []
    reader = _fifo_reader(fifo, got)
    assert main(["audit", str(board), "--format", "json", "--output", str(fifo)]) in (0, 1), capsys.readouterr().err
    reader.join(10)
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)  # still a FIFO, not replaced by a file
    assert json.loads(got[0])["board"]
    assert _temporaries(tmp_path) == []


def test_output_onto_a_device_node_writes_into_it(tmp_path, capsys):
    board = _board(tmp_path)
    node = tmp_path / "null"
    try:  # a private copy of the null device (major 1, minor 3 on Linux: Documentation/admin-guide/devices.txt)
        os.mknod(node, stat.S_IFCHR | 0o666, os.makedev(1, 3))
    except (PermissionError, AttributeError, OSError):
        pytest.skip("creating a device node needs root")
    assert main(["audit", str(board), "--format", "json", "--output", str(node)]) in (0, 1), capsys.readouterr().err
    assert stat.S_ISCHR(os.lstat(node).st_mode)
    assert _temporaries(tmp_path) == []


def test_output_to_dev_stdout_appended_to_a_log_keeps_the_log(tmp_path):
    board = _board(tmp_path)
    log = tmp_path / "ci.log"
    log.write_bytes(b"earlier lines of the log\n")
    with open(log, "ab") as stream:
        done = subprocess.run([sys.executable, "-m", "clockplan", "audit", str(board), "--format", "json",
                               "--output", "/dev/stdout"], stdout=stream, stderr=subprocess.PIPE, timeout=120,
                              cwd=ROOT)
    assert done.returncode in (0, 1), done.stderr
    text = log.read_text(encoding="utf-8")
    assert text.startswith("earlier lines of the log\n")
    assert json.loads(text[len("earlier lines of the log\n"):])["board"]


@pytest.mark.parametrize("which", ["board", "library"])
def test_a_fifo_input_is_refused_not_waited_on(which, tmp_path):
    fifo = tmp_path / "input.toml"
    os.mkfifo(fifo)
    consumers = tmp_path / "list.toml"
    shutil.copyfile(BOARDS / "synthesis" / sorted(os.listdir(BOARDS / "synthesis"))[0], consumers)
    args = ["audit", str(fifo)] if which == "board" else ["synthesize", str(consumers), "--library", str(fifo)]
    done = subprocess.run([sys.executable, "-m", "clockplan", *args], capture_output=True, text=True,
                          timeout=60, cwd=ROOT)
    assert done.returncode == 2, done.stderr
    assert "not a regular file" in done.stderr and str(fifo) in done.stderr


# --------------------------------------------------------------------------- 6. plots


def test_plots_never_write_over_the_board(tmp_path, monkeypatch, capsys):
    monkeypatch.setattr("clockplan.report.plots.plot_images", lambda data: {"phase-noise.png": b"\x89PNG new"})
    named = tmp_path / "phase-noise.png"  # a board named like one of the images
    shutil.copyfile(BOARDS / "sampling-receiver.toml", named)
    original = named.read_bytes()
    status = main(["plots", str(named), "--output-dir", str(tmp_path)])
    assert status == 2 and "refusing to overwrite the input file" in capsys.readouterr().err
    assert named.read_bytes() == original
    out = tmp_path / "out"
    out.mkdir()
    board = _board(tmp_path, (BOARDS / "sampling-receiver.toml").read_bytes(), "receiver.toml")
    (out / "phase-noise.png").symlink_to(board)  # a link in the folder that points at the board
    status = main(["plots", str(board), "--output-dir", str(out)])
    assert status == 2 and "refusing" in capsys.readouterr().err
    assert board.read_bytes() == (BOARDS / "sampling-receiver.toml").read_bytes()


# --------------------------------------------------------------------------- 7. interrupts

_SLOW_WRITE = """
import os, sys, time
import clockplan.fileio as fileio
real = os.fsync
def slow_fsync(fd):
    open(sys.argv[1], "w").close()   # tell the test the temporary file exists
    time.sleep(1.5)
    real(fd)
fileio.os.fsync = slow_fsync
from clockplan.cli import main
raise SystemExit(main(sys.argv[2:]))
"""


@pytest.mark.parametrize("signum, status", [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_a_signal_during_the_write_leaves_no_temporary_file(signum, status, tmp_path):
    board = _board(tmp_path)
    out = tmp_path / "out"
    out.mkdir()
    target = out / "report.json"
    target.write_bytes(b"old report\n")
    marker = tmp_path / "writing"
    child = subprocess.Popen([sys.executable, "-c", _SLOW_WRITE, str(marker), "audit", str(board), "--format",
                              "json", "--output", str(target)], cwd=ROOT, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 60
        while not marker.exists() and time.monotonic() < deadline and child.poll() is None:
            time.sleep(0.01)
        assert marker.exists(), "the write never started"
        child.send_signal(signum)
        _, err = child.communicate(timeout=30)
    finally:
        if child.poll() is None:
            child.kill()
            child.communicate(timeout=5)
    assert child.returncode == status, err
    assert "Traceback" not in err
    assert _temporaries(out) == []
    content = target.read_bytes()  # whole: the old bytes or the whole new report
    assert content == b"old report\n" or json.loads(content)["board"]


def test_ctrl_c_while_the_argument_parser_is_built_is_not_a_traceback(monkeypatch, capsys):
    def interrupted():
        raise KeyboardInterrupt

    monkeypatch.setattr("clockplan.cli._build_parser", interrupted)
    assert main(["audit", "x.toml"]) == 130
    err = capsys.readouterr().err
    assert "interrupted" in err and "Traceback" not in err


def test_sigterm_at_random_moments_never_leaves_a_temporary_file(tmp_path):
    """Signals at spread-out moments of a whole `plan --write` run (start-up, planning, writing)."""
    board = _board(tmp_path)
    out = tmp_path / "planned.toml"
    for delay in (0.0, 0.05, 0.15, 0.3, 0.6, 1.0):
        child = subprocess.Popen([sys.executable, "-m", "clockplan", "plan", str(board), "--write", str(out),
                                  "--json"], cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        time.sleep(delay)
        child.send_signal(signal.SIGTERM)
        try:
            _, err = child.communicate(timeout=30)
        finally:
            if child.poll() is None:
                child.kill()
                child.communicate(timeout=5)
        # -15: killed by the default action before clockplan's own handler was installed (start-up).
        assert child.returncode in (0, 1, 143, -signal.SIGTERM), err
        assert "Traceback" not in err
        assert _temporaries(tmp_path) == []
        if out.exists():
            assert load_board(out).given_settings().plls
            out.unlink()


# --------------------------------------------------------------------------- the campaign's generator


@pytest.mark.parametrize("output", ["name-over-limit", "nul", "missing-folder", "fifo", "link-to-board", "name-at-limit"])
@pytest.mark.parametrize("command", ["audit --output", "plan --write", "plan --in-place", "plots", "new",
                                     "synthesize --write", "diagram --output"])
def test_every_writing_command_keeps_the_file_promises(command, output, tmp_path, monkeypatch):
    """The fuzz campaign's file cases (tests/file_strategies.py), one per command and hazard."""
    from tests.file_strategies import FileCase, run_file_case

    monkeypatch.setattr("clockplan.report.plots.plot_images", lambda data: {"phase-noise.png": b"\x89PNG new"})
    status, err = run_file_case(FileCase(command, output, "bom-crlf"), tmp_path)
    if output in ("name-over-limit", "nul", "missing-folder") and command not in ("plan --in-place", "plots"):
        assert status == 2, err
