"""Deciding how a source is laid out, and parsing whole-line chunks of it with polars.

A ``Layout`` is worked out once, from the first chunk of the first source, and then
applied to every chunk of every source (rotated logs are one stream). Each parse
returns one row per line of the chunk, in order, with the columns ``v`` (value text),
and when asked ``g`` (group key) and ``t`` (timestamp text), so that row ``i`` is line
``first_line + i`` and bad rows can be reported by line number.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass

import polars as pl

from ..errors import OgiveError
from .options import ScanOptions

SNIFF_LINES = 50
LAZY_BATCH_ROWS = 200_000
"""Rows per batch from polars' streaming reader: bounds its buffers (memory stays flat)."""
_LINE_SEP = "\x1f"
"""Unit separator: a byte that does not occur in text logs, so polars' CSV reader can hand
us whole lines (much faster than splitting in Python). Chunks that do contain it are
split in Python instead."""


@dataclass(frozen=True)
class Layout:
    format: str
    separator: str = ","
    header: bool = False
    header_line: bytes = b""
    width: int = 0
    """CSV/TSV: fields per record (from the sample, at least the widest column used)."""
    columns: tuple[int, ...] = ()
    """CSV/TSV: 0-based indices of the value, group and time columns (v, g, t order)."""
    names: tuple[str, ...] = ()
    """The output names matching ``columns`` (a subset of v, g, t)."""
    field_paths: tuple[tuple[str, str], ...] = ()
    """NDJSON: (output name, JSONPath) pairs."""
    pattern: str = ""
    groups: tuple[tuple[str, int], ...] = ()
    """Text: (output name, capture group index) pairs."""
    description: str = ""
    """How the value is found, for provenance: ``column latency_ms``."""

    def parse(
        self, data: bytes, *, numeric: bool = False, literal_quotes: Callable[[], None] | None = None
    ) -> tuple[pl.DataFrame, bool]:
        """Rows of ``data``; with ``numeric`` a CSV value column is first tried as Float64.

        Returns the frame and whether the numeric attempt held (callers stop trying
        once a chunk of durations or other text needed the String path).
        ``literal_quotes`` is called when a CSV chunk's quotes did not balance and it
        was read with ``"`` as a plain character instead.
        """
        if self.format in ("csv", "tsv"):
            if numeric:
                try:
                    return self._parse_csv(data, numeric=True), True
                except pl.exceptions.PolarsError:
                    pass
            try:
                return self._parse_csv(data, numeric=False), False
            except OgiveError:
                if b'"' not in data:
                    raise
            # A stray quote (``5" screen`` in an unquoted field, a field opened and never
            # closed) makes polars reject the whole chunk; quotes as plain characters
            # keep one row per line, so the other rows still count.
            df = self._parse_csv(data, numeric=False, quote=None)
            if literal_quotes is not None:
                literal_quotes()
            return df, False
        lines = split_lines(data)
        if self.format == "ndjson":
            cols = [lines.str.json_path_match(path).alias(name) for name, path in self.field_paths]
            return pl.DataFrame(cols), False
        return pl.DataFrame(
            [lines.str.extract(self.pattern, idx).alias(name) for name, idx in self.groups]
        ), False

    def _parse_csv(self, data: bytes, *, numeric: bool, quote: str | None = '"') -> pl.DataFrame:
        # Letting the reader parse floats itself skips a String column and a cast: the
        # fast path for the usual plain-number latency column. Any non-number makes it
        # raise, and the chunk is read again as text (durations, bad rows).
        # The full width is given as a schema, so that a short (ragged) first line
        # cannot narrow the frame for the whole chunk: short rows get nulls instead.
        vcol = self.columns[self.names.index("v")]
        schema = {f"c{i}": pl.Float64 if numeric and i == vcol else pl.String for i in range(self.width)}

        def read(encoding: str) -> pl.DataFrame:
            return pl.read_csv(
                data,
                has_header=False,
                separator=self.separator,
                quote_char=quote,
                columns=list(self.columns),
                schema=schema,
                missing_columns="insert",
                truncate_ragged_lines=True,
                raise_if_empty=False,
                encoding=encoding,  # type: ignore[arg-type]
            )

        try:
            try:
                df = read("utf8")
            except pl.exceptions.ComputeError as exc:
                if "utf-8" not in str(exc).lower():
                    raise
                # Invalid UTF-8 (binary junk, a truncated multi-byte character): read the
                # chunk again with such bytes replaced, so its good rows still count and a
                # mangled value is counted as not a number instead of ending the scan.
                df = read("utf8-lossy")
        except pl.exceptions.PolarsError as exc:
            if numeric:
                raise
            first = str(exc).splitlines()[0]
            raise OgiveError(f"cannot parse the {self.format.upper()} records: {first}") from None
        return df.rename(dict(zip(df.columns, self.names, strict=True)))


_CSV_BASE = int(pl.read_csv(b"x\n", has_header=False).columns[0].rsplit("_", 1)[1])
"""Polars names header-less columns ``column_N``; whether N starts at 0 or 1 is probed."""


def _csv_name(index: int) -> str:
    return f"column_{index + _CSV_BASE}"


def lazy_batches(layout: Layout, path: str, skip: int, *, numeric: bool) -> Iterator[pl.DataFrame]:
    """Batches of ``layout.parse``'s shape from polars' streaming reader, after ``skip`` lines."""
    if layout.format in ("csv", "tsv"):
        vname = _csv_name(layout.columns[layout.names.index("v")])
        lf = pl.scan_csv(
            path,
            has_header=False,
            separator=layout.separator,
            infer_schema=False,
            schema_overrides={vname: pl.Float64} if numeric else None,
            truncate_ragged_lines=True,
            skip_rows=skip,
            raise_if_empty=False,
        )
        width = len(lf.collect_schema())
        exprs = [
            (pl.col(_csv_name(c)) if c < width else pl.lit(None, dtype=pl.String)).alias(n)
            for c, n in zip(layout.columns, layout.names, strict=True)
        ]
    else:
        lf = pl.scan_csv(
            path,
            has_header=False,
            separator=_LINE_SEP,
            quote_char=None,
            infer_schema=False,
            truncate_ragged_lines=True,
            skip_rows=skip,
            raise_if_empty=False,
        )
        line = pl.first()
        if layout.format == "ndjson":
            exprs = [line.str.json_path_match(p).alias(name) for name, p in layout.field_paths]
        else:
            exprs = [line.str.extract(layout.pattern, idx).alias(name) for name, idx in layout.groups]
    yield from lf.select(exprs).collect_batches(chunk_size=LAZY_BATCH_ROWS)


def split_lines(data: bytes) -> pl.Series:
    """One String per line (CR of CRLF removed); a blank line gives null."""
    if not data:
        return pl.Series("line", [], dtype=pl.String)
    if _LINE_SEP.encode() not in data:
        df = pl.read_csv(
            data,
            has_header=False,
            separator=_LINE_SEP,
            quote_char=None,
            infer_schema=False,
            raise_if_empty=False,
        )
        if df.width == 1:
            return df.to_series().alias("line")
    text = data.decode("utf-8", errors="replace")
    parts = text.split("\n")
    if parts and parts[-1] == "":
        parts.pop()
    return pl.Series("line", [p.removesuffix("\r") or None for p in parts], dtype=pl.String)


def _sample_lines(data: bytes) -> list[str]:
    text = data[: 1 << 16].decode("utf-8", errors="replace")
    lines = [ln.rstrip("\r") for ln in text.split("\n")[:SNIFF_LINES]]
    return [ln for ln in lines if ln.strip()]


def _is_number(text: str) -> bool:
    try:
        float(text.strip().strip('"'))
    except ValueError:
        return False
    return True


def detect_format(data: bytes, options: ScanOptions) -> str:
    if options.format:
        return options.format
    lines = _sample_lines(data)
    if options.pattern:
        return "text"
    if lines and all(ln.lstrip().startswith("{") for ln in lines[:10]):
        return "ndjson"
    for fmt, sep in (("tsv", "\t"), ("csv", ","), ("csv", ";"), ("csv", "|")):
        counts = [ln.count(sep) for ln in lines]
        common = max(set(counts), key=counts.count) if counts else 0
        # Most lines, not all: a quoted field may hold the separator now and then.
        if common > 0 and counts.count(common) >= 0.9 * len(counts):
            return fmt if sep in "\t," else f"csv{sep}"
    if options.column is not None and lines:
        return "csv"  # a single-column file
    raise OgiveError(
        "the records look like free text; give --pattern with a regex whose group captures the number "
        "(or --format to say what they are)."
    )


def plan(data: bytes, options: ScanOptions) -> Layout:
    """The layout for this scan, from the first chunk's bytes and the options."""
    fmt = detect_format(data, options)
    if fmt.startswith("csv") or fmt == "tsv":
        sep = "\t" if fmt == "tsv" else (fmt[3:] or ",")
        return _plan_csv(data, options, "tsv" if fmt == "tsv" else "csv", sep)
    if fmt == "ndjson":
        return _plan_ndjson(options)
    if fmt == "text":
        return _plan_text(options)
    raise OgiveError(f"unknown format {fmt!r}; use csv, tsv, ndjson, text or parquet.")


def _plan_csv(data: bytes, options: ScanOptions, fmt: str, sep: str) -> Layout:
    if options.column is None and options.field is not None:
        # --field on a CSV: take it as the column rather than refusing.
        options = dataclasses.replace(options, column=options.field)
    sample = data[: 1 << 16]
    cut = sample.rfind(b"\n")
    sample = sample[: cut + 1] if cut >= 0 else sample
    try:
        rows = pl.read_csv(
            sample,
            has_header=False,
            separator=sep,
            infer_schema=False,
            truncate_ragged_lines=True,
            raise_if_empty=False,
            encoding="utf8-lossy",  # only names and a peek at the values are read here
        )
    except pl.exceptions.PolarsError:
        raise OgiveError(
            f"the first {len(sample):,} bytes do not read as {fmt.upper()} records (binary data, or "
            "another format?); say what they are with --format, or check the file."
        ) from None
    first = [str(x) if x is not None else "" for x in rows.row(0)] if rows.height else []
    header = options.header
    if header is None:
        wanted = [c for c in (options.column, options.by, options.time_field) if c is not None]
        if any(not c.isdigit() for c in wanted):
            header = True
        else:
            later = rows.slice(1, SNIFF_LINES)
            numeric_later = any(_is_number(str(v)) for r in later.iter_rows() for v in r if v is not None)
            header = bool(first) and not any(_is_number(f) for f in first if f) and numeric_later
    names = first if header else []
    header_line = data.split(b"\n", 1)[0] if header else b""

    def resolve(spec: str, what: str) -> int:
        if spec.isdigit():
            idx = int(spec) - 1
            if idx < 0:
                raise OgiveError(f"{what} positions start at 1, got {spec}.")
            return idx
        if not header:
            raise OgiveError(
                f"{what} {spec!r} is a name, but the file has no header line; give a 1-based position."
            )
        if spec not in names:
            raise OgiveError(f"no column named {spec!r} (the header has: {', '.join(names)}).")
        return names.index(spec)

    if options.column is None:
        if rows.width == 1:
            vcol = 0
        else:
            shown = ", ".join(names) if names else f"{rows.width} unnamed columns"
            raise OgiveError(
                f"several columns ({shown}); choose the value with --column NAME or a 1-based position."
            )
    else:
        vcol = resolve(options.column, "--column")
    cols: list[int] = [vcol]
    outs: list[str] = ["v"]
    for spec, out, what in ((options.by, "g", "--by"), (options.time_field, "t", "--time-field")):
        if spec is not None:
            idx = resolve(spec, what)
            if idx in cols:
                raise OgiveError(f"{what} names the same column as the value; choose another.")
            cols.append(idx)
            outs.append(out)
    order = sorted(range(len(cols)), key=lambda i: cols[i])
    label = options.column if options.column is not None else (names[0] if names else "1")
    return Layout(
        format=fmt,
        separator=sep,
        header=header,
        header_line=header_line,
        width=max(rows.width, max(cols) + 1),
        columns=tuple(cols[i] for i in order),
        names=tuple(outs[i] for i in order),
        description=f"column {label}",
    )


def _json_path(dotted: str) -> str:
    parts = dotted.split(".")
    if not all(parts):
        raise OgiveError(f"the field path {dotted!r} has an empty part; write it like timing.total_ms.")
    return "$." + ".".join(parts)


def _plan_ndjson(options: ScanOptions) -> Layout:
    if not options.field and not options.column:
        raise OgiveError(
            "the records are NDJSON; name the value with --field (a dotted path such as timing.total_ms)."
        )
    field = options.field or options.column or ""
    paths = [("v", _json_path(field))]
    if options.by:
        paths.append(("g", _json_path(options.by)))
    if options.time_field:
        paths.append(("t", _json_path(options.time_field)))
    return Layout(format="ndjson", field_paths=tuple(paths), description=f"field {field}")


def _plan_text(options: ScanOptions) -> Layout:
    pattern = options.pattern
    if not pattern:
        raise OgiveError("free-text records need --pattern, a regex whose group captures the number.")
    try:
        compiled = re.compile(pattern)
    except re.error as exc:
        raise OgiveError(f"the --pattern regex does not compile: {exc}.") from None
    try:
        pl.Series([""], dtype=pl.String).str.extract(pattern, 0)
    except pl.exceptions.PolarsError as exc:
        raise OgiveError(
            f"the --pattern regex is not accepted by the parser: {str(exc).splitlines()[0]}."
        ) from None
    named = compiled.groupindex
    if "value" in named:
        vidx = named["value"]
    elif compiled.groups == 1:
        vidx = 1
    else:
        raise OgiveError(
            f"the --pattern regex has {compiled.groups} groups; use exactly one, "
            "or name the number (?P<value>...)."
        )
    groups = [("v", vidx)]
    for spec, out, what in ((options.by, "g", "--by"), (options.time_field, "t", "--time-field")):
        if spec is not None:
            if spec not in named:
                raise OgiveError(
                    f"with free text, {what} {spec!r} must be a named group (?P<{spec}>...) of --pattern."
                )
            groups.append((out, named[spec]))
    return Layout(format="text", pattern=pattern, groups=tuple(groups), description=f"pattern {pattern}")
