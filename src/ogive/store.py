"""Saving and loading ``.ogive`` files: atomic writes, one-line errors, and the one place
that decides whether a name on a command line or in the Open dialog is a saved sketch or a log.

That decision is made from the file's first bytes, never its name, so a sketch renamed
``x.json`` still loads and an access log called ``a.ogive`` is still scanned.
"""

from __future__ import annotations

import os
import sys
from dataclasses import dataclass
from pathlib import Path

from .errors import OgiveError
from .outputs import check_target as check_target
from .outputs import write_atomic as write_atomic
from .sketch import SketchFormatError, SketchSet, dumps, loads
from .sketch.codec import MissingSketch


def save_sketches(path: str | os.PathLike[str], sketches: SketchSet) -> None:
    """The set to ``path`` (``-``: standard output), atomically and checked (``outputs.py``)."""
    write_atomic(path, dumps(sketches), what="the sketch file")


def load_sketches(path: str | os.PathLike[str], only: str | None = None) -> SketchSet:
    """Load a sketch file (``-`` reads standard input); with ``only``, just that sketch."""
    try:
        data = sys.stdin.buffer.read() if str(path) == "-" else Path(path).read_bytes()
    except OSError as exc:
        raise OgiveError(f"cannot read {path}: {exc.strerror or exc}.") from None
    except MemoryError:
        raise OgiveError(f"cannot read {path}: it does not fit in memory.") from None
    try:
        return loads(data, only)
    except MissingSketch as exc:
        raise OgiveError(f"{path} has no sketch named {only!r} (it has: {few(exc.names)}).") from None
    except SketchFormatError as exc:
        raise OgiveError(f"{path}: {exc}") from None


SNIFF_BYTES = 4096
"""Enough to see the ``format`` key, which the codec writes first."""


def _looks_like_sketch_file(path: str) -> bool:
    if path == "-" or not os.path.isfile(path):
        return False
    try:
        with open(path, "rb") as fh:
            head = fh.read(SNIFF_BYTES)
    except OSError:
        return False
    return head.lstrip().startswith(b"{") and b'"ogive-sketch-set"' in head


@dataclass(frozen=True)
class SketchRef:
    """A saved sketch set named on a command line or in a dialog: ``PATH`` or ``PATH:GROUP``."""

    path: str
    group: str | None = None


def sketch_ref(spec: str) -> SketchRef | None:
    """``spec`` as a saved sketch (file, optionally ``:GROUP``), or None when it is a log to scan.

    Every caller (the sub-commands, the workspace, the Open dialog's preview) asks this
    one function, so they cannot disagree about what a name is.
    """
    if _looks_like_sketch_file(spec):
        return SketchRef(spec)
    path, group = split_group(spec)
    if group is not None and _looks_like_sketch_file(path):
        return SketchRef(path, group)
    return None


def misnamed_sketch(spec: str) -> str:
    """Why a file named as a saved sketch (``*.ogive``) is not one, or '' (a sketch, or a log).

    Beside :func:`sketch_ref`: an empty or cut-short ``.ogive`` file fails its sniff and
    would otherwise be taken for a log to scan.
    """
    if sketch_ref(spec) is not None:
        return ""
    path = split_group(spec)[0] if not spec.endswith(".ogive") else spec
    if not path.endswith(".ogive") or not os.path.isfile(path):
        return ""
    size = os.path.getsize(path)
    what = "empty" if size == 0 else f"not one ({size:,} bytes without the sketch-set header; cut short?)"
    return f"{path} is named as a saved sketch but is {what}. Choose a format to read it as a log."


def load_ref(ref: SketchRef) -> SketchSet:
    """The set a reference names: the whole file, or the one sketch its group picks."""
    if ref.group is None:
        return load_sketches(ref.path)
    sset = load_sketches(ref.path, only=ref.group)  # only that one is built (see codec.loads)
    return SketchSet({ref.group: sset[ref.group]})


NAME_SUFFIXES = (".gz", ".zst", ".bz2", ".xz", ".log", ".ndjson", ".jsonl", ".json", ".csv", ".tsv", ".txt",
                 ".parquet", ".ogive")  # fmt: skip
"""Suffixes dropped from a file's name to name its sketches (names only: content decides the format)."""


def source_stem(source: str) -> str:
    """``/var/log/before.ndjson.gz`` -> ``before``: the name a file's sketches go by."""
    stem = Path(source).name
    changed = True
    while changed:
        changed = False
        for suffix in NAME_SUFFIXES:
            if stem.endswith(suffix) and len(stem) > len(suffix):
                stem, changed = stem[: -len(suffix)], True
    return stem or source


def split_group(spec: str) -> tuple[str, str | None]:
    """``file.ogive:route=/v2`` -> (``file.ogive``, ``route=/v2``); no group -> None.

    The group part starts after the first ``:`` that follows ``.ogive``, so Windows-like
    or colon-bearing folder names before it do not confuse the split.
    """
    marker = spec.find(".ogive:")
    if marker < 0:
        return spec, None
    return spec[: marker + 6], spec[marker + 7 :]


def few(names: list[str], limit: int = 8) -> str:
    """``a, b, c, … (12 more)``: a list of names short enough for a one-line error."""
    shown = ", ".join(names[:limit])
    return shown + (f", … ({len(names) - limit} more)" if len(names) > limit else "")
