"""Reading the rig once and writing outputs safely: the one output-target policy.

Outputs (``-o``, ``--write-rig``) go only to a regular file or a new path. A symlink is
written *through*: the link stays and its target is replaced. Devices, FIFOs, sockets,
directories and anything under ``/proc``, ``/sys`` or ``/dev`` (also through a
symlink) are refused (exit 2), as is the rig
being read, whether named by path or given on standard input (compared by device and
inode). Writing is atomic: a temporary file in the target's folder, then ``os.replace``;
the new file keeps only the permission bits of the file it replaces (never setuid, setgid
or sticky). Temporary files are removed when the write is interrupted (SIGINT, SIGTERM,
SIGHUP: :func:`install_signal_handlers` turns the latter two into exceptions).

Rig input is read once, capped at :data:`MAX_RIG_BYTES` (so ``/dev/zero`` or a FIFO is
safe).
"""

from __future__ import annotations

import os
import signal
import stat
import sys
import tempfile
from pathlib import Path

from .errors import OutputError, RigError
from .safetext import clean

MAX_RIG_BYTES = 1_000_000
"""Largest rig file read (1 MB; the bundled examples are under 5 kB)."""

_FORBIDDEN_ROOTS = ("/proc", "/sys", "/dev")


# --- signals ------------------------------------------------------------------------------


class Terminated(BaseException):  # noqa: N818 - a signal, like KeyboardInterrupt
    """SIGTERM or SIGHUP arrived; unwinds like KeyboardInterrupt so that cleanups run."""

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum


def _raise_terminated(signum, frame):
    raise Terminated(signum)


def install_signal_handlers() -> None:
    """SIGTERM and SIGHUP raise :class:`Terminated` (SIGINT already raises
    KeyboardInterrupt), so a write in progress removes its temporary file."""
    for name in ("SIGTERM", "SIGHUP"):
        sig = getattr(signal, name, None)
        if sig is not None:
            try:
                signal.signal(sig, _raise_terminated)
            except (ValueError, OSError):  # not the main thread
                pass


# --- input --------------------------------------------------------------------------------


def read_capped(fh, where: str, limit: int = MAX_RIG_BYTES) -> bytes:
    """Read at most ``limit`` bytes from a binary file object; RigError if there is more."""
    try:
        data = fh.read(limit + 1)
    except OSError as exc:
        raise RigError("", where, f"cannot be read ({exc.strerror})") from None
    if len(data) > limit:
        raise RigError("", where, f"is larger than {limit // 1_000_000} MB, the limit for a "
                       "rig file")
    return data


def read_rig_bytes(source: str | Path) -> tuple[bytes, str]:
    """The rig's bytes, read once (``"-"`` is standard input), and its display name."""
    if str(source) == "-":
        return read_capped(sys.stdin.buffer, "<stdin>"), "<stdin>"
    path = Path(source)
    try:
        with open(path, "rb") as fh:
            if stat.S_ISDIR(os.fstat(fh.fileno()).st_mode):
                raise IsADirectoryError
            return read_capped(fh, str(source)), str(source)
    except FileNotFoundError:
        raise RigError("", str(source), "no such rig file") from None
    except IsADirectoryError:
        raise RigError("", str(source), "is a directory, expected a rig file") from None
    except OSError as exc:
        raise RigError("", str(source), f"cannot be read ({exc.strerror})") from None


def stdin_identity() -> tuple[int, int] | None:
    """(device, inode) of standard input when it is a regular file, else None."""
    try:
        st = os.fstat(sys.stdin.fileno())
    except (OSError, ValueError, AttributeError):
        return None
    return (st.st_dev, st.st_ino) if stat.S_ISREG(st.st_mode) else None


# --- output -------------------------------------------------------------------------------


def _under(path: str, roots) -> str | None:
    for root in roots:
        if path == root or path.startswith(root + "/"):
            return root
    return None


def _resolved(p: Path) -> Path:
    """The path a write would land on: symlinks followed (the link itself is kept).

    Every hop of a symlink chain is checked: a link into ``/proc``, ``/sys`` or ``/dev``
    (``/dev/stdout`` -> ``/proc/self/fd/1``) is refused even when it ends at a regular file.
    """
    hop = os.path.abspath(p)
    for _ in range(40):
        root = _under(hop, _FORBIDDEN_ROOTS)
        if root is not None:
            raise OutputError(f"{clean(str(p), 80)}: leads into {root}; outputs go only to "
                              "regular files")
        try:
            link = os.readlink(hop)
        except OSError:
            break
        hop = os.path.normpath(os.path.join(os.path.dirname(hop), link))
    try:
        target = os.path.realpath(p)
    except (OSError, ValueError):
        return p
    root = _under(target, _FORBIDDEN_ROOTS)
    if root is not None:
        raise OutputError(f"{clean(str(p), 80)}: leads into {root}; outputs go only to "
                          "regular files")
    return Path(target)


def _identity(path: Path) -> tuple[int, int] | None:
    try:
        st = os.stat(path)
    except (OSError, ValueError):
        return None
    return st.st_dev, st.st_ino


def check_target(path: str | Path, rig: str | None = None) -> Path:
    """Apply the output-target policy; return the path to replace (symlinks resolved).

    Parameters
    ----------
    path : str or Path
        The output the user named.
    rig : str, optional
        The rig being read (a path, or ``"-"`` for standard input): never overwritten.

    Raises
    ------
    OutputError
        One line: the target and why it cannot be written.
    """
    shown = clean(str(path), 80)
    p = Path(path)
    if not str(path) or "\x00" in str(path):
        raise OutputError(f"{shown!r}: expected a file name")
    target = _resolved(p)
    try:
        st = os.stat(target)
    except FileNotFoundError:
        st = None
    except NotADirectoryError:
        raise OutputError(f"{shown}: a part of the path is not a folder") from None
    except OSError as exc:
        raise OutputError(f"{shown}: cannot be inspected ({exc.strerror})") from None
    if st is not None:
        if stat.S_ISDIR(st.st_mode):
            raise OutputError(f"{shown}: is a directory, expected a file name")
        if not stat.S_ISREG(st.st_mode):
            kind = ("a character device" if stat.S_ISCHR(st.st_mode) else
                    "a block device" if stat.S_ISBLK(st.st_mode) else
                    "a FIFO" if stat.S_ISFIFO(st.st_mode) else
                    "a socket" if stat.S_ISSOCK(st.st_mode) else "not a regular file")
            raise OutputError(f"{shown}: is {kind}; outputs go only to regular files "
                              "(use standard output and a shell redirection instead)")
        ident = (st.st_dev, st.st_ino)
        if rig is not None:
            rig_ident = stdin_identity() if rig == "-" else _identity(Path(rig))
            if rig_ident == ident:
                raise OutputError(f"{shown}: is the rig file being read; choose another "
                                  "output file")
    name_max = 255
    try:
        name_max = os.pathconf(target.parent if str(target.parent) else ".", "PC_NAME_MAX")
    except (OSError, ValueError):
        pass
    if len(target.name.encode("utf-8", "surrogateescape")) > name_max:
        raise OutputError(f"{shown}: the file name is longer than {name_max} bytes")
    parent = target.parent
    try:
        parent_ok = parent.is_dir()
    except OSError as exc:
        raise OutputError(f"{shown}: the folder {parent} cannot be inspected "
                          f"({exc.strerror})") from None
    if not parent_ok:
        raise OutputError(f"{shown}: the folder {parent} does not exist")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise OutputError(f"{shown}: the folder {parent} is not writable")
    return target


def _target_mode(p: Path) -> int:
    """Permission bits for the new file: those of the file replaced (setuid, setgid and
    sticky dropped), else what a plain open() would give under the umask."""
    try:
        return p.stat().st_mode & 0o777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def write_atomic(path: str | Path, data, rig: str | None = None) -> None:
    """Write ``data`` to ``path`` so that readers see the old file or the whole new one.

    ``data`` is text, bytes, or an iterable of text or bytes chunks (written one after the
    other as they come, so a long stream never sits whole in memory).

    ``path`` must pass :func:`check_target` (``rig`` is the rig being read, never
    overwritten). Raises OutputError (one line) when it cannot be written.
    """
    shown = clean(str(path), 80)
    target = check_target(path, rig)
    chunks = (data,) if isinstance(data, (str, bytes, bytearray)) else data
    tmp = None
    try:
        fd, tmp = tempfile.mkstemp(prefix=".strobeplan-", suffix=".tmp", dir=target.parent)
        with os.fdopen(fd, "wb") as fh:
            for chunk in chunks:
                fh.write(chunk.encode("utf-8") if isinstance(chunk, str) else chunk)
            fh.flush()
            os.fsync(fh.fileno())
        # mkstemp makes the file 0600; give it the mode a plain open() would (or keep the
        # permission bits of the file it replaces).
        os.chmod(tmp, _target_mode(target))
        os.replace(tmp, target)
        tmp = None
    except OSError as exc:
        raise OutputError(f"{shown}: cannot be written ({exc.strerror})") from None
    finally:
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass


def output_dir(outdir, rig: str | None = None, *, names=(), create: bool = False,
               what: str = "the files") -> Path:
    """Apply the output policy to a folder named by ``-o``: refuse an empty name, anything
    that exists and is not a folder, /proc, /sys and /dev (also through a symlink), and any
    of ``names`` inside an existing folder that the policy refuses (the rig itself, a
    special file); create the folder (and its parents) only when ``create``, just before
    writing, so a run that fails leaves nothing behind."""
    shown = clean(str(outdir), 80)
    p = Path(outdir)
    if not str(outdir) or "\x00" in str(outdir):
        raise OutputError(f"{shown!r}: expected a folder name")
    try:
        st = os.stat(p)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise OutputError(f"{shown}: cannot be inspected ({exc.strerror})") from None
    if st is not None and not stat.S_ISDIR(st.st_mode):
        raise OutputError(f"{shown}: exists and is not a folder; -o names the folder for "
                          f"{what}")
    _resolved(p)
    if st is None and create:
        try:
            os.makedirs(p, exist_ok=True)
        except OSError as exc:
            raise OutputError(f"{shown}: cannot create the folder ({exc.strerror})") from None
    if st is not None or create:
        for name in names:
            check_target(p / name, rig)
    return p
