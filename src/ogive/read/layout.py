"""What every record format hands the scan: a ``Layout`` and the frame its parse returns.

A layout is worked out once, from the first chunk of the first source, and then applied
to every chunk of every source (rotated logs are one stream). ``parse`` turns a chunk of
whole lines into a frame with these columns:

- ``v``: the value's text (or a number), null where the record has none;
- ``g``: the group key, when ``--by`` asks for one;
- ``t``: the time's text, when the scan has a time (given or found), written in
  ``Layout.time_format`` when the format fixes it;
- ``r``: optional; a skip reason where the record itself is unusable (not JSON, not an
  access-log line, a blank line), null elsewhere;
- ``line``: optional; each row's 0-based line within the chunk, for formats where rows
  and lines differ (an OTLP line holds many spans). Without it, row ``i`` is line ``i``.

Each format lives in its own module (``delimited``, ``ndjson``, ``text``, ``access``,
``syslog``, ``otlp``); ``records.plan`` picks one.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import numpy as np
import polars as pl
from numpy.typing import NDArray

from ..errors import OgiveError
from .encoding import NotUtf8, says_not_utf8

LINE_SEP = "\x1f"
"""Unit separator: a byte that does not occur in text logs, so polars' CSV reader can hand
us whole lines (much faster than splitting in Python). Chunks that do contain it are
split in Python instead."""

AS_LINES: dict[str, Any] = {
    "has_header": False,
    "separator": LINE_SEP,
    "quote_char": None,
    "infer_schema": False,
    "raise_if_empty": False,
}
"""polars' CSV reader options that make it hand over whole lines, one String each."""

# Skip reasons a record format can give (the value parser has its own in ``values``).
BLANK_LINE = "blank_line"
NOT_JSON = "not_json"
NOT_AN_OBJECT = "not_an_object"
NULL_VALUE = "null_value"
NOT_A_SCALAR = "not_a_scalar"
NO_MATCH = "no_match"
BAD_RECORD = "bad_record"
NO_SPANS = "no_spans"
BAD_SPAN = "bad_span"
W3C_DIRECTIVE = "w3c_directive"

NOT_RECORDS = (BLANK_LINE, NOT_JSON, NOT_AN_OBJECT, BAD_RECORD, NO_SPANS, W3C_DIRECTIVE)
"""Reasons that say a line is no record at all (so it has no group and no time either)."""
FORMAT_LINES = (W3C_DIRECTIVE,)
"""Reasons for lines the format itself writes between its records: counted like any
skip, but no fault of the data, so ``--strict`` does not stop at them."""

REASON_TEXT = {
    BLANK_LINE: "the line is blank",
    NOT_JSON: "the line is not valid JSON",
    NOT_AN_OBJECT: "the line is JSON but not an object",
    NULL_VALUE: "the value is null",
    NOT_A_SCALAR: "the value is an array or an object, not a number",
    NO_MATCH: "the --pattern regex does not match the line",
    BAD_RECORD: "the line does not have the layout of the rest of the file",
    NO_SPANS: "the line is an OTLP document without spans (or of another signal)",
    BAD_SPAN: "the span lacks a start or end time",
    W3C_DIRECTIVE: "the line is a directive of the W3C extended log format (#Fields:, #Date:), not an entry",
}
"""One phrase per reason, for ``--strict`` messages and the docs."""


@dataclass(frozen=True)
class Layout:
    """How to find value, group and time in the records of one scan."""

    format: str
    header: bool = False
    header_line: bytes = b""
    names: tuple[str, ...] = ("v",)
    """The value/group/time columns ``parse`` returns (a subset of v, g, t, in that order)."""
    description: str = ""
    """How the value is found, for provenance: ``column latency_ms``."""
    time_format: str | None = None
    """The form of ``t`` when the format fixes it (``clf`` for access logs); None: detect."""
    time_source: str = ""
    """Where the time comes from when no --time-field named it (``the [..] time stamp``)."""
    validates_utf8: bool = True
    """``parse`` can be given unchecked bytes (``strict_utf8``): it raises
    :class:`~.encoding.NotUtf8` instead of reading past bytes that are not UTF-8. True
    for this class's ``parse`` (polars' line splitter checks every byte); a subclass
    with a ``parse`` of its own says False unless it does the same."""
    one_row_per_line: bool = True
    """False where a line may hold several records (OTLP spans): polars' own line reader
    (``lazy_files``) then cannot number them, and the chunked reader is used."""
    input_unit: str | None = None
    """Unit of bare numbers implied by the format (``ns`` for OTLP), None when unknown."""
    notes: tuple[str, ...] = ()
    """Choices made from the file that the user must hear of, once (which column was taken)."""

    @property
    def has_time(self) -> bool:
        return "t" in self.names

    def parse(
        self,
        data: bytes,
        *,
        numeric: bool = False,
        literal_quotes: object = None,
        strict_utf8: bool = False,
    ) -> tuple[pl.DataFrame, bool]:
        """The frame of a chunk of whole lines, and whether a numeric attempt held.

        Line formats read lines (``frame``); CSV overrides this to let polars' CSV
        reader do the work.
        """
        return self.frame(split_lines(data, strict_utf8=strict_utf8)), False

    def with_blank_lines(self, df: pl.DataFrame, data: bytes) -> pl.DataFrame:
        """``df`` with its blank lines marked (column ``r``), when the parser could not
        mark them itself. Line formats mark their own."""
        return df

    def frame(self, lines: pl.Series) -> pl.DataFrame:
        """The frame for one String per line (null for a blank line)."""
        raise OgiveError(f"{self.format} records are not read line by line.")


def split_lines(data: bytes, *, strict_utf8: bool = False) -> pl.Series:
    """One String per line (CR of CRLF removed); a blank line gives null.

    ``strict_utf8``: bytes that are not UTF-8 raise :class:`NotUtf8` (the caller cleans
    them and counts their lines) instead of being replaced here unseen.
    """
    if not data:
        return pl.Series("line", [], dtype=pl.String)
    if LINE_SEP.encode() not in data:
        try:
            df = pl.read_csv(data, **AS_LINES)
        except pl.exceptions.PolarsError as exc:
            if strict_utf8 and says_not_utf8(exc):
                raise NotUtf8 from None
            df = None  # invalid UTF-8 that was not cleaned first: split in Python below
        if df is not None and df.width == 1:
            # One chunk: polars runs a regex over a many-chunk Series on all its threads
            # at once, which gained nothing with two chunks parsed side by side and cost
            # in switching (time and value regex, 1 GB: 5.75 -> 5.53 s, same CPU).
            return df.to_series().rechunk().alias("line")
    try:
        text = data.decode("utf-8", errors="strict" if strict_utf8 else "replace")
    except UnicodeDecodeError:
        raise NotUtf8 from None
    parts = text.split("\n")
    if parts and parts[-1] == "":
        parts.pop()
    return pl.Series("line", [p.removesuffix("\r") or None for p in parts], dtype=pl.String)


def uncaptured(regex: str) -> str:
    """``regex`` with its named groups made non-capturing: a match test runs much faster
    than an extract, and tells whether a line has the format's shape."""
    return re.sub(r"\(\?P<\w+>", "(?:", regex)


def blank(lines: pl.Series) -> pl.Series:
    """True where the line is empty or only white space."""
    return lines.is_null() | (lines.str.strip_chars().str.len_bytes() == 0)


def reason_column(n: int, parts: list[tuple[NDArray[np.intp], str]]) -> pl.Series | None:
    """The ``r`` column from (row indices, reason) pairs, the first pair naming a row
    winning; None when no row has a reason (the frame then goes without one)."""
    if not any(idx.size for idx, _ in parts):
        return None
    codes = np.zeros(n, dtype=np.int8)
    for k, (idx, _) in enumerate(parts, 1):
        codes[idx] = np.where(codes[idx] == 0, k, codes[idx])
    labels: list[str | None] = [None, *(reason for _, reason in parts)]
    return pl.Series("r", codes).replace_strict(list(range(len(labels))), labels, return_dtype=pl.String)


def rows_where(mask: pl.Series) -> NDArray[np.intp]:
    """Row indices where a boolean Series is true (null counts as false)."""
    return np.flatnonzero(mask.fill_null(False).to_numpy())
