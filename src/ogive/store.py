"""Saving and loading ``.ogive`` files: atomic writes, one-line errors."""

from __future__ import annotations

import contextlib
import os
import sys
import tempfile
from pathlib import Path

from .errors import OgiveError
from .sketch import Sketch, SketchFormatError, SketchSet, dumps, loads


def write_atomic(path: str | os.PathLike[str], data: bytes) -> None:
    """Write ``data`` to ``path`` via a temporary file in the same folder and a rename.

    A crash, Ctrl-C or full disk leaves either the old file or the new one, never a
    half-written one. ``-`` writes to standard output.
    """
    if str(path) == "-":
        sys.stdout.buffer.write(data)
        sys.stdout.buffer.flush()
        return
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise OgiveError(f"cannot write {target}: {exc.strerror or exc}.") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        # mkstemp creates 0600; a saved sketch should get the mode any new file gets
        # (or keep the one it replaces), so colleagues can read what was shared.
        os.chmod(tmp, _mode_for(target))
        os.replace(tmp, target)
    except OSError as exc:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise OgiveError(f"cannot write {target}: {exc.strerror or exc}; nothing was changed.") from None
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


def save_sketches(path: str | os.PathLike[str], sketches: SketchSet) -> None:
    write_atomic(path, dumps(sketches))


def load_sketches(path: str | os.PathLike[str]) -> SketchSet:
    """Load a sketch file (``-`` reads standard input)."""
    try:
        data = sys.stdin.buffer.read() if str(path) == "-" else Path(path).read_bytes()
    except OSError as exc:
        raise OgiveError(f"cannot read {path}: {exc.strerror or exc}.") from None
    try:
        return loads(data)
    except SketchFormatError as exc:
        raise OgiveError(f"{path}: {exc}") from None


def split_group(spec: str) -> tuple[str, str | None]:
    """``file.ogive:route=/v2`` -> (``file.ogive``, ``route=/v2``); no group -> None.

    The group part starts after the first ``:`` that follows ``.ogive``, so Windows-like
    or colon-bearing folder names before it do not confuse the split.
    """
    marker = spec.find(".ogive:")
    if marker < 0:
        return spec, None
    return spec[: marker + 6], spec[marker + 7 :]


def load_one(spec: str) -> tuple[str, Sketch]:
    """One named sketch from ``PATH[:GROUP]``; a file of one sketch needs no group."""
    path, group = split_group(spec)
    sset = load_sketches(path)
    names = sset.names()
    if group is None:
        if len(names) == 1:
            return names[0], sset[names[0]]
        raise OgiveError(
            f"{path} holds {len(names)} sketches; name one as {path}:GROUP (one of: {_few(names)})."
        )
    if group not in sset.sketches:
        raise OgiveError(f"{path} has no sketch named {group!r} (it has: {_few(names)}).")
    return group, sset[group]


def _few(names: list[str], limit: int = 8) -> str:
    shown = ", ".join(names[:limit])
    return shown + (f", … ({len(names) - limit} more)" if len(names) > limit else "")
