"""Deciding how a source is laid out (``plan``), and the streaming path for plain files.

The record formats live in their own modules (``delimited``, ``ndjson``, ``text``,
``access``, ``syslog``, ``otlp``) and share the contract of ``layout.Layout``; the
format is recognised from the first chunk's bytes by ``sniff.detect`` unless
``--format`` names it. Kept here so callers have one entry point.
"""

from __future__ import annotations

from collections.abc import Iterator

import polars as pl

from ..errors import OgiveError
from . import access, delimited, ndjson, otlp, sniff, syslog, text, w3c
from .delimited import SNIFF_LINES, CsvLayout
from .layout import AS_LINES, Layout, split_lines
from .options import ScanOptions

__all__ = ["LAZY_BATCH_ROWS", "SNIFF_LINES", "Layout", "lazy_batches", "plan", "split_lines"]

LAZY_BATCH_ROWS = 200_000
"""Rows per batch from polars' streaming reader: bounds its buffers (memory stays flat)."""


def detect_format(data: bytes, options: ScanOptions) -> str:
    """The record format of ``data`` (``csv;`` and ``csv|`` for other separators)."""
    fmt, sep = sniff.detect(data, options)
    return fmt if sep in "\t," or fmt != "csv" else f"csv{sep}"


def plan(data: bytes, options: ScanOptions) -> Layout:
    """The layout for this scan, from the first chunk's bytes and the options; a layout
    that cannot be worked out from bytes that are not UTF-8 says to name the encoding."""
    try:
        return _plan(data, options)
    except OgiveError as exc:
        head = data[: 1 << 16]
        if options.encoding is None and not head.isascii() and _not_utf8(head):
            raise OgiveError(
                f"{str(exc).rstrip('.')}. The first lines hold bytes that are not UTF-8: if the file is in "
                "another encoding, name it with --encoding (cp1252 for most Windows exports)."
            ) from None
        raise


def _not_utf8(head: bytes) -> bool:
    try:
        head.decode("utf-8")
    except UnicodeDecodeError as exc:
        return exc.start < len(head) - 3  # not a character cut at the end of the sample
    return False


def _plan(data: bytes, options: ScanOptions) -> Layout:
    fmt, sep = sniff.detect(data, options)
    if fmt in ("csv", "tsv"):
        return needs_time(delimited.plan(data, options, fmt, sep), options)
    planners = {
        "ndjson": ndjson.plan,
        "text": text.plan,
        "access": access.plan,
        "syslog": syslog.plan,
        "w3c": w3c.plan,
        "otlp": otlp.plan,
    }
    planner = planners.get(fmt)
    if planner is None:
        raise OgiveError(f"unknown format {fmt!r}; use one of {', '.join(sniff.FORMATS)}.")
    return needs_time(planner(data, options), options)


def needs_time(layout: Layout, options: ScanOptions) -> Layout:
    """``layout``, when it has a time wherever --split-at or --window needs one."""
    for flag, given in (("--split-at", options.split_at), ("--window", options.window)):
        if given is not None and not layout.has_time:
            raise OgiveError(
                f"{flag} needs each record's time: name its column or field with --time-field "
                "(access logs, syslog, OTLP spans and text lines that begin with a time stamp "
                "carry their own)."
            )
    return layout


def lazy_batches(layout: Layout, path: str, skip: int, *, numeric: bool) -> Iterator[pl.DataFrame]:
    """Batches of ``layout.parse``'s shape from polars' streaming reader, after ``skip`` lines."""
    if isinstance(layout, CsvLayout):
        yield from layout.lazy(path, skip, numeric=numeric).collect_batches(chunk_size=LAZY_BATCH_ROWS)
        return
    lf = pl.scan_csv(path, **AS_LINES, truncate_ragged_lines=True, skip_rows=skip)
    for batch in lf.select(pl.first().alias("line")).collect_batches(chunk_size=LAZY_BATCH_ROWS):
        yield layout.frame(batch.to_series())
