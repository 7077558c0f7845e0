"""Atomic file writes (standard library only): every file beliefledger writes goes here.

:func:`atomic_file` opens a temporary file in the target's folder; when the
``with`` block ends normally the data are flushed, fsynced and renamed over
the target, so a crash at any moment leaves either the old file or the new
one, never a half-written file. On any exception the temporary file is
removed and the target is untouched.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import BinaryIO


def _new_file_mode(target: Path) -> int:
    """An existing file's mode, else the usual mode for a new file under the umask
    (mkstemp makes files owner-only)."""
    try:
        return os.stat(target).st_mode & 0o777
    except FileNotFoundError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


@contextlib.contextmanager
def atomic_file(path: str | Path) -> Iterator[BinaryIO]:
    """A binary file object whose contents replace ``path`` atomically on success.
    The folder must exist (callers check it and say so in their own words)."""
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        os.chmod(tmp, _new_file_mode(target))
        with os.fdopen(fd, "wb") as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
    try:  # make the rename itself durable
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass


def atomic_write_bytes(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically (see :func:`atomic_file`)."""
    with atomic_file(path) as fh:
        fh.write(data)
    return Path(path)


__all__ = ["atomic_file", "atomic_write_bytes"]
