"""Generated file-system cases for the fuzz campaign (issue 15, classes 3 to 6).

A case is one writing command run in a fresh folder with an output path drawn
from the hazards the file system offers: names at and over NAME_MAX, paths
over PATH_MAX, NUL bytes, missing folders, FIFOs, device nodes (as root), a
symbolic link to the board, the board's own name, a board with a byte-order
mark or CRLF line endings, a FIFO as the board. :func:`run_file_case` checks
the promises of docs/files-and-time-limits.md: exit 0 to 3 (never 4, never a
hang), no temporary file left, the board's bytes unchanged unless ``plan
--in-place`` wrote it, a FIFO or device output still one.
"""

from __future__ import annotations

import io
import os
import random
import stat
import threading
import time
from contextlib import redirect_stderr, redirect_stdout
from dataclasses import dataclass
from pathlib import Path

__all__ = ["FileCase", "generate_file_case", "run_file_case", "COMMANDS", "OUTPUTS", "BOARDS_KINDS"]

ROOT = Path(__file__).resolve().parents[1]
#: Every command that writes a file, with the flag its output takes ("" for a positional file, plots' folder).
COMMANDS = ("audit --output", "explain --output", "diagram --output", "plan --output", "plan --write",
            "plan --in-place", "synthesize --write", "plots", "new")
OUTPUTS = ("plain", "name-at-limit", "name-over-limit", "path-over-limit", "nul", "missing-folder", "fifo",
           "device", "link-to-board", "the-board", "a-folder")
BOARDS_KINDS = ("plain", "bom", "crlf", "bom-crlf", "fifo", "nul-path")


@dataclass(frozen=True)
class FileCase:
    command: str
    output: str
    board: str


def generate_file_case(rng: random.Random) -> FileCase:
    """One case: a writing command, an output hazard and a board hazard, drawn uniformly."""
    return FileCase(rng.choice(COMMANDS), rng.choice(OUTPUTS), rng.choice(BOARDS_KINDS))


def _board_bytes(kind: str, command: str) -> bytes:
    source = ROOT / "boards" / ("synthesis/consumer-list.toml" if command.startswith("synthesize")
                                else "sampling-receiver.toml" if command == "plots" else "edge-router.toml")
    data = source.read_bytes()
    if "crlf" in kind:
        data = data.replace(b"\n", b"\r\n")
    if "bom" in kind:
        data = b"\xef\xbb\xbf" + data
    return data


def _output_path(case: FileCase, folder: Path, board: Path) -> str:
    name_max = os.pathconf(folder, "PC_NAME_MAX")
    kind = case.output
    if kind == "name-at-limit":
        return str(folder / ("n" * (name_max - 5) + ".json"))
    if kind == "name-over-limit":
        return str(folder / ("n" * (name_max + 1)))
    if kind == "path-over-limit":
        return str(folder / ("d/" * 2300)) + "out.json"
    if kind == "nul":
        return str(folder / "out\x00.json")
    if kind == "missing-folder":
        return str(folder / "missing" / "out.json")
    if kind == "fifo":
        path = folder / "pipe.out"
        os.mkfifo(path)
        return str(path)
    if kind == "device":
        path = folder / "null.out"
        try:
            os.mknod(path, stat.S_IFCHR | 0o666, os.makedev(1, 3))
        except OSError:
            return str(folder / "out.json")
        return str(path)
    if kind == "link-to-board":
        (folder / "link.toml").symlink_to(board)
        return str(folder / "link.toml")
    if kind == "the-board":
        return str(board)
    if kind == "a-folder":
        (folder / "sub").mkdir()
        return str(folder / "sub")
    return str(folder / "out.json")


def _argv(case: FileCase, board: str, out: str) -> list[str]:
    verb, _, flag = case.command.partition(" ")
    if verb == "new":
        return ["new", out]
    if verb == "plots":
        return ["plots", board, "--output-dir", os.path.dirname(out) or "."]
    extra = ["sfp_a"] if verb == "explain" else []
    if flag == "--in-place":
        return ["plan", board, "--in-place", "--time-limit", "1"]
    limit = ["--time-limit", "1"] if verb in ("plan", "synthesize") else []
    return [verb, board, *extra, flag, out, *limit, *(["--format", "json"] if flag == "--output" and verb != "diagram" else [])]


def _drain(path: Path) -> threading.Thread:
    """A reader on a FIFO output so that writing into it can finish."""
    def read() -> None:
        try:
            fd = os.open(path, os.O_RDONLY)
            while os.read(fd, 65536):
                pass
            os.close(fd)
        except OSError:
            pass

    thread = threading.Thread(target=read, daemon=True)
    thread.start()
    return thread


def run_file_case(case: FileCase, folder: Path) -> tuple[int, str]:
    """Run ``case`` in the empty ``folder``; return (exit status, stderr). Raise AssertionError on a broken promise."""
    from clockplan.cli import main

    board = folder / "board.toml"
    if case.board == "fifo":
        os.mkfifo(board)
        original = None
    else:
        original = _board_bytes(case.board, case.command)
        board.write_bytes(original)
    board_arg = str(board) + ("\x00" if case.board == "nul-path" else "")
    out = _output_path(case, folder, board)
    fifo_out = case.output == "fifo"
    reader = _drain(Path(out)) if fifo_out else None
    err = io.StringIO()
    with redirect_stdout(io.StringIO()), redirect_stderr(err):
        status = main(_argv(case, board_arg, out))
    if reader is not None and reader.is_alive():  # nothing was written: open and close the FIFO to free the reader
        for _ in range(500):
            try:
                os.close(os.open(out, os.O_WRONLY | os.O_NONBLOCK))
                break
            except OSError:  # the reader has not opened its end yet
                time.sleep(0.01)
        reader.join(5)
    text = err.getvalue()
    assert status in (0, 1, 2, 3), (case, status, text)
    assert "Traceback" not in text and "internal error" not in text, (case, text)
    left = [p.name for p in folder.iterdir() if p.name.endswith(".tmp")]
    assert not left, (case, left)
    if original is not None and case.command != "plan --in-place":
        assert board.read_bytes() == original, case
    if original is not None and case.command == "plan --in-place" and status in (0, 1):
        assert board.read_bytes().startswith(original[:3] if original.startswith(b"\xef\xbb\xbf") else b""), case
    if fifo_out:
        assert stat.S_ISFIFO(os.lstat(out).st_mode), case
    if case.output == "device" and os.path.exists(folder / "null.out"):
        assert stat.S_ISCHR(os.lstat(folder / "null.out").st_mode), case
    return status, text
