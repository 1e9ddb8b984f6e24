"""What the open prompt shows before committing to a scan: first lines, values parsed, bad rows.

The reader decides what parses; this only asks it: the preview is a real scan of the
first ~64 KB in small chunks, stopped through the scan's own cancel hook, so the counts
shown are the reader's. Runs in the prompt's worker thread (it imports the reader).
"""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import numpy as np

from ..errors import OgiveError
from ..numbers import count, number, size
from ..read import ScanOptions, ScanProgress, ScanResult, scan
from ..read.sources import Opened
from ..store import load_ref, sketch_ref
from .sources import not_a_sketch

PREVIEW_BYTES = 64 * 1024
PREVIEW_CHUNK = 16 * 1024
RAW_LINES = 4

FIELD_NAMES = {
    "--format": "the format field",
    "--field": "the field field",
    "--column": "the column field",
    "--pattern": "the pattern field",
    "--unit": "the unit field",
    "--input-unit": "the unit field",
    "--by": "the by field",
    "--split-at": "the split-at field",
    "--time-field": "the time field",
}
"""The reader's messages name the CLI flags; in the dialog they name its fields."""


def in_dialog_words(text: str) -> str:
    """``give --column NAME`` -> ``give the column field NAME``: the dialog has fields, not flags."""
    return re.sub(
        r"(--[a-z][a-z-]*)(?: [A-Z][A-Z_|]*\b)?",
        lambda m: FIELD_NAMES.get(m.group(1), m.group(0)),
        text,
    )


def first_lines(path: str, limit: int = RAW_LINES, width: int = 200) -> list[str]:
    """The first lines as text, opened the way the reader opens them (compression by magic bytes)."""
    try:
        src = Opened(path)
    except OgiveError as exc:
        return [str(exc)]
    try:
        if src.is_parquet:
            return ["(parquet: columns, not lines)"]
        data = src.read(PREVIEW_BYTES)
    except OgiveError as exc:
        return [str(exc)]
    finally:
        src.close()
    return [line[:width] for line in data.decode("utf-8", errors="replace").splitlines()[:limit]]


def scan_head(path: str, options: ScanOptions) -> ScanResult:
    """A real scan of the first ~64 KB (stopped via ``cancel``)."""
    seen = {"bytes": 0}

    def progress(p: ScanProgress) -> None:
        seen["bytes"] = p.bytes_read

    def cancel() -> bool:
        return seen["bytes"] >= PREVIEW_BYTES

    small = dataclasses.replace(options, chunk_bytes=PREVIEW_CHUNK)
    return scan([path], small, progress=progress, cancel=cancel)


def describe(path: str, options: ScanOptions) -> str:
    p = Path(path).expanduser()
    if p.is_dir():
        return f"{path} is a folder; keep typing (tab completes)."
    refused = not_a_sketch(str(p), options)
    if refused:
        return refused  # what enter would say: the prompt and the open agree
    ref = sketch_ref(str(p))
    if ref is None and not p.exists():
        return f"{path}: no such file yet."
    if ref is not None:
        sset = load_ref(ref)
        rows = [f"{name}: n={count(s.count)} unit={s.unit or '-'}" for name, s in sset.sketches.items()]
        return f"sketch file with {len(rows)} sketch(es)\n" + "\n".join(rows[:8])
    # What was parsed comes first: the dialog caps the preview's height, and the values line
    # is the one the user must see (a long first line once pushed it out of sight).
    try:
        out = summarise_head(scan_head(str(p), options))
    except OgiveError as exc:
        out = [in_dialog_words(str(exc))]
    out.extend(["first lines:", *("  " + line for line in first_lines(str(p)))])
    return "\n".join(out)


def summarise_head(result: ScanResult) -> list[str]:
    lines = [f"read as {result.format}"] if result.format else []
    for name, s in result.sketches.sketches.items():
        prov = s.provenance
        vals = s.quantile(np.array([0.5, 0.99])) if s.count else [float("nan")] * 2
        unit = f" {s.unit}" if s.unit else ""
        lines.append(
            f"{name}: {s.count} values from {prov.rows_read} rows, p50 {number(vals[0])}{unit}, "
            f"p99 {number(vals[1])}{unit}; bad rows {prov.skipped_total}"
        )
        for reason, tally in list(prov.skipped.items())[:3]:
            where = ", ".join(tally.examples[:2])
            lines.append(f"  skipped {tally.count}: {reason}" + (f" ({where})" if where else ""))
    if result.skipped:
        total = sum(t.count for t in result.skipped.values())
        lines.append(f"bad rows in the scan (all sketches): {total}")
    lines.extend(f"note: {in_dialog_words(w)}" for w in result.warnings[:2])
    if result.bytes_read >= PREVIEW_BYTES:
        lines.append(f"(preview of the first {size(PREVIEW_BYTES)} only)")
    return lines
