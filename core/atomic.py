"""Atomic file writes: a temporary file in the same folder, flushed and synced, then renamed.

Used for every file Bandsmith writes (sessions, the op-amp shelf, exports, reports), so that a
write that fails half-way leaves the old file exactly as it was.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

__all__ = ["write_bytes_atomic"]


def _mode_for(target: Path) -> int:
    """Keep an existing file's permissions; a new file gets the usual ``0o666 & ~umask``."""
    try:
        return os.stat(target).st_mode & 0o7777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def write_bytes_atomic(path: str | os.PathLike, data: bytes | str, *, make_folder: bool = False) -> Path:
    """Write ``data`` (text is UTF-8 encoded) to ``path`` atomically.

    A temporary file in the same folder is written, flushed and fsynced, given the old file's
    permissions and renamed over the target with :func:`os.replace`; the folder is then synced so
    the rename itself is durable. On any failure the temporary file is removed, the old file is
    untouched, and the ``OSError`` propagates for the caller to phrase.
    """
    if isinstance(data, str):
        data = data.encode("utf-8")
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if make_folder:
        folder.mkdir(parents=True, exist_ok=True)
    mode = _mode_for(target)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    try:  # not every platform lets a folder be opened
        dfd = os.open(folder, os.O_RDONLY)
    except OSError:
        return target
    try:
        os.fsync(dfd)
    except OSError:
        pass
    finally:
        os.close(dfd)
    return target
