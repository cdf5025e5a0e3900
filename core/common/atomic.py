"""Files on disk: atomic writes, and reading a text file with the reason when it cannot be read.

Writes go to a temporary file in the same folder, flushed and synced, then renamed: used for every
file Bandsmith writes (sessions, the op-amp shelf, exports, reports), so that a write that fails
half-way leaves the old file exactly as it was.

A path that is a symbolic link is written through: the file it points to is replaced, the link
stays. Only regular files are written: a folder, a device (``/dev/full``), a pipe or a socket at
the path is refused with an ``OSError`` saying so, and left alone. Temporary files are named
``.<name>.bsw<pid>-<random>.tmp``; a save first removes those of its own file left by a process
that no longer runs (a save killed half-way).
"""

from __future__ import annotations

import errno
import os
import re
import stat
import tempfile
from pathlib import Path
from typing import Callable

__all__ = ["write_bytes_atomic", "read_utf8", "read_bytes_limited"]


def _mode_for(target: Path) -> int:
    """Keep an existing file's permissions; a new file gets the usual ``0o666 & ~umask``."""
    try:
        return os.stat(target).st_mode & 0o7777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def _pid_gone(pid: int) -> bool:
    if pid == os.getpid():
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except OSError:
        return False
    return False


def _clear_stale(folder: Path, name: str) -> None:
    """Remove temporary files of ``name`` left in ``folder`` by saves whose process is gone."""
    pattern = re.compile(re.escape(f".{name}.bsw") + r"([0-9]+)-[A-Za-z0-9_]+\.tmp")
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return
    for e in entries:
        m = pattern.fullmatch(e.name)
        if m and e.is_file(follow_symlinks=False) and _pid_gone(int(m.group(1))):
            try:
                os.unlink(e.path)
            except OSError:
                pass


def _writable_target(target: Path) -> Path:
    """The regular file to replace for ``target``: a symbolic link's target; OSError for a folder,
    a device, a pipe or a socket."""
    real = Path(os.path.realpath(target)) if target.is_symlink() else target
    try:
        st = os.stat(real)
    except FileNotFoundError:
        return real
    except OSError:
        return real  # let the write itself report it
    if not stat.S_ISREG(st.st_mode):
        code = errno.EISDIR if stat.S_ISDIR(st.st_mode) else errno.EINVAL
        raise OSError(code, f"it is {_file_kind(st.st_mode)}; only a regular file can be written there", str(target))
    return real


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
    if not target.name or target.name in (".", ".."):
        raise OSError(errno.EISDIR, "it is a folder; give a file name", str(target))
    if make_folder:
        (target.parent if str(target.parent) else Path(".")).mkdir(parents=True, exist_ok=True)
    target = _writable_target(target)
    folder = target.parent if str(target.parent) else Path(".")
    mode = _mode_for(target)
    _clear_stale(folder, target.name)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.bsw{os.getpid()}-", suffix=".tmp", dir=folder)
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


def _file_kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a pipe (FIFO)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def read_bytes_limited(
    path: str | os.PathLike, *, what: str, error: Callable[[str, str], Exception], max_bytes: int | None = None
) -> bytes:
    """The bytes of a regular file of at most ``max_bytes`` (default: the cap of ``what`` in
    :data:`bandsmith.common.limits.MAX_FILE_BYTES`); never writes, never blocks.

    A pipe, a device (``/dev/zero``), a socket or a folder is refused before anything is read (a
    pipe is opened without waiting for a writer), and so is a file above the cap. Failures raise
    ``error(kind, message)`` with kind ``missing`` or ``unreadable``.
    """
    from bandsmith.common.limits import MAX_FILE_BYTES

    cap = max_bytes if max_bytes is not None else MAX_FILE_BYTES.get(what, 64 << 20)
    p = Path(path)
    try:
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except FileNotFoundError:
        raise error("missing", f"{p} does not exist") from None
    except IsADirectoryError:
        raise error("unreadable", f"{p} is a folder, not a {what}") from None
    except OSError as exc:
        raise error("unreadable", f"cannot read {p}: {exc.strerror or exc}") from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            raise error("unreadable", f"{p} is {_file_kind(st.st_mode)}, not a {what}")
        if st.st_size > cap:
            raise error("unreadable", f"{p} is {st.st_size / 2**20:.1f} MiB; a {what} may be at most {cap / 2**20:g} MiB")
        chunks, total = [], 0
        while True:
            chunk = os.read(fd, min(1 << 20, cap + 1 - total))
            if not chunk:
                break
            chunks.append(chunk)
            total += len(chunk)
            if total > cap:
                raise error("unreadable", f"{p} grew past {cap / 2**20:g} MiB while being read; a {what} may be at most that")
        return b"".join(chunks)
    except OSError as exc:
        raise error("unreadable", f"cannot read {p}: {exc.strerror or exc}") from None
    finally:
        os.close(fd)


def read_utf8(path: str | os.PathLike, *, what: str, error: Callable[[str, str], Exception]) -> str:
    """Read a UTF-8 text file (a byte-order mark is allowed); never writes.

    Failures raise ``error(kind, message)`` with kind ``missing``, ``unreadable`` (a folder, a
    pipe, a device, a file above its size cap, no permission; see :func:`read_bytes_limited`) or
    ``damaged`` (not UTF-8); ``what`` names the file's kind in the message ("session file",
    "shelf file").
    """
    p = Path(path)
    raw = read_bytes_limited(p, what=what, error=error)
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise error("damaged", f"{p} is damaged: not UTF-8 text (byte {exc.start})") from None
