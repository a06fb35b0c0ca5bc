"""Writing files safely: atomically, and never over a file the user did not offer."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from clockplan.errors import ClockplanError

__all__ = ["atomic_write_bytes", "atomic_write_text", "refuse_overwrite"]


def refuse_overwrite(path: str | Path, *, protected: list[str | Path] = (), allow: bool = False) -> None:
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
    target = Path(path).resolve()
    for other in protected:
        if Path(other).resolve() == target and not allow:
            raise ClockplanError(
                f"refusing to overwrite the input file {path}",
                hint="write to another file, or pass --in-place to replace it",
            )


def _default_mode() -> int:
    """0666 less the process umask: the mode an ordinary ``open(path, "w")`` would give."""
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


def atomic_write_bytes(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically: a temporary file in the same folder, then rename.

    An interrupted write (Ctrl-C, full disk) leaves the old file untouched and no
    temporary file behind. A new file gets the usual mode (0666 less the umask);
    a replaced file keeps its mode.

    Examples
    --------
    >>> atomic_write_bytes("out/plot.png", png)  # doctest: +SKIP
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise ClockplanError(f"folder {folder} does not exist", hint="create it first, or choose another path")
    mode = path.stat().st_mode & 0o777 if path.exists() else _default_mode()
    handle, temp_name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.chmod(temp_name, mode)
        os.replace(temp_name, path)
    except BaseException as err:
        try:
            os.unlink(temp_name)
        except FileNotFoundError:
            pass
        if isinstance(err, OSError):
            raise ClockplanError(f"cannot write {path}: {err.strerror}", hint="check free space and permissions") from err
        raise


def atomic_write_text(path: str | Path, text: str) -> None:
    """Write ``text`` (UTF-8) to ``path`` atomically; see :func:`atomic_write_bytes`.

    Examples
    --------
    >>> atomic_write_text("out/report.md", "# Report\\n")  # doctest: +SKIP
    """
    atomic_write_bytes(path, text.encode("utf-8"))
