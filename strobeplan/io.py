"""Atomic output: a temporary file in the target's folder, then os.replace."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from .errors import OutputError


def check_target(path: str | Path) -> Path:
    """Raise OutputError unless ``path`` can be written as a file."""
    p = Path(path)
    parent = p.parent if str(p.parent) else Path(".")
    if p.is_dir():
        raise OutputError(f"{p}: is a directory, expected a file name")
    if not parent.is_dir():
        raise OutputError(f"{p}: the folder {parent} does not exist")
    if not os.access(parent, os.W_OK):
        raise OutputError(f"{p}: the folder {parent} is not writable")
    return p


def _target_mode(p: Path) -> int:
    try:
        return p.stat().st_mode & 0o7777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def write_atomic(path: str | Path, data: str | bytes) -> None:
    """Write ``data`` to ``path`` so that readers see the old file or the whole new one."""
    p = check_target(path)
    raw = data.encode("utf-8") if isinstance(data, str) else data
    try:
        # Pseudo-filesystems (/proc, /sys) and read-only mounts refuse the temporary file
        # although the folder looks writable.
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=p.parent or ".")
    except OSError as exc:
        raise OutputError(f"{p}: cannot be written ({exc.strerror})") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(raw)
            fh.flush()
            os.fsync(fh.fileno())
        # mkstemp makes the file 0600; give it the mode a plain open() would (or keep the
        # mode of the file it replaces).
        os.chmod(tmp, _target_mode(p))
        os.replace(tmp, p)
    except OSError as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise OutputError(f"{p}: cannot be written ({exc.strerror})") from None
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
