"""Where ogive may write, and writing there checked: the one rule for every writer.

``scan``, ``merge``, ``timeline``, ``generate`` and the workspace's write and export
all ask :func:`check_target` before they read a byte, and write through
:func:`write_atomic` or :func:`write_stdout`:

* a path that exists must be a regular file (or a link to one): a device, FIFO,
  socket or directory is refused in one sentence. Replacing it by rename would, as
  root, turn ``/dev/full`` into a regular file, and writing into a FIFO would hang;
* a file is written to a temporary file beside it, flushed, fsynced and renamed, so a
  full disk, a crash or Ctrl-C leaves the old file or the new one, never half of one;
* standard output is written with ``os.write`` until every byte is taken; a short or
  failed write (a full disk, a reader that went away) is one line and exit 3, never a
  truncated sketch with exit 0.

Standard library only, so that ``demo`` and ``store`` can share it.
"""

from __future__ import annotations

import contextlib
import errno
import os
import stat
import sys
import tempfile
from pathlib import Path

from .errors import OgiveError

OUTPUT_ERRNOS = frozenset({errno.ENOSPC, errno.EDQUOT, errno.EFBIG, errno.EIO, errno.EROFS, errno.EBADF})
"""Errors of a write the user's environment caused (a full disk, a closed descriptor), not ogive."""

KINDS = {
    stat.S_IFCHR: "character device",
    stat.S_IFBLK: "block device",
    stat.S_IFIFO: "FIFO (named pipe)",
    stat.S_IFSOCK: "socket",
    stat.S_IFDIR: "directory",
}


def check_target(path: str | os.PathLike[str], *, option: str = "-o") -> None:
    """Refuse, before any reading, an output path ogive must not or cannot write.

    ``-`` (standard output) passes; the caller refuses a terminal itself where a
    binary file would land on it.
    """
    name = os.fspath(path)
    if name == "-":
        return
    if not name:
        raise OgiveError(f"{option} needs a file name ('-' for standard output).")
    try:
        st = os.stat(name)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise OgiveError(f"cannot write {name}: {exc.strerror or exc}.") from None
    if st is not None and not stat.S_ISREG(st.st_mode):
        kind = KINDS.get(stat.S_IFMT(st.st_mode), "special file")
        hint = " (use '-' for standard output)" if kind != "directory" else " (name a file inside it)"
        raise OgiveError(
            f"{option} {name} is a {kind}, not a regular file; ogive writes only regular files{hint}."
        )
    folder = os.path.dirname(os.path.realpath(name)) or "."
    if not os.path.isdir(folder):
        raise OgiveError(f"cannot write {name}: the folder {os.path.dirname(name) or '.'} does not exist.")
    if not os.access(folder, os.W_OK):
        raise OgiveError(f"cannot write {name}: the folder {os.path.dirname(name) or '.'} is not writable.")


def repeated(paths: list[str]) -> tuple[str, str] | None:
    """The first two names of one file (the same device and inode: ``a.log`` and
    ``./a.log``, a hard link, a link), or of standard input twice; None when all differ."""
    seen: dict[object, str] = {}
    for name in paths:
        key: object
        if name == "-":
            key = "-"
        else:
            try:
                st = os.stat(name)
            except OSError:
                continue  # a URL or a missing file: the reader says what is wrong with it
            key = (st.st_dev, st.st_ino)
        if key in seen:
            return seen[key], name
        seen[key] = name
    return None


def write_atomic(path: str | os.PathLike[str], data: bytes, *, what: str = "the file") -> None:
    """Write ``data`` to ``path`` via a temporary file in the same folder and a rename.

    A crash, Ctrl-C or full disk leaves either the old file or the new one, never a
    half-written one. ``-`` writes to standard output (:func:`write_stdout`). A link
    is followed: the file it points to is replaced, the link stays.
    """
    if os.fspath(path) == "-":
        write_stdout(data, what=what)
        return
    check_target(path)
    shown = os.fspath(path)
    target = Path(os.path.realpath(path))
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    except OSError as exc:
        raise OgiveError(f"cannot write {shown}: {exc.strerror or exc}.") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        # mkstemp creates 0600; a saved file should get the mode any new file gets (or
        # keep the one it replaces), so colleagues can read what was shared.
        os.chmod(tmp, _mode_for(target))
        os.replace(tmp, target)
    except OSError as exc:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise OgiveError(f"cannot write {shown}: {exc.strerror or exc}; nothing was changed.") from None
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def _mode_for(target: Path) -> int:
    try:
        return target.stat().st_mode & 0o7777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def write_stdout(data: bytes, *, what: str = "the output") -> None:
    """Every byte of ``data`` to standard output, or one sentence saying how many got there.

    ``os.write`` may take fewer bytes than offered (a pipe, a signal); the loop goes on
    until all are taken. When standard output is a file, it is fsynced too, so that a
    disk that fills only at write-back (a network file system) is still reported.
    """
    sys.stdout.flush()
    fd = sys.stdout.fileno()
    done = 0
    view = memoryview(data)
    try:
        while done < len(data):
            done += os.write(fd, view[done:])
        is_file = False
        with contextlib.suppress(OSError):
            is_file = stat.S_ISREG(os.fstat(fd).st_mode)
        if is_file:
            os.fsync(fd)
    except OSError as exc:
        silence_stdout()
        if exc.errno == errno.EPIPE:
            raise OgiveError(
                f"standard output was closed after {done:,} of {len(data):,} bytes of {what}; "
                "what arrived is incomplete."
            ) from None
        raise OgiveError(
            f"cannot write {what} to standard output: {exc.strerror or exc} "
            f"({done:,} of {len(data):,} bytes written; what arrived is incomplete)."
        ) from None


def silence_stdout() -> None:
    """Point standard output at /dev/null, so that the interpreter's last flush of text
    still buffered for a closed or full output does not fail a second time at exit."""
    with contextlib.suppress(OSError, ValueError):
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)


class CheckedStdout:
    """Standard output as a binary file whose every write goes through :func:`write_stdout`:
    a full disk or a reader gone away ends a streamed output (``generate -o -``) with one
    line, not a short file and exit 0."""

    def __init__(self, *, what: str) -> None:
        self.what = what

    def write(self, data: bytes) -> int:
        write_stdout(bytes(data), what=self.what)
        return len(data)

    def flush(self) -> None:
        pass

    def fileno(self) -> int:
        return sys.stdout.fileno()
