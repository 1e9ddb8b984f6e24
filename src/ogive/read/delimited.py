"""CSV and TSV records (RFC 4180): sniffing the separator, choosing the value column.

Quoting follows RFC 4180 section 2: a field in double quotes may hold the separator,
newlines and doubled quotes (``""``). The sniffer therefore counts fields with a real
CSV parser (Python's ``csv`` module on the first lines), never by counting separator
characters, so a first row like ``"Smith, J.",12`` is not taken for free text.
"""

from __future__ import annotations

import csv
import dataclasses
import functools
import io
import re
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass
from typing import TypeVar

import numpy as np
import polars as pl

from ..errors import OgiveError, excerpt
from .encoding import NotUtf8, says_not_utf8
from .layout import BLANK_LINE, Layout
from .options import ScanOptions
from .values import looks_numeric

SNIFF_LINES = 50
SEPARATORS = ("\t", ",", ";", "|")
TIME_NAMES = frozenset(
    {"time", "timestamp", "ts", "@timestamp", "date", "datetime", "epoch", "when", "start", "end"}
)
"""Column names taken for times, never for the value, when the value column is chosen."""
_Col = TypeVar("_Col", pl.Expr, pl.Series)
MOST = 0.8
"""Share of sampled rows that must agree (a few junk rows among 50 are tolerated)."""


@dataclass(frozen=True)
class CsvLayout(Layout):
    separator: str = ","
    width: int = 0
    """Fields per record (from the sample, at least the widest column used)."""
    columns: tuple[int, ...] = ()
    """0-based indices of the value, group and time columns, in file order."""
    validates_utf8: bool = True
    decimal_comma: bool = False
    """The value column writes its numbers with a decimal comma (``12,5``): see
    :func:`decimal_comma`."""

    def parse(
        self, data: bytes, *, numeric: bool = False, literal_quotes: object = None, strict_utf8: bool = False
    ) -> tuple[pl.DataFrame, bool]:
        """Rows of ``data``; with ``numeric`` the value column is first tried as Float64.

        Returns the frame and whether the numeric attempt held (callers stop trying
        once a chunk of durations or other text needed the String path).
        ``literal_quotes`` is called when a chunk's quotes did not balance and it was
        read with ``"`` as a plain character instead. ``strict_utf8``: bytes that are not
        UTF-8 raise :class:`NotUtf8` (the caller cleans them) instead of being replaced.
        """
        if numeric and not (self.decimal_comma and self.separator == ","):
            # (polars reads a decimal comma itself unless the comma separates fields.)
            try:
                return self._read(data, numeric=True, strict_utf8=strict_utf8), True
            except pl.exceptions.PolarsError:
                pass
        try:
            return self._read(data, numeric=False, strict_utf8=strict_utf8), False
        except OgiveError:
            if b'"' not in data:
                raise
        # A stray quote (``5" screen`` in an unquoted field, a field opened and never
        # closed) makes polars reject the whole chunk; quotes as plain characters keep
        # one row per line, so the other rows still count.
        df = self._read(data, numeric=False, quote=None)
        if callable(literal_quotes):
            literal_quotes()
        return df, False

    def with_blank_lines(self, df: pl.DataFrame, data: bytes) -> pl.DataFrame:
        """Blank lines marked ``blank_line``, as every other format marks them.

        polars reads an empty line as a row of nulls, which counted as a record with a
        missing field and, with ``--by``, made a ``FIELD=(missing)`` group of its own.
        Looked for only when every column read has a null (a free count per column);
        then rows null in every column are checked against their lines' bytes (``,,``
        is a record of empty fields, not a blank line). Rows are matched to lines only
        when ``data`` holds exactly one line per row.
        """
        if df.height == 0 or any(df.get_column(c).null_count() == 0 for c in df.columns):
            return df
        empty = np.flatnonzero(df.select(pl.all_horizontal(pl.all().is_null())).to_series().to_numpy())
        if not empty.size:
            return df
        a = np.frombuffer(data, dtype=np.uint8)
        newlines = np.flatnonzero(a == 0x0A)
        if newlines.size + (a.size > 0 and a[-1] != 0x0A) != df.height:
            return df  # quoted fields span lines here: rows are not lines
        starts = np.concatenate(([0], newlines + 1))[empty]
        ends = np.append(newlines, a.size)[empty]
        length = ends - starts
        cr_only = (length == 1) & (a[np.minimum(starts, max(a.size - 1, 0))] == 0x0D)
        blank = empty[(length == 0) | cr_only]
        if not blank.size:
            return df
        mask = np.zeros(df.height, dtype=bool)
        mask[blank] = True
        r = pl.when(pl.Series(mask)).then(pl.lit(BLANK_LINE)).otherwise(pl.lit(None, dtype=pl.String))
        return df.with_columns(r.alias("r"))

    def _read(
        self, data: bytes, *, numeric: bool, quote: str | None = '"', strict_utf8: bool = False
    ) -> pl.DataFrame:
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
                decimal_comma=numeric and self.decimal_comma,
            )

        try:
            try:
                df = read("utf8")
            except pl.exceptions.ComputeError as exc:
                if not says_not_utf8(exc):
                    raise
                if strict_utf8:
                    raise NotUtf8 from None
                # Invalid UTF-8 the byte cleaner did not see (a caller that skipped it):
                # read with such bytes replaced rather than end the scan.
                df = read("utf8-lossy")
        except pl.exceptions.PolarsError as exc:
            if numeric:
                raise
            fmt = self.format.upper()
            raise OgiveError(
                f"cannot read the lines as {fmt} records; check that the file is {fmt} (or name its format "
                f"with --format) and that its quotes are balanced (the parser said: {excerpt(str(exc), 80)})."
            ) from None
        df = df.rename(dict(zip(df.columns, self.names, strict=True)))
        return df.with_columns(comma_to_point(pl.col("v"))) if self.decimal_comma and not numeric else df

    def lazy(self, path: str, skip: int, *, numeric: bool) -> pl.LazyFrame:
        """The same columns from polars' streaming reader, after ``skip`` lines."""
        vname = _csv_name(self.columns[self.names.index("v")])
        lf = pl.scan_csv(
            path,
            has_header=False,
            separator=self.separator,
            infer_schema=False,
            schema_overrides={vname: pl.Float64} if numeric else None,
            truncate_ragged_lines=True,
            skip_rows=skip,
            raise_if_empty=False,
            decimal_comma=numeric and self.decimal_comma,
        )
        width = len(lf.collect_schema())
        lf = lf.select(
            (pl.col(_csv_name(c)) if c < width else pl.lit(None, dtype=pl.String)).alias(n)
            for c, n in zip(self.columns, self.names, strict=True)
        )
        return lf.with_columns(comma_to_point(pl.col("v"))) if self.decimal_comma and not numeric else lf


DECIMAL_COMMA_NOTE = (
    "value: numbers are written with a decimal comma (12,5 is read as 12.5); "
    "a value that also holds a point (1.234,5) is not read and is counted."
)


def comma_to_point(v: _Col) -> _Col:
    """Text values of a decimal-comma column as the value parser reads them (``12,5ms`` ->
    ``12.5ms``). A point is read as a decimal point too, as polars' own decimal-comma
    reader does on the fast path, so both paths agree; a value with two marks
    (``1.234,5``, digit grouping) reads as no number and is counted."""
    return v.str.replace_all(",", ".", literal=True)


def comma_number(text: str) -> bool:
    """One field that reads as a number (or duration) with a decimal comma: ``12,5``,
    ``-0,25``, ``12,5ms``."""
    t = text.strip().strip('"').strip()
    return t.count(",") == 1 and looks_numeric(t.replace(",", "."))


def decimal_comma(values: list[str], separator: str) -> bool:
    """Whether a column's sample values write numbers with a decimal comma (``12,5``).

    Why: spreadsheets in much of Europe export ``;``-separated files with ``12,5``. Read
    with a point only, every value was ``not_a_number``; worse, the sniffer took the
    comma for the separator and summarised the digits after it.

    Reading a comma as the decimal mark reads every value the point reading reads (a
    point still counts as one), so one value written so is enough, unless the comma may
    be digit grouping instead: a value with two commas (``1,234,567``), or, in a
    comma-separated file (quoted fields), every comma followed by exactly three digits
    (``"1,234"``). Those columns are read as before: such values are counted, not read.
    """
    vals = [v.strip().strip('"').strip() for v in values]
    commas = [v for v in vals if comma_number(v)]
    if not commas or any(_GROUPED.match(v) for v in vals):
        return False
    return separator != "," or any(_digits_after_comma(v) != 3 for v in commas)


_GROUPED = re.compile(r"^[-+]?\d{1,3}(?:,\d{3}){2,}(?:\.\d*)?$")
"""Digit grouping with commas, beyond doubt (two commas or more)."""


def _digits_after_comma(text: str) -> int:
    after = text.split(",", 1)[1]
    return len(after) - len(after.lstrip("0123456789"))


@functools.cache
def _csv_base() -> int:
    """Polars names header-less columns ``column_N``; whether N starts at 0 or 1 is probed
    (once, when first needed: a read at import cost every command 7 ms)."""
    return int(pl.read_csv(b"x\n", has_header=False).columns[0].rsplit("_", 1)[1])


def _csv_name(index: int) -> str:
    return f"column_{index + _csv_base()}"


def sample_rows(data: bytes, sep: str) -> list[list[str]]:
    """The first records of ``data`` as lists of fields, by RFC 4180 rules."""
    text = data[: 1 << 16].decode("utf-8", errors="replace").lstrip("\ufeff")
    cut = text.rfind("\n")
    text = text[: cut + 1] if cut >= 0 else text
    reader = csv.reader(io.StringIO(text), delimiter=sep, quotechar='"', doublequote=True, strict=False)
    rows: list[list[str]] = []
    try:
        for row in reader:
            if row and any(f.strip() for f in row):
                rows.append(row)
            if len(rows) >= SNIFF_LINES:
                break
    except csv.Error:
        pass  # a field longer than the csv module allows: the rows so far decide
    return rows


SEP_LINE = re.compile(rb"^(?:\xef\xbb\xbf)?sep=([^\r\n])\r?(?:\n|$)", re.IGNORECASE)
"""A spreadsheet's first line naming the separator (``sep=;``), before the header: a
convention of spreadsheet programs, not of RFC 4180 (common practice)."""


def separator_line(data: bytes) -> str | None:
    """The separator a leading ``sep=X`` line names, or None."""
    m = SEP_LINE.match(data)
    return m[1].decode("latin-1") if m else None


def sniff(data: bytes, *, want_column: bool = False) -> str | None:
    """The separator when the first lines are delimited records, else None.

    Delimited means: most rows have the same number (>= 2) of fields, counted by a CSV
    parser, and at least one column holds numbers in most rows (a log whose lines each
    have one comma is not a table). With ``want_column`` (``--column`` was given) the
    second condition is dropped. A file of one number per line is one-column CSV. A
    ``sep=X`` first line says the separator outright.
    """
    named = separator_line(data)
    if named is not None:
        return named
    best: tuple[int, int, str] | None = None
    loose: tuple[int, str] | None = None  # ragged rows, for when --column says it is a table
    for sep in SEPARATORS:
        rows = sample_rows(data, sep)
        if not rows:
            return None
        widths = Counter(len(r) for r in rows)
        width, count = widths.most_common(1)[0]
        if width >= 2 and (loose is None or count > loose[0]):
            loose = (count, sep)
        if width < 2 or count < MOST * len(rows):
            continue
        if not want_column and not numeric_columns(rows[1:] or rows, width, sep):
            continue
        # The widest wins; at equal width, the one more rows agree with (a decimal comma
        # splits ``host;12,5`` in two at the comma too, but not the header ``host;dur``).
        if best is None or (width, count) > best[:2]:
            best = (width, count, sep)
    if best is not None:
        return best[2]
    if want_column:
        return loose[1] if loose is not None else ","
    rows = sample_rows(data, ",")
    if rows and all(len(r) == 1 for r in rows):
        body = rows[1:] or rows
        if sum(looks_numeric(r[0]) for r in body) >= MOST * len(body):
            return ","
    return None


def numeric_columns(rows: list[list[str]], width: int, separator: str) -> list[int]:
    """Columns whose non-empty values are numbers (or durations) in most rows, read with
    a decimal comma where the column writes one (:func:`decimal_comma`)."""
    out = []
    for c in range(width):
        vals = [r[c].strip() for r in rows if c < len(r) and r[c].strip()]
        if not vals:
            continue
        comma = decimal_comma(vals, separator)
        if sum(looks_numeric(v) or (comma and comma_number(v)) for v in vals) >= MOST * len(vals):
            out.append(c)
    return out


def plan(data: bytes, options: ScanOptions, fmt: str, sep: str) -> CsvLayout:
    """The layout for delimited records: header or not, which columns, and why."""
    if options.column is None and options.field is not None:
        # --field on a CSV: take it as the column rather than refusing.
        options = dataclasses.replace(options, column=options.field)
    preamble = b""
    if separator_line(data) is not None:
        # ``sep=;`` above the header: the separator was read from it; the header (or the
        # first record) is the next line, and both lines come off each source's top.
        preamble, _, data = data.partition(b"\n")
    rows = sample_rows(data, sep)
    first = rows[0] if rows else []
    width = max((len(r) for r in rows), default=0)
    header = options.header
    if header is None:
        wanted = [c for c in (options.column, options.by, options.time_field) if c is not None]
        if any(not c.isdigit() for c in wanted):
            header = True
        else:
            later_numeric = bool(numeric_columns(rows[1:], width, sep)) if len(rows) > 1 else False
            header = bool(first) and not any(looks_numeric(f) for f in first if f.strip()) and later_numeric
    names = [f.strip() for f in first] if header else []
    header_line = data.split(b"\n", 1)[0] if header else b""
    if preamble:
        header_line = preamble + b"\n" + header_line if header else preamble
    resolve = _resolver(names, header)

    taken: list[int] = []
    notes: list[str] = []
    for spec, what in ((options.by, "--by"), (options.time_field, "--time-field")):
        if spec is not None:
            taken.append(resolve(spec, what))
    if options.column is None:
        vcol, note = _choose_value(rows[1:] if header else rows, width, names, taken, sep)
        notes.append(note)
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
    label = names[vcol] if names and vcol < len(names) and names[vcol] else str(vcol + 1)
    comma = decimal_comma([r[vcol] for r in (rows[1:] if header else rows) if vcol < len(r)], sep)
    if comma:
        notes.append(DECIMAL_COMMA_NOTE)
    return CsvLayout(
        format=fmt,
        separator=sep,
        header=header or bool(preamble),
        header_line=header_line,
        width=max(width, max(cols) + 1),
        columns=tuple(cols[i] for i in order),
        names=tuple(outs[i] for i in order),
        description=f"column {label}",
        notes=tuple(n for n in notes if n),
        decimal_comma=comma,
    )


def _resolver(names: list[str], header: bool) -> Callable[[str, str], int]:
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
            shown = ", ".join(excerpt(n, 30) for n in names[:8]) + (
                f", … ({len(names) - 8} more)" if len(names) > 8 else ""
            )
            raise OgiveError(f"no column named {excerpt(spec, 40)!r} (the header has: {shown}).")
        same = [str(i + 1) for i, n in enumerate(names) if n == spec]
        if len(same) > 1:
            raise OgiveError(
                f"{len(same)} columns are named {excerpt(spec, 40)!r} (positions {', '.join(same)}); "
                f"give {what} the position of the one meant."
            )
        return names.index(spec)

    return resolve


def _choose_value(
    rows: list[list[str]], width: int, names: list[str], taken: list[int], separator: str
) -> tuple[int, str]:
    """The only column that holds numbers (times, group and time columns aside), and a
    note saying it was taken; an error naming the candidates otherwise."""
    if width <= 1:
        return 0, ""

    def name(c: int) -> str:
        return names[c] if c < len(names) and names[c] else f"column {c + 1}"

    numeric = [
        c
        for c in numeric_columns(rows, width, separator)
        if c not in taken and not (c < len(names) and names[c].strip().lower() in TIME_NAMES)
    ]
    if len(numeric) == 1:
        c = numeric[0]
        label = f"column {names[c]!r}" if c < len(names) and names[c] else f"column {c + 1}"
        return c, f"value: {label}, the only column that holds numbers (choose another with --column)."
    shown = ", ".join(name(c) for c in numeric) if numeric else ", ".join(names) or f"{width} unnamed columns"
    if numeric:
        raise OgiveError(f"several columns hold numbers ({shown}); choose the value with --column NAME or N.")
    raise OgiveError(f"no column holds numbers in the first rows ({shown}); choose one with --column.")
