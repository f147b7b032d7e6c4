"""Atomic file replacement, shared by every writer of the model layer (circuits, CSV, GraphML)."""

import os
import secrets
import stat
from pathlib import Path


def write_atomic(path: str | os.PathLike, data: bytes) -> None:
    """Replace the file at ``path`` with ``data`` so that it is never half-written.

    The bytes go to a temporary file in the same directory, are flushed to
    disk, and the temporary file is renamed over the target (an atomic step
    on one file system). An existing file keeps its permissions; a symbolic
    link is followed, not replaced. If anything fails, the old file is
    untouched and the temporary file is removed.
    """
    target = Path(os.path.realpath(path))
    try:
        mode = stat.S_IMODE(os.stat(target).st_mode)
    except FileNotFoundError:
        mode = None
    while True:
        tmp = target.parent / f".{target.name}.{secrets.token_hex(4)}.tmp"
        try:
            # 0o666 is narrowed by the umask, as for any newly created file.
            fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0), 0o666)
            break
        except FileExistsError:
            continue
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        if mode is not None:
            os.chmod(tmp, mode)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    _fsync_directory(target.parent)


def _fsync_directory(directory: Path) -> None:
    """Make the rename itself durable (POSIX); a no-op where directories cannot be opened."""
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
