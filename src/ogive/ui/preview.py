"""What the open prompt shows before committing to a scan: first lines, values parsed, bad rows.

The reader decides what parses; this only asks it. When the reader offers no preview
function of its own, the preview is a real scan of the first ~64 KB in small chunks,
stopped through the scan's own cancel hook, so the counts shown are the reader's.
"""

from __future__ import annotations

import dataclasses
import gzip
import io
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import OgiveError
from ..read.options import ScanOptions
from ..store import load_sketches
from . import fmt
from .capabilities import Unavailable, preview_function, scan_function

PREVIEW_BYTES = 64 * 1024
PREVIEW_CHUNK = 16 * 1024
RAW_LINES = 4


def first_lines(path: str, limit: int = RAW_LINES, width: int = 200) -> list[str]:
    """The first lines as text, opened the way the reader opens them (compression by magic bytes)."""
    try:
        from ..read.sources import Opened
    except ImportError:
        return _first_lines_plain(path, limit, width)
    src = Opened(path)
    try:
        if src.is_parquet:
            return ["(parquet: columns, not lines)"]
        data = src.read(PREVIEW_BYTES)
    except OgiveError as exc:
        return [str(exc)]
    finally:
        src.close()
    return [line[:width] for line in data.decode("utf-8", errors="replace").splitlines()[:limit]]


def _first_lines_plain(path: str, limit: int, width: int) -> list[str]:
    p = Path(path)
    try:
        with p.open("rb") as raw:
            head = raw.read(PREVIEW_BYTES)
    except OSError as exc:
        raise OgiveError(f"cannot read {path}: {exc.strerror or exc}.") from None
    data = head
    try:
        if head[:2] == b"\x1f\x8b":
            data = gzip.GzipFile(fileobj=io.BytesIO(head)).read1(PREVIEW_BYTES)  # type: ignore[attr-defined]
    except Exception:  # a truncated compressed head: show what decodes
        data = b""
    lines = data.decode("utf-8", errors="replace").splitlines()
    return [line[:width] for line in lines[:limit]]


def scan_head(path: str, options: ScanOptions) -> Any:
    """A real scan of the first ~64 KB (stopped via ``cancel``); returns the ScanResult."""
    scan = scan_function()
    seen = {"bytes": 0}

    def progress(p: Any) -> None:
        seen["bytes"] = p.bytes_read

    def cancel() -> bool:
        return seen["bytes"] >= PREVIEW_BYTES

    small = dataclasses.replace(options, chunk_bytes=PREVIEW_CHUNK)
    return scan([path], small, progress=progress, cancel=cancel)


def describe(path: str, options: ScanOptions) -> str:
    p = Path(path).expanduser()
    if p.is_dir():
        return f"{path} is a folder; keep typing (tab completes)."
    if not p.exists():
        return f"{path}: no such file yet."
    if p.suffix == ".ogive":
        sset = load_sketches(p)
        rows = [f"{name}: n={fmt.count(s.count)} unit={s.unit or '-'}" for name, s in sset.sketches.items()]
        return "sketch file with " + f"{len(rows)} sketch(es)\n" + "\n".join(rows[:8])
    out = ["first lines:"]
    out += ["  " + line for line in first_lines(str(p))]
    own = preview_function()
    if own is not None:
        result = own(str(p), options)
        out.append(str(getattr(result, "summary", result)))
        return "\n".join(out)
    try:
        result = scan_head(str(p), options)
    except Unavailable as exc:
        out.append(str(exc))
        return "\n".join(out)
    out.extend(summarise_head(result))
    return "\n".join(out)


def summarise_head(result: Any) -> list[str]:
    lines = []
    for name, s in result.sketches.sketches.items():
        prov = s.provenance
        vals = s.quantile(np.array([0.5, 0.99])) if s.count else [float("nan")] * 2
        unit = f" {s.unit}" if s.unit else ""
        lines.append(
            f"{name}: {s.count} values from {prov.rows_read} rows, p50 {fmt.num(vals[0])}{unit}, "
            f"p99 {fmt.num(vals[1])}{unit}; bad rows {prov.skipped_total}"
        )
        for reason, tally in list(prov.skipped.items())[:3]:
            where = ", ".join(tally.examples[:2])
            lines.append(f"  skipped {tally.count}: {reason}" + (f" ({where})" if where else ""))
    fmt_used = getattr(result, "format", "")
    scan_skipped = getattr(result, "skipped", None)
    if scan_skipped:
        total = sum(t.count for t in scan_skipped.values())
        lines.append(f"bad rows in the scan (all sketches): {total}")
    if fmt_used:
        lines.insert(0, f"read as {fmt_used}")
    for w in getattr(result, "warnings", [])[:2]:
        lines.append(f"note: {w}")
    if getattr(result, "bytes_read", 0) >= PREVIEW_BYTES:
        lines.append(f"(preview of the first {fmt.size(PREVIEW_BYTES)} only)")
    return lines
