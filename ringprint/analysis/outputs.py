"""Safe output files: the output directory check, atomic writes and the run log.

Every result file of ringprint appears only when it is complete. A writer puts the
bytes under a hidden temporary name in the destination directory and then renames
it over the final name with :func:`os.replace`, which is atomic on one file system:
a reader sees either the old file, no file, or the whole new file -- never a partial
one. If the writer fails half way, the temporary file is removed and the final name
is left untouched.

Public helpers (other modules reuse them for their own files, e.g. ``fields.h5``):

- :func:`prepare_output_dir` -- create the output directory if missing; refuse a
  path that is a file or a directory we cannot write to (:class:`RingprintError`).
- :func:`atomic_write_bytes`, :func:`atomic_write_text` -- write a whole file.
- :func:`atomic_path` -- a context manager yielding a temporary path, for libraries
  that write by path (h5py, matplotlib, pyvista). The temporary name keeps the final
  suffix, so libraries that choose the format by extension still work.
- :func:`write_run_log` and :class:`RunLogHandler` -- the plain-text ``run.log``.
"""

from __future__ import annotations

import contextlib
import logging
import os
import tempfile
import time
from collections.abc import Iterable, Iterator
from pathlib import Path

from ringprint.errors import RingprintError

__all__ = [
    "prepare_output_dir",
    "atomic_write_bytes",
    "atomic_write_text",
    "atomic_path",
    "write_run_log",
    "RunLogHandler",
    "TEMP_MARKER",
]

#: Every temporary file name contains this marker (and starts with a dot).
TEMP_MARKER = ".part-"


def _current_umask() -> int:
    """The process umask, read without changing it (Linux /proc; else 0o022)."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    return 0o022


def prepare_output_dir(out_dir: str | os.PathLike) -> Path:
    """Make sure ``out_dir`` is a writable directory, creating it if missing.

    Parameters
    ----------
    out_dir : str or path-like
        The directory that will receive the results.

    Returns
    -------
    pathlib.Path
        The directory, as given (not resolved).

    Raises
    ------
    RingprintError
        If the path is an existing file, cannot be created, or cannot be written
        to. The message names the path and the fix.

    Notes
    -----
    Writability is tested by creating and removing a small temporary file, since
    permission bits alone do not tell (a superuser ignores them; read-only mounts
    do not show in them).
    """
    path = Path(out_dir)
    if path.exists() and not path.is_dir():
        raise RingprintError(
            f"output path '{path}' is a file, not a directory; "
            "pass a directory path with --out, or move that file away")
    if not path.exists():
        try:
            path.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise RingprintError(
                f"cannot create output directory '{path}' ({exc.strerror or exc}); "
                "choose a path under a writable directory with --out") from None
    try:
        fd, probe = tempfile.mkstemp(dir=path, prefix=f".ringprint-write-test{TEMP_MARKER}")
    except OSError as exc:
        raise RingprintError(
            f"output directory '{path}' is not writable ({exc.strerror or exc}); "
            "fix its permissions or choose another directory with --out") from None
    os.close(fd)
    os.unlink(probe)
    return path


def _temp_name_parts(final: Path) -> tuple[str, str]:
    """Prefix and suffix of a temporary name for ``final`` (keeps its extension)."""
    return f".{final.stem}{TEMP_MARKER}", f"{final.suffix}"


def _fsync_dir(directory: Path) -> None:
    """Flush a directory entry change to disk (best effort; not all systems allow it)."""
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _commit(temp: Path, final: Path) -> None:
    """Give the temporary file normal permissions and rename it over ``final``."""
    os.chmod(temp, 0o666 & ~_current_umask())
    try:
        os.replace(temp, final)
    except OSError as exc:
        raise RingprintError(
            f"cannot write result file '{final}' ({exc.strerror or exc}); "
            "remove whatever is in the way (e.g. a directory of that name) "
            "or choose another --out directory") from None
    _fsync_dir(final.parent)


@contextlib.contextmanager
def atomic_path(final_path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path that is renamed to ``final_path`` on success.

    The temporary file lives in the destination directory (so the rename stays on
    one file system), starts with a dot, contains :data:`TEMP_MARKER` and ends with
    the final suffix. It exists, empty, when yielded; a library may overwrite or
    truncate it. If the ``with`` body raises, the temporary file is removed, the
    final path is left as it was, and the exception propagates.

    Parameters
    ----------
    final_path : str or path-like
        Where the finished file should appear. Its directory must exist.

    Yields
    ------
    pathlib.Path
        The temporary path to write to.

    Examples
    --------
    >>> with atomic_path(out / "fields.h5") as tmp:          # doctest: +SKIP
    ...     with h5py.File(tmp, "w") as f:
    ...         f["ex"] = ex
    """
    final = Path(final_path)
    prefix, suffix = _temp_name_parts(final)
    try:
        fd, name = tempfile.mkstemp(dir=final.parent, prefix=prefix, suffix=suffix)
    except OSError as exc:
        raise RingprintError(
            f"cannot write in directory '{final.parent}' ({exc.strerror or exc}); "
            "make sure it exists and is writable, or choose another --out directory"
        ) from None
    os.close(fd)
    temp = Path(name)
    try:
        yield temp
        _commit(temp, final)
    finally:
        with contextlib.suppress(FileNotFoundError):
            temp.unlink()


def atomic_write_bytes(final_path: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` to ``final_path`` atomically (temporary file, fsync, rename).

    Parameters
    ----------
    final_path : str or path-like
        Destination file; its directory must exist.
    data : bytes-like
        The complete file content.

    Returns
    -------
    pathlib.Path
        ``final_path``.
    """
    final = Path(final_path)
    with atomic_path(final) as temp:
        with open(temp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
    return final


def atomic_write_text(final_path: str | os.PathLike, text: str,
                      encoding: str = "utf-8") -> Path:
    """Write ``text`` to ``final_path`` atomically; see :func:`atomic_write_bytes`.

    Line endings are written as given (``"\\n"``), on every platform.
    """
    return atomic_write_bytes(final_path, text.encode(encoding))


def _one_line(text: str) -> str:
    """A log entry is one line: inner newlines become ' | ', trailing space goes."""
    return " | ".join(part.rstrip() for part in str(text).splitlines()) or ""


def write_run_log(path: str | os.PathLike, lines: Iterable[str]) -> Path:
    """Write the plain-text run log atomically, one entry per line.

    Parameters
    ----------
    path : str or path-like
        The log file (usually ``<out>/run.log``) or an output directory, in which
        case ``run.log`` inside it is written.
    lines : iterable of str
        Log entries. An entry with inner line breaks is joined into one line with
        ``" | "``, so that every line of the file is one entry.

    Returns
    -------
    pathlib.Path
        The written file.
    """
    target = Path(path)
    if target.is_dir():
        target = target / "run.log"
    if isinstance(lines, str):
        lines = [lines]
    text = "".join(_one_line(line) + "\n" for line in lines)
    return atomic_write_text(target, text)


class RunLogHandler(logging.Handler):
    """A :mod:`logging` handler that keeps ``run.log`` complete at all times.

    Records are kept in memory and the whole log is rewritten atomically -- at once
    for WARNING and above, otherwise at most every ``interval_s`` seconds, and on
    :meth:`flush` / :meth:`close`. A reader (or a crash) therefore never sees a
    half-written line. The format is ``YYYY-mm-dd HH:MM:SS.mmm LEVEL message``.

    Parameters
    ----------
    path : str or path-like
        The log file, or an existing directory (``run.log`` inside it); the
        directory must exist (see :func:`prepare_output_dir`).
    interval_s : float
        Longest time between rewrites for INFO/DEBUG records.
    level : int
        The handler's logging level.

    Attributes
    ----------
    lines : list of str
        Every formatted entry so far.
    """

    def __init__(self, path: str | os.PathLike, interval_s: float = 1.0,
                 level: int = logging.INFO):
        super().__init__(level)
        target = Path(path)
        self.path = target / "run.log" if target.is_dir() else target
        if not self.path.parent.is_dir():
            raise RingprintError(
                f"run log '{self.path}': directory '{self.path.parent}' does not exist; "
                "create the output directory first (prepare_output_dir)")
        self.interval_s = float(interval_s)
        self.lines: list[str] = []
        self._last_write = float("-inf")
        self._dirty = False
        self.setFormatter(logging.Formatter(
            "%(asctime)s.%(msecs)03d %(levelname)-7s %(message)s", "%Y-%m-%d %H:%M:%S"))

    def emit(self, record: logging.LogRecord) -> None:
        try:
            self.lines.append(_one_line(self.format(record)))
            self._dirty = True
            now = time.monotonic()
            if record.levelno >= logging.WARNING or now - self._last_write >= self.interval_s:
                self._write(now)
        except Exception:  # logging must never break the run
            self.handleError(record)

    def _write(self, now: float) -> None:
        write_run_log(self.path, self.lines)
        self._last_write = now
        self._dirty = False

    def flush(self) -> None:
        self.acquire()
        try:
            if self._dirty:
                self._write(time.monotonic())
        finally:
            self.release()

    def close(self) -> None:
        try:
            self.flush()
        finally:
            super().close()
