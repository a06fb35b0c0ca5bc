"""Atomic writes: an interrupted write leaves the old file intact and no temporary behind."""

from pathlib import Path

import pytest

from clockplan.errors import ClockplanError
from clockplan.fileio import atomic_write_text, refuse_overwrite


def test_atomic_write_replaces_content(tmp_path: Path):
    target = tmp_path / "out.txt"
    target.write_text("old")
    atomic_write_text(target, "new")
    assert target.read_text() == "new"
    assert [p.name for p in tmp_path.iterdir()] == ["out.txt"]


def test_interrupted_write_keeps_the_old_file(tmp_path: Path, monkeypatch):
    target = tmp_path / "out.txt"
    target.write_text("old")

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr("clockplan.fileio.os.replace", interrupted)
    with pytest.raises(KeyboardInterrupt):
        atomic_write_text(target, "new")
    assert target.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["out.txt"]


def test_disk_full_is_a_clear_error(tmp_path: Path, monkeypatch):
    target = tmp_path / "out.txt"
    target.write_text("old")

    def full(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr("clockplan.fileio.os.fsync", full)
    with pytest.raises(ClockplanError, match="No space left"):
        atomic_write_text(target, "new")
    assert target.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["out.txt"]


def test_input_is_protected(tmp_path: Path):
    board = tmp_path / "board.toml"
    with pytest.raises(ClockplanError, match="--in-place"):
        refuse_overwrite(board, protected=[board])
    refuse_overwrite(board, protected=[board], allow=True)


def test_new_file_gets_the_usual_mode(tmp_path: Path):
    # An ordinary open() creates 0666 less the umask (POSIX open(2)); an atomic write must match it.
    import os

    ordinary = tmp_path / "ordinary.txt"
    ordinary.write_text("x")
    atomic = tmp_path / "atomic.txt"
    atomic_write_text(atomic, "x")
    assert os.stat(atomic).st_mode & 0o777 == os.stat(ordinary).st_mode & 0o777


def test_bytes_round_trip(tmp_path: Path):
    from clockplan.fileio import atomic_write_bytes

    target = tmp_path / "plot.png"
    atomic_write_bytes(target, b"\x89PNG\r\n")
    assert target.read_bytes() == b"\x89PNG\r\n"
