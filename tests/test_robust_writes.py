"""No lost or altered files: every file the command line writes survives Ctrl-C and a full disk.

Each writing command runs for real; the failure is injected inside clockplan's
own write (the stream write, the fsync, or the final rename/link), as the
operating system would raise it: ENOSPC is POSIX's "No space left on device"
(errno.h), and Ctrl-C reaches Python as KeyboardInterrupt (Python library
reference, "signal" module). Exit status 130 for an interrupt is 128 + SIGINT,
the shell convention (POSIX Shell Command Language, 2.8.2 "Exit Status for
Commands"; SIGINT is 2).
"""

from __future__ import annotations

import errno
import os
import shutil
from pathlib import Path

import pytest

from clockplan.cli import main

BOARDS = Path(__file__).resolve().parents[1] / "boards"
OLD = b"old bytes the user keeps\n"
# A small consumer list that synthesizes in well under a second (see tests/test_synth_cli.py).
SMALL_LIST = (
    '[board]\nname = "robust writes"\ntemperature = ["0 C", "50 C"]\nlifetime = "5 years"\n'
    '[synthesis]\nreference_frequencies = ["25 MHz"]\nallow = ["xo", "tcxo", "int-synth-4", "fanout-2", "divider"]\n'
    '[[consumer]]\nid = "phy"\nfrequency = "125 MHz"\nstandard = "1000BASE-X"\n'
    '[[consumer]]\nid = "ssd"\nfrequency = "100 MHz"\nstandard = "PCIe Gen3"\n'
)


def _board_copy(folder: Path, name: str = "edge-router.toml") -> Path:
    copy = folder / "board.toml"
    shutil.copyfile(BOARDS / name, copy)
    return copy


def _writers(tmp: Path) -> dict[str, tuple[list[str], Path]]:
    """Every command that writes a file: (arguments, the file it writes), inputs copied into ``tmp``."""
    board = _board_copy(tmp)
    consumers = tmp / "list.toml"
    consumers.write_text(SMALL_LIST, encoding="utf-8")
    receiver = tmp / "receiver.toml"
    shutil.copyfile(BOARDS / "sampling-receiver.toml", receiver)
    out = tmp / "out"
    return {
        "audit --output": (["audit", str(board), "--output", str(out) + ".json"], Path(str(out) + ".json")),
        "explain --output": (["explain", str(board), "sfp_a", "--format", "markdown", "--output", str(out) + ".md"],
                             Path(str(out) + ".md")),
        "diagram --output": (["diagram", str(board), "--output", str(out) + ".dot"], Path(str(out) + ".dot")),
        "plan --output": (["plan", str(board), "--output", str(out) + ".json"], Path(str(out) + ".json")),
        "plan --write": (["plan", str(board), "--write", str(out) + ".toml"], Path(str(out) + ".toml")),
        "plan --in-place": (["plan", str(board), "--in-place"], board),
        "synthesize --write": (["synthesize", str(consumers), "--write", str(out) + ".toml"], Path(str(out) + ".toml")),
        "plots": (["plots", str(receiver), "--output-dir", str(tmp)], tmp / "phase-noise.png"),
        "new": (["new", str(out) + ".toml"], Path(str(out) + ".toml")),
    }


WRITERS = ["audit --output", "explain --output", "diagram --output", "plan --output", "plan --write",
           "plan --in-place", "synthesize --write", "plots", "new"]


def _prepare(tmp_path: Path, name: str, monkeypatch) -> tuple[list[str], Path, bytes | None, dict[str, bytes]]:
    args, target = _writers(tmp_path)[name]
    if name == "plots":  # drawing is tested in test_report_plots.py; here only its writing matters (and speed)
        monkeypatch.setattr("clockplan.report.plots.plot_images", lambda data: {"phase-noise.png": b"\x89PNG new\r\n"})
    if name != "new":  # `new` never writes over a file: there is no old one to keep
        if target.exists():
            old = target.read_bytes()
        else:
            target.write_bytes(OLD)
            old = OLD
    else:
        old = None
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    return [*args, "--no-color"] if name not in ("diagram --output", "plots", "new") else args, target, old, before


class _FullDisk:
    """A file object whose write fails as a full disk does (ENOSPC), like a real stream would."""

    def __init__(self, stream):
        self._stream = stream

    def write(self, data):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    def __getattr__(self, name):
        return getattr(self._stream, name)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self._stream.close()
        return False


def _unchanged(tmp_path: Path, before: dict[str, bytes]) -> None:
    """Same files, same bytes: the old file is intact and no temporary file is left behind."""
    after = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    assert sorted(after) == sorted(before)
    assert after == before


@pytest.mark.parametrize("name", WRITERS)
def test_full_disk_keeps_the_old_file_and_says_so_in_one_message(name, tmp_path, monkeypatch, capsys):
    args, target, old, before = _prepare(tmp_path, name, monkeypatch)
    real_fdopen = os.fdopen
    monkeypatch.setattr("clockplan.fileio.os.fdopen", lambda *a, **k: _FullDisk(real_fdopen(*a, **k)))
    status = main(args)
    err = capsys.readouterr().err
    assert status == 2, err
    assert "Traceback" not in err
    first = err.strip().splitlines()[0]
    assert first.startswith("clockplan: error: ") and str(target) in first and "No space left on device" in first
    _unchanged(tmp_path, before)
    if old is not None:
        assert target.read_bytes() == old


@pytest.mark.parametrize("where", ["write", "fsync", "commit"])
@pytest.mark.parametrize("name", WRITERS)
def test_ctrl_c_during_the_write_keeps_the_old_file_and_exits_130(name, where, tmp_path, monkeypatch, capsys):
    args, target, old, before = _prepare(tmp_path, name, monkeypatch)

    def interrupt(*a, **k):
        raise KeyboardInterrupt

    if where == "write":
        real_fdopen = os.fdopen

        class Interrupted(_FullDisk):
            def write(self, data):
                raise KeyboardInterrupt

        monkeypatch.setattr("clockplan.fileio.os.fdopen", lambda *a, **k: Interrupted(real_fdopen(*a, **k)))
    elif where == "fsync":
        monkeypatch.setattr("clockplan.fileio.os.fsync", interrupt)
    else:  # the final step: a rename over the old file, or a link for a file that must be new
        monkeypatch.setattr("clockplan.fileio.os.replace", interrupt)
        monkeypatch.setattr("clockplan.fileio.os.link", interrupt)
    assert main(args) == 130
    err = capsys.readouterr().err
    assert "interrupted" in err and "Traceback" not in err and len(err.strip().splitlines()) == 1
    _unchanged(tmp_path, before)
    if old is not None:
        assert target.read_bytes() == old


def _spellings(tmp_path: Path, board: Path) -> dict[str, str]:
    """Other names of ``board``: a relative path, a detour through its folder, a symbolic and a hard link."""
    sub = tmp_path / "sub"
    sub.mkdir()
    (tmp_path / "alias.toml").symlink_to(board)
    os.link(board, tmp_path / "hard.toml")
    return {
        "dot slash": os.path.join(".", os.path.relpath(board)),
        "parent detour": str(sub / ".." / board.name),
        "symbolic link": str(tmp_path / "alias.toml"),
        "hard link": str(tmp_path / "hard.toml"),
    }


@pytest.mark.parametrize("spelling", ["dot slash", "parent detour", "symbolic link", "hard link"])
@pytest.mark.parametrize("command", ["audit --output", "explain --output", "plan --write", "plan --output", "diagram --output"])
def test_the_input_board_under_another_name_is_refused(command, spelling, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    board = _board_copy(tmp_path)
    original = board.read_bytes()
    other = _spellings(tmp_path, board)[spelling]
    verb, flag = command.split()
    extra = ["sfp_a"] if verb == "explain" else []
    status = main([verb, str(board), *extra, flag, other])
    err = capsys.readouterr().err
    assert status == 2 and "refusing to overwrite the input file" in err, err
    assert board.read_bytes() == original
    assert (tmp_path / "alias.toml").is_symlink()


def test_synthesize_refuses_to_write_over_its_library_or_its_list(tmp_path, capsys):
    consumers = tmp_path / "list.toml"
    consumers.write_text(SMALL_LIST, encoding="utf-8")
    library = tmp_path / "parts.toml"
    library.write_text("# an empty parts library\n", encoding="utf-8")
    for target in (library, consumers):
        status = main(["synthesize", str(consumers), "--library", str(library),
                       "--write", str(tmp_path / ".." / tmp_path.name / target.name)])
        assert status == 2 and "refusing" in capsys.readouterr().err
    assert library.read_text(encoding="utf-8") == "# an empty parts library\n"
    assert consumers.read_text(encoding="utf-8") == SMALL_LIST


def test_two_outputs_of_one_run_may_not_be_the_same_file(tmp_path, capsys):
    board = _board_copy(tmp_path)
    out = tmp_path / "out.toml"
    assert main(["plan", str(board), "--write", str(out), "--output", f"{tmp_path}/./out.toml"]) == 2
    assert "same file" in capsys.readouterr().err
    assert not out.exists()


def test_in_place_is_the_one_way_to_rewrite_the_board(tmp_path, capsys):
    board = _board_copy(tmp_path)
    assert main(["plan", str(board), "--in-place", "--output", str(board)]) == 2
    assert "refusing" in capsys.readouterr().err
    assert board.read_bytes() == (BOARDS / "edge-router.toml").read_bytes()
    assert main(["plan", str(board), "--in-place", "--no-color"]) == 0
    assert board.read_bytes() != (BOARDS / "edge-router.toml").read_bytes()


def test_an_output_that_is_a_symbolic_link_is_written_through(tmp_path, capsys):
    board = _board_copy(tmp_path)
    real = tmp_path / "real.json"
    real.write_bytes(OLD)
    link = tmp_path / "link.json"
    link.symlink_to(real)
    assert main(["audit", str(board), "--output", str(link)]) in (0, 1)  # 1: the demo's open settings are findings
    assert link.is_symlink() and real.read_bytes().startswith(b"{")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["board.toml", "link.json", "real.json"]


def test_a_refused_temporary_file_is_a_clear_error(tmp_path, monkeypatch, capsys):
    # A folder the user may not write into: creating the temporary file fails with EACCES (POSIX open(2)).
    # Injected, because the tests may run as root, who writes anywhere.
    board = _board_copy(tmp_path)
    real_open = os.open

    def refused(path, flags, *rest):
        if str(path).endswith(".tmp"):
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES), str(path))
        return real_open(path, flags, *rest)

    monkeypatch.setattr("clockplan.fileio.os.open", refused)
    target = tmp_path / "r.json"
    assert main(["audit", str(board), "--output", str(target)]) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err and f"cannot write {target}: Permission denied" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["board.toml"]
