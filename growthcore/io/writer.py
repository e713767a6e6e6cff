"""Writing output files: atomically (a reader sees the old file or the whole new one, never a
part), and CSV that is safe to open in a spreadsheet program (no cell can start a formula)."""

from __future__ import annotations

import contextlib
import csv
import io
import math
import os
import re
import tempfile
from collections.abc import Iterable, Iterator, Sequence
from typing import IO, Any


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def atomic_writer(path: str | os.PathLike[str], mode: str = "w", *, encoding: str | None = "utf-8",
                  newline: str | None = None) -> Iterator[IO[Any]]:
    """A file object whose content replaces ``path`` only when the block ends without an error.

    The content goes to a temporary file beside ``path`` (same folder, so the rename cannot cross
    file systems), which is flushed and synced to disk, then renamed over ``path``; the folder is
    synced so that the rename itself survives a crash. A failure (or a kill) before the rename
    leaves ``path`` as it was; the temporary file is removed on a failure.
    """
    target = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(target))
    binary = "b" in mode
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix="." + os.path.basename(target) + ".", suffix=".part")
    except OSError as exc:
        raise _not_written(target, exc) from exc
    try:
        os.fchmod(fd, 0o666 & ~_umask())  # the permissions a plain open() would give
        handle: IO[Any] = (os.fdopen(fd, "wb") if binary
                           else os.fdopen(fd, "w", encoding=encoding, newline=newline))
        with handle as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException as exc:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(exc, OSError):
            raise _not_written(target, exc) from exc
        raise
    with contextlib.suppress(OSError):  # not every platform can open a folder
        dir_fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dir_fd)
        finally:
            os.close(dir_fd)


def _not_written(target: str, exc: OSError) -> OSError:
    """The error of a failed write, naming the file it was for (not the temporary one beside it)."""
    error = OSError(f"{target} was not written ({exc.strerror or exc}); a file already there is unchanged")
    error.errno = exc.errno  # what went wrong stays readable; the message says it in one line
    return error


def atomic_write_text(path: str | os.PathLike[str], text: str, *, encoding: str = "utf-8") -> None:
    """Write ``text`` to ``path`` atomically (see :func:`atomic_writer`)."""
    with atomic_writer(path, "w", encoding=encoding, newline="") as fh:
        fh.write(text)


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> None:
    """Write ``data`` to ``path`` atomically (see :func:`atomic_writer`)."""
    with atomic_writer(path, "wb") as fh:
        fh.write(data)

#: First characters that make a spreadsheet program read a cell as a formula or command.
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")


def safe_csv_cell(value: object) -> str:
    """The text of one CSV cell, with a leading apostrophe where it could start a formula.

    Numbers (and strings that are plain numbers such as ``-1.5``) are written unchanged so that
    they stay numbers; NaN and None become an empty cell.
    """
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)) or type(value).__module__ == "numpy":
        try:
            x = float(value)  # type: ignore[arg-type]
        except (TypeError, ValueError):
            x = None
        if x is not None:
            if math.isnan(x):
                return ""
            if isinstance(value, int) or (hasattr(value, "dtype") and getattr(value.dtype, "kind", "") in "iu"):
                return str(int(value))  # type: ignore[call-overload]
            return repr(x) if math.isfinite(x) else ("inf" if x > 0 else "-inf")
    text = str(value)
    if _NUMBER.fullmatch(text):
        return text
    stripped = text.lstrip(" ")
    if text.startswith(FORMULA_TRIGGERS) or stripped.startswith(FORMULA_TRIGGERS[:4]):
        return "'" + text
    return text


def write_csv(path_or_buffer: str | os.PathLike[str] | IO[str], header: Sequence[object],
              rows: Iterable[Sequence[object]]) -> None:
    """Write UTF-8 CSV (comma, ``\\n`` line ends) with every cell passed through ``safe_csv_cell``.

    A path is written atomically: a reader never sees a table cut short.
    """
    if isinstance(path_or_buffer, (str, os.PathLike)):
        with atomic_writer(path_or_buffer, "w", encoding="utf-8", newline="") as fh:
            _write(fh, header, rows)
    else:
        _write(path_or_buffer, header, rows)


def _write(fh: IO[str], header: Sequence[object], rows: Iterable[Sequence[object]]) -> None:
    writer = csv.writer(fh, lineterminator="\n")
    writer.writerow([safe_csv_cell(h) for h in header])
    for row in rows:
        writer.writerow([safe_csv_cell(c) for c in row])


def csv_text(header: Sequence[object], rows: Iterable[Sequence[object]]) -> str:
    """The same CSV as ``write_csv`` writes, as a string (for downloads)."""
    buf = io.StringIO()
    _write(buf, header, rows)
    return buf.getvalue()
