"""Atomic file writes: every file nogo writes goes through here.

Write to a temporary file in the same folder, flush and fsync it, then
rename it over the target (``os.replace`` is atomic on POSIX and Windows for
paths on one file system).  On any failure the old file is left intact, the
temporary file is removed, and an :class:`~nogo.errors.InputError` names the
path and the operating system's reason.
"""

from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager
from pathlib import Path
from typing import IO, Iterator

from .errors import InputError


@contextmanager
def atomic_open(path: str | os.PathLike, mode: str = "w", encoding: str | None = "utf-8") -> Iterator[IO]:
    """Open a temporary sibling of ``path`` for writing; rename it onto ``path`` on success.

    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> with atomic_open(d / "a.txt") as fh:
    ...     _ = fh.write("hello")
    >>> (d / "a.txt").read_text()
    'hello'
    """
    if mode not in ("w", "wb"):
        raise ValueError("atomic_open writes only ('w' or 'wb')")
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=folder)
    except OSError as exc:
        raise InputError(f"cannot write {target}: {exc.strerror or exc}") from None
    try:
        with os.fdopen(fd, mode, encoding=None if "b" in mode else encoding) as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except OSError as exc:
        _remove(tmp)
        raise InputError(f"cannot write {target}: {exc.strerror or exc}; the old file (if any) is unchanged") from None
    except BaseException:
        _remove(tmp)
        raise


def write_text(path: str | os.PathLike, text: str) -> None:
    """Write ``text`` to ``path`` atomically (UTF-8)."""
    with atomic_open(path, "w") as fh:
        fh.write(text)


def write_bytes(path: str | os.PathLike, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically."""
    with atomic_open(path, "wb") as fh:
        fh.write(data)


def save_figure(fig, path: str | os.PathLike, **kwargs) -> None:
    """``fig.savefig`` through a temporary file; the format comes from the target's suffix."""
    fmt = kwargs.pop("format", None) or (Path(path).suffix.lstrip(".") or "png")
    with atomic_open(path, "wb") as fh:
        fig.savefig(fh, format=fmt, **kwargs)


def _remove(tmp: str) -> None:
    try:
        os.unlink(tmp)
    except OSError:
        pass
