"""Writing files safely: atomically, and never over a file the user did not offer.

Every file clockplan writes goes through this module. A write goes to a
temporary file in the target's own folder, is flushed to the disk, and is then
renamed over the target (or, for a file that must not exist yet, linked into
place): an interrupted run (Ctrl-C, a full disk, a killed process) leaves the
old file as it was and no temporary file behind. A target that is a symbolic
link is written through the link: the link stays, the file it points at is
replaced.
"""

from __future__ import annotations

import os
import secrets
from collections.abc import Iterable
from pathlib import Path

from clockplan.errors import ClockplanError

__all__ = ["atomic_write_bytes", "atomic_write_text", "atomic_create_text", "refuse_overwrite", "same_file"]


def same_file(one: str | Path, other: str | Path) -> bool:
    """True if ``one`` and ``other`` name the same file.

    Any spelling counts (``./x.toml``, ``../dir/x.toml``, a symbolic link, a
    hard link): the paths are compared after resolving links, and, when both
    exist, by device and inode.

    Examples
    --------
    >>> same_file("boards/../boards/edge-router.toml", "./boards/edge-router.toml")  # doctest: +SKIP
    True
    """
    if Path(one).resolve() == Path(other).resolve():
        return True
    try:
        return os.path.samefile(one, other)
    except OSError:  # one of them does not exist (yet): only the spelling could match
        return False


def refuse_overwrite(path: str | Path, *, protected: Iterable[str | Path] = (), allow: bool = False) -> None:
    """Raise unless writing ``path`` is allowed.

    Parameters
    ----------
    path
        The file about to be written.
    protected
        Files that must never be written unless ``allow`` (e.g. the input board).
    allow
        The user asked for it (``--in-place`` / ``--force``).
    """
    if allow:
        return
    for other in protected:
        if same_file(path, other):
            raise ClockplanError(
                f"refusing to overwrite the input file {other} (the output {path} is the same file)"
                if str(other) != str(path) else f"refusing to overwrite the input file {path}",
                hint="write to another file, or pass --in-place to replace it",
            )


def _default_mode() -> int:
    """0666 less the process umask: the mode an ordinary ``open(path, "w")`` would give."""
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


def _real_target(path: Path) -> Path:
    """The file a write to ``path`` must replace: through a symbolic link, to the file it names."""
    return Path(os.path.realpath(path)) if path.is_symlink() else path


def _folder_of(path: Path) -> Path:
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise ClockplanError(f"cannot write {path}: folder {folder} does not exist",
                             hint="create it first, or choose another path")
    return folder


def _write_temporary(folder: Path, name: str, data: bytes, mode: int) -> Path:
    """Write ``data`` to a new temporary file beside ``name`` and flush it to the disk.

    On any failure, interruption included, the temporary file is removed before
    the exception goes on.
    """
    temp = folder / f".{name}.{secrets.token_hex(6)}.tmp"
    handle = os.open(temp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.chmod(temp, mode)
    except BaseException:
        temp.unlink(missing_ok=True)
        raise
    return temp


def _cannot_write(path: Path, err: OSError) -> ClockplanError:
    reason = err.strerror or str(err)
    return ClockplanError(f"cannot write {path}: {reason}; the old file, if any, is unchanged",
                          hint="check free space and permissions, or choose another path")


def atomic_write_bytes(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically: a temporary file in the same folder, then rename.

    An interrupted write (Ctrl-C, full disk) leaves the old file untouched and no
    temporary file behind. A new file gets the usual mode (0666 less the umask);
    a replaced file keeps its mode. A symbolic link is written through.

    Raises
    ------
    ClockplanError
        The folder is missing, or the disk or the system refuses the write
        (full disk, permissions); the message names the path.

    Examples
    --------
    >>> atomic_write_bytes("out/plot.png", png)  # doctest: +SKIP
    """
    shown = Path(path)
    target = _real_target(shown)
    folder = _folder_of(target)
    temp = None
    try:
        mode = target.stat().st_mode & 0o777 if target.exists() else _default_mode()
        temp = _write_temporary(folder, target.name, data, mode)
        os.replace(temp, target)
    except OSError as err:
        raise _cannot_write(shown, err) from err
    finally:  # gone after a rename; left behind by a failed or interrupted one
        if temp is not None:
            temp.unlink(missing_ok=True)


def atomic_write_text(path: str | Path, text: str) -> None:
    """Write ``text`` (UTF-8) to ``path`` atomically; see :func:`atomic_write_bytes`.

    Examples
    --------
    >>> atomic_write_text("out/report.md", "# Report\\n")  # doctest: +SKIP
    """
    atomic_write_bytes(path, text.encode("utf-8"))


def atomic_create_text(path: str | Path, text: str, what: str = "clockplan") -> Path:
    """Create ``path`` with ``text`` (UTF-8), whole or not at all; never replace a file.

    The text is written beside the target, flushed, then linked into place: unlike
    a rename, a link refuses to replace a file that appeared meanwhile.

    Raises
    ------
    ClockplanError
        ``path`` exists (``what`` names the command in the message), its folder
        does not, or it cannot be written.

    Examples
    --------
    >>> atomic_create_text("boards/my-board.toml", text)  # doctest: +SKIP
    PosixPath('boards/my-board.toml')
    """
    path = Path(path)
    exists = ClockplanError(f"{path} already exists; {what} never writes over a file",
                            hint="choose a new file name, or move the old file away first")
    if path.exists() or path.is_symlink():
        raise exists
    folder = _folder_of(path)
    temp = None
    try:
        temp = _write_temporary(folder, path.name, text.encode("utf-8"), _default_mode())
        os.link(temp, path)
    except FileExistsError as err:
        raise exists from err
    except OSError as err:
        raise _cannot_write(path, err) from err
    finally:
        if temp is not None:
            temp.unlink(missing_ok=True)
    return path
