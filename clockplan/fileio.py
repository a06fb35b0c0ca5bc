"""Writing files safely: atomically, and never over a file the user did not offer."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from clockplan.errors import ClockplanError

__all__ = ["atomic_write_text", "refuse_overwrite"]


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


def atomic_write_text(path: str | Path, text: str) -> None:
    """Write ``text`` to ``path`` atomically: a temporary file in the same folder, then rename.

    An interrupted write (Ctrl-C, full disk) leaves the old file untouched and no
    temporary file behind.

    Examples
    --------
    >>> atomic_write_text("out/report.md", "# Report\\n")  # doctest: +SKIP
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise ClockplanError(f"folder {folder} does not exist", hint="create it first, or choose another path")
    mode = path.stat().st_mode & 0o777 if path.exists() else None
    handle, temp_name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(handle, "w", encoding="utf-8", newline="") as stream:
            stream.write(text)
            stream.flush()
            os.fsync(stream.fileno())
        if mode is not None:
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
