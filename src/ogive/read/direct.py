"""Sources that polars reads itself, frame by frame: Parquet files, and (``lazy_files``)
uncompressed files on disk walked by polars' streaming CSV reader.

Their frames have the shape :meth:`ogive.read.feed.Feed.parse` gives, so the scan
prepares and commits them like any other; rows arrive in order, so row ``i`` of a
source is line (or Parquet row) ``first + i``.
"""

from __future__ import annotations

from collections.abc import Iterator

import polars as pl

from ..errors import OgiveError
from . import records, sources, urls
from .decode import Decoder
from .feed import Feed, prefetch
from .options import ScanOptions

LAZY_HEAD = 1 << 20
"""Bytes of a plain file read to decide its layout before polars' reader takes over."""
PARQUET_BATCH_ROWS = 1 << 20
POLARS_STORES = ("s3", "s3a", "gs", "gcs", "az", "abfs", "abfss")
"""URL schemes polars' Parquet reader opens itself (credentials from the environment)."""


class LazyFile:
    """An uncompressed file on disk read by polars' own streaming reader (its fastest path).

    The layout still comes from the feeder, decided from the file's head.
    """

    def __init__(self, src: sources.Opened, feed: Feed, header: int, avg_line: float) -> None:
        self.src = src
        self.feed = feed
        self.header = header
        """Header lines at the top (0, 1, or 2 with a ``sep=`` line): the frames start after them."""
        self.avg_line = avg_line

    @classmethod
    def open(cls, src: sources.Opened, feed: Feed) -> LazyFile | None:
        """The lazy reading of ``src``, or None when it must go the chunked way (one huge
        line, or an empty file: the chunked reader handles both)."""
        with open(src.name, "rb") as fh:  # a separate handle: ``src`` stays at offset 0
            head = fh.read(min(feed.chunk_size(), LAZY_HEAD))
        cut = head.rfind(b"\n")
        if cut < 0:
            return None
        sample = head[: cut + 1]
        if not feed.plan(sample).one_row_per_line:
            return None
        avg_line = max(1.0, len(sample) / max(1, sample.count(b"\n")))
        return cls(src, feed, feed.starts_with_header(sample), avg_line)

    def frames(self) -> Iterator[tuple[pl.DataFrame, int]]:
        """(frame, about how far into the file it reaches in bytes), in order."""
        layout, feed, src = self.feed.layout, self.feed, self.src
        assert layout is not None
        skip = self.header
        done_rows = 0
        while True:
            try:
                batches = records.lazy_batches(layout, src.name, skip + done_rows, numeric=feed.numeric)
                for batch in prefetch(batches):
                    if batch.height == 0:
                        continue
                    done_rows += batch.height
                    yield batch, min(int((skip + done_rows) * self.avg_line), src.size or 0)
                return
            except pl.exceptions.PolarsError as exc:
                if feed.numeric:
                    feed.numeric = False  # a value that is not a plain number: go on reading text
                    continue
                first = str(exc).splitlines()[0]
                raise OgiveError(f"{src.display}: cannot parse the records: {first}") from None


def parquet_frames(
    src: sources.Opened, options: ScanOptions, feed: Feed, decoder: Decoder
) -> Iterator[pl.DataFrame]:
    """Frames of the value (and group and time) columns of a Parquet file.

    Columns are named as in the file, by 1-based position, or as ``struct.field``.
    Temporal time columns are handed on as epoch microseconds.
    """
    o = options
    if src.name == "-" or src.compression is not None:
        raise OgiveError(f"{src.display}: Parquet must be a plain file on disk (not stdin or compressed).")
    want = o.column or o.field
    if not want:
        raise OgiveError(f"{src.display} is Parquet; name the value column with --column (or --field).")
    try:
        # polars reads object stores itself, fetching only the row groups a part needs;
        # other URLs (memory://, https://) through the file fsspec opened.
        native = not urls.is_url(src.name) or src.name.split("://")[0] in POLARS_STORES
        lf = pl.scan_parquet(src.name if native else src.raw)
        if src.rows is not None:
            lf = lf.slice(*src.rows)
        schema = lf.collect_schema()
    except pl.exceptions.PolarsError as exc:
        raise OgiveError(f"{src.display}: cannot read Parquet: {str(exc).splitlines()[0]}") from None
    names = list(schema.names())

    def column(spec: str, out: str) -> pl.Expr:
        if spec.isdigit() and spec not in names:
            i = int(spec) - 1
            if not 0 <= i < len(names):
                raise OgiveError(f"{src.display} has {len(names)} columns; position {spec} is out of range.")
            return pl.col(names[i]).alias(out)
        head, *rest = spec.split(".")
        if head not in names:
            raise OgiveError(f"{src.display} has no column {head!r} (it has: {', '.join(names[:20])}).")
        expr = pl.col(head)
        for part in rest:
            expr = expr.struct.field(part)
        return expr.alias(out)

    exprs = [column(want, "v")]
    if o.by:
        exprs.append(column(o.by, "g").cast(pl.String))
    if o.time_field:
        exprs.append(column(o.time_field, "t"))
    if feed.layout is None:
        cols = tuple(n for n, on in (("v", True), ("g", bool(o.by)), ("t", bool(o.time_field))) if on)
        layout = records.Layout(format="parquet", names=cols, description=f"column {want}")
        feed.layout = records.needs_time(layout, o)
    try:
        for batch in lf.select(exprs).collect_batches(chunk_size=PARQUET_BATCH_ROWS):
            if "t" in batch.columns and batch.schema["t"] != pl.String:
                if batch.get_column("t").dtype.is_temporal():
                    batch = batch.with_columns(
                        pl.col("t").dt.replace_time_zone(None).dt.epoch("us").cast(pl.String)
                    )
                    decoder.time_format = decoder.time_format or "epoch_us"
                else:
                    batch = batch.with_columns(pl.col("t").cast(pl.String))
            yield batch
    except pl.exceptions.PolarsError as exc:
        raise OgiveError(f"{src.display}: cannot read Parquet: {str(exc).splitlines()[0]}") from None
