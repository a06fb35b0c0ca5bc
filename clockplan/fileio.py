"""Writing files safely: atomically, and never over a file the user did not offer.

Every file clockplan writes goes through this module. A write goes to a
temporary file in the target's own folder, is flushed to the disk, and is then
renamed over the target (or, for a file that must not exist yet, linked into
place): an interrupted run (Ctrl-C, a full disk, a killed process) leaves the
old file as it was and no temporary file behind. A target that is a symbolic
link is written through the link: the link stays, the file it points at is
replaced.

A target that exists and is not a regular file (a device such as
``/dev/null``, a FIFO, a socket), ``/dev/stdout``, ``/dev/stderr`` and paths under
``/dev/fd/`` or ``/proc/`` (which may lead to a log file) are never renamed over: it is opened
for writing in append mode, without truncation, like a shell's ``>>``.
Inputs are read only from regular files (:func:`check_input_path`).

Creating, writing and renaming a temporary file runs with SIGINT and SIGTERM
held back (:func:`signals_held`): a signal that arrives meanwhile is acted on
once the temporary file is renamed or removed, so no signal leaves one behind.
"""

from __future__ import annotations

import contextlib
import os
import secrets
import signal
import stat
from collections.abc import Iterable, Iterator
from pathlib import Path

from clockplan.errors import ClockplanError

__all__ = [
    "atomic_write_bytes",
    "atomic_write_text",
    "atomic_create_text",
    "refuse_overwrite",
    "same_file",
    "check_path",
    "check_output_path",
    "guard_outputs",
    "is_special_target",
    "signals_held",
]

#: The longest temporary-file suffix ``.<random>.tmp`` plus the leading dot.
_TEMP_EXTRA = 1 + 1 + 12 + 4
#: Paths that stand for an open stream of this process, not a file to replace.
_STREAM_PATHS = ("/dev/stdout", "/dev/stderr", "/dev/tty")
_STREAM_TREES = ("/proc/", "/dev/fd/")


def check_path(path: str | Path, what: str = "path") -> None:
    """Refuse a path no file system accepts: a NUL byte, a name or a whole path over the system's limits.

    Raises
    ------
    ClockplanError
        The message names the path (cut short) and the limit it breaks.

    Examples
    --------
    >>> check_path("out/" + "x" * 300 + ".json")  # doctest: +SKIP
    Traceback (most recent call last):
    ...
    clockplan.errors.ClockplanError: the path 'out/xxx...' has a name longer than the file system's limit of 255 bytes
    """
    text = os.fspath(path)
    shown = text if len(text) <= 80 else text[:60] + f"... ({len(text)} characters)"
    if "\x00" in text:
        raise ClockplanError(f"the {what} {shown!r} contains a NUL byte", hint="no file name can hold one; check the path")
    folder = os.path.dirname(text) or "."
    name_max, path_max = _limits(folder)
    if len(os.fsencode(text)) >= path_max:
        raise ClockplanError(f"the {what} {shown!r} is longer than the system's limit of {path_max - 1} bytes",
                             hint="choose a shorter path")
    for part in Path(text).parts:
        if len(os.fsencode(part)) > name_max:
            raise ClockplanError(f"the {what} {shown!r} has a name longer than the file system's limit of "
                                 f"{name_max} bytes", hint="choose a shorter file name")


def _limits(folder: str) -> tuple[int, int]:
    """(longest file name, longest path) where ``folder`` lies; POSIX's usual 255 and 4096 if unknown."""
    try:
        return os.pathconf(folder, "PC_NAME_MAX"), os.pathconf(folder, "PC_PATH_MAX")
    except (OSError, ValueError):
        return 255, 4096


def is_special_target(path: str | Path) -> bool:
    """True if a write to ``path`` must open it in place rather than replace it.

    That is an existing file that is not a regular file (a device, a FIFO, a
    socket), ``/dev/stdout``, ``/dev/stderr``, or a path under ``/dev/fd/`` or
    ``/proc/`` (these may lead to the log a shell appends to, a regular file).

    Examples
    --------
    >>> is_special_target("/dev/null")
    True
    """
    try:
        text = os.path.abspath(os.fspath(path))
    except ValueError:
        return False
    if text in _STREAM_PATHS or text.startswith(_STREAM_TREES):
        return True
    try:
        mode = os.stat(path).st_mode
    except (OSError, ValueError):
        return False
    return not stat.S_ISREG(mode) and not stat.S_ISDIR(mode)


def check_output_path(path: str | Path, flag: str) -> None:
    """Before any work: refuse an output that could not be written (bad name, missing folder, a folder).

    A special target (:func:`is_special_target`) needs no temporary file; a
    regular one needs room in its name for the temporary suffix, which
    :func:`atomic_write_bytes` shortens if it must.

    Raises
    ------
    ClockplanError
        ``flag`` and the path in the message.
    """
    try:
        check_path(path, f"{flag} path")
    except ClockplanError as err:
        raise ClockplanError(err.message, hint=err.hint) from None
    if is_special_target(path):
        return
    target = _real_target(Path(path))
    if target.is_dir():
        raise ClockplanError(f"{flag} {path} is a folder, not a file", hint="name a file inside it")
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise ClockplanError(f"{flag} {path}: the folder {folder} does not exist",
                             hint="create it first, or choose another path")


def guard_outputs(outputs: Iterable[tuple[str, str | Path]], inputs: Iterable[str | Path] = (),
                  allow_inputs: bool = False) -> None:
    """The one check every writing command runs before its work: each output can be written, is no input,
    and no two outputs are the same file.

    Parameters
    ----------
    outputs
        ``(flag, path)`` pairs; the flag names the option in messages.
    inputs
        Files never written (the board, a library), unless ``allow_inputs``.

    Raises
    ------
    ClockplanError
        The first output that breaks a rule, named with its flag.
    """
    outputs = list(outputs)
    inputs = list(inputs)
    for flag, path in outputs:
        check_output_path(path, flag)
        if not is_special_target(path):
            try:
                refuse_overwrite(path, protected=inputs, allow=allow_inputs)
            except ClockplanError as err:
                raise ClockplanError(f"{flag}: {err.message}", hint=err.hint) from None
    regular = [(flag, path) for flag, path in outputs if not is_special_target(path)]
    for index, (flag, path) in enumerate(regular):
        for other_flag, other in regular[index + 1:]:
            if same_file(path, other):
                raise ClockplanError(f"{flag} and {other_flag} name the same file {other}", hint="give them different files")


@contextlib.contextmanager
def signals_held() -> Iterator[None]:
    """Hold SIGINT and SIGTERM back for the block; one that arrived is acted on when it ends.

    Outside the main thread, or where the system has no signal mask, the block runs as is.
    """
    wanted = {signal.SIGINT, signal.SIGTERM}
    try:
        old = signal.pthread_sigmask(signal.SIG_BLOCK, wanted)
    except (AttributeError, OSError, ValueError):
        yield
        return
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)


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
    try:
        if Path(one).resolve() == Path(other).resolve():
            return True
        return os.path.samefile(one, other)
    except (OSError, ValueError, RuntimeError):  # one does not exist (yet), or cannot be a path at all
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
    name_max, _ = _limits(str(folder))
    if len(os.fsencode(name)) + _TEMP_EXTRA > name_max:  # a legal name with no room for the suffix
        name = "clockplan"
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
    check_path(shown)
    if is_special_target(shown):
        _write_in_place(shown, data)
        return
    try:
        target = _real_target(shown)
    except OSError as err:
        raise _cannot_write(shown, err) from err
    folder = _folder_of(target)
    temp = None
    with signals_held():
        try:
            mode = target.stat().st_mode & 0o777 if target.exists() else _default_mode()
            temp = _write_temporary(folder, target.name, data, mode)
            os.replace(temp, target)
        except OSError as err:
            raise _cannot_write(shown, err) from err
        finally:  # gone after a rename; left behind by a failed or interrupted one
            if temp is not None:
                temp.unlink(missing_ok=True)


def _write_in_place(path: Path, data: bytes) -> None:
    """Write ``data`` into an existing device, FIFO or ``/dev/...`` path: opened in append mode, never
    created, truncated or renamed over. Not atomic: an interrupted write may have delivered part."""
    try:
        handle = os.open(path, os.O_WRONLY | os.O_APPEND)
    except OSError as err:
        raise _cannot_write(path, err) from err
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
    except OSError as err:
        raise _cannot_write(path, err) from err


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
    check_path(path)
    exists = ClockplanError(f"{path} already exists; {what} never writes over a file",
                            hint="choose a new file name, or move the old file away first")
    if path.exists() or path.is_symlink():
        raise exists
    folder = _folder_of(path)
    temp = None
    with signals_held():
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
