"""OpenTelemetry trace exports in the OTLP JSON encoding: each span's duration is a value.

Follows the OTLP specification's "JSON Protobuf Encoding" (opentelemetry-proto,
``docs/specification.md``) and the trace messages of ``opentelemetry/proto/trace/v1/
trace.proto``: a ``TracesData`` document ``{"resourceSpans": [{"resource": {...},
"scopeSpans": [{"scope": {...}, "spans": [...]}]}]}`` per line, as a collector's file
exporter writes them. Keys are lowerCamelCase; ``startTimeUnixNano``/``endTimeUnixNano``
are 64-bit integers, which the proto3 JSON mapping writes as decimal strings (numbers
are accepted too: "either numbers or strings are accepted when decoding"); enums
(``kind``, ``status.code``) are integers, and unknown fields are ignored, as the spec
requires of receivers. Enum names are accepted as well, though the spec forbids them.

A span's value is ``endTimeUnixNano - startTimeUnixNano`` in nanoseconds, computed in
integers (a float64 of an epoch in ns is not exact); its time is its start. ``--by``
takes ``service.name`` (or any resource attribute), ``name`` (the span name), ``kind``
(``server``, ``client``, ...), ``status`` (``unset``, ``ok``, ``error``) or any span
attribute. The counted unit is the span: a line adds one row per span, and a line
without spans (or not OTLP traces at all) one skipped row.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import polars as pl

from ..errors import OgiveError
from . import layout as L
from .options import ScanOptions

KINDS = ("unspecified", "internal", "server", "client", "producer", "consumer")
"""SpanKind values 0-5 (trace.proto), lower-case without the SPAN_KIND_ prefix."""
STATUSES = ("unset", "ok", "error")
"""Status.StatusCode values 0-2 (trace.proto)."""
SPAN_FIELDS = ("name", "kind", "status")
_ANY_VALUE = pl.Struct(
    {"stringValue": pl.String, "intValue": pl.String, "doubleValue": pl.String, "boolValue": pl.String}
)
_ATTRIBUTES = pl.List(pl.Struct({"key": pl.String, "value": _ANY_VALUE}))


@dataclass(frozen=True)
class OtlpLayout(L.Layout):
    value: str = "duration"
    """``duration``, or an attribute key whose numbers are the values."""
    group: str | None = None

    def frame(self, lines: pl.Series) -> pl.DataFrame:
        n = len(lines)
        candidate = L.rows_where(lines.str.contains('"resourceSpans"', literal=True))
        decoded, failed = self._decode(lines.gather(candidate))
        spans = self._spans(decoded, candidate[~failed])
        # Every line must show up: spans, or one skipped row saying why it gave none.
        have = np.zeros(n, dtype=bool)
        have[spans.get_column("line").to_numpy()] = True
        empty = np.flatnonzero(~have)
        if empty.size:
            spans = pl.concat(
                [spans, self._no_spans(lines, empty, candidate[failed])], how="diagonal_relaxed"
            )
            spans = spans.sort("line", maintain_order=True)
        return spans.select([*self.names, "r", "line"])

    def _dtype(self) -> pl.Struct:
        span: dict[str, pl.DataType] = {
            "startTimeUnixNano": pl.String(),
            "endTimeUnixNano": pl.String(),
        }
        need = {self.group, self.value} - {None, "duration"}
        if "name" in need:
            span["name"] = pl.String()
        if "kind" in need:
            span["kind"] = pl.String()
        if "status" in need:
            span["status"] = pl.Struct({"code": pl.String})
        attrs = bool(need - set(SPAN_FIELDS))
        if attrs:
            span["attributes"] = _ATTRIBUTES
        resource = (
            pl.Struct({"attributes": _ATTRIBUTES})
            if attrs
            else pl.Struct({"droppedAttributesCount": pl.String})
        )
        return pl.Struct(
            {
                "resourceSpans": pl.List(
                    pl.Struct(
                        {
                            "resource": resource,
                            "scopeSpans": pl.List(pl.Struct({"spans": pl.List(pl.Struct(span))})),
                        }
                    )
                )
            }
        )

    def _decode(self, docs: pl.Series) -> tuple[pl.Series, np.ndarray]:
        """Decoded documents, and a mask of those that would not decode (dropped)."""
        dtype = self._dtype()
        try:
            return docs.str.json_decode(dtype), np.zeros(len(docs), dtype=bool)
        except pl.exceptions.PolarsError:
            pass
        # One bad line fails the whole batch: find it (them) line by line.
        failed = np.zeros(len(docs), dtype=bool)
        good = []
        for i, doc in enumerate(docs.to_list()):
            try:
                pl.Series([doc], dtype=pl.String).str.json_decode(dtype)
            except pl.exceptions.PolarsError:
                failed[i] = True
            else:
                good.append(i)
        kept = docs.gather(good) if good else pl.Series([], dtype=pl.String)
        return (kept.str.json_decode(dtype) if good else pl.Series([], dtype=dtype)), failed

    def _spans(self, decoded: pl.Series, line_of: np.ndarray) -> pl.DataFrame:
        df = pl.DataFrame({"line": pl.Series(line_of, dtype=pl.Int64), "doc": decoded})
        df = df.select("line", pl.col("doc").struct.field("resourceSpans").alias("rs")).explode("rs")
        df = df.select(
            "line",
            pl.col("rs").struct.field("resource").alias("res"),
            pl.col("rs").struct.field("scopeSpans").alias("ss"),
        ).explode("ss")
        df = df.select("line", "res", pl.col("ss").struct.field("spans").alias("sp")).explode("sp")
        df = df.filter(pl.col("sp").is_not_null())
        start = pl.col("sp").struct.field("startTimeUnixNano").cast(pl.UInt64, strict=False)
        end = pl.col("sp").struct.field("endTimeUnixNano").cast(pl.UInt64, strict=False)
        bad = start.is_null() | end.is_null() | (start == 0) | (end == 0) | (end < start)
        cols: dict[str, pl.Expr] = {"line": pl.col("line")}
        if self.value == "duration":
            cols["v"] = pl.when(bad).then(None).otherwise(end.cast(pl.Int64) - start.cast(pl.Int64))
            cols["v"] = cols["v"].cast(pl.Float64)
        else:
            cols["v"] = self._lookup(self.value)
        if self.group is not None:
            cols["g"] = self._lookup(self.group)
        cols["t"] = start.cast(pl.String)
        cols["r"] = pl.when(bad).then(pl.lit(L.BAD_SPAN)).otherwise(pl.lit(None, dtype=pl.String))
        return df.select(**cols)

    def _lookup(self, what: str) -> pl.Expr:
        span = pl.col("sp")
        if what == "name":
            return span.struct.field("name")
        if what == "kind":
            return _enum(span.struct.field("kind"), KINDS, "SPAN_KIND_")
        if what == "status":
            return _enum(span.struct.field("status").struct.field("code"), STATUSES, "STATUS_CODE_")
        # A span attribute, else the resource's (service.name lives there).
        return pl.coalesce(
            _attribute(span.struct.field("attributes"), what),
            _attribute(pl.col("res").struct.field("attributes"), what),
        )

    def _no_spans(self, lines: pl.Series, rows: np.ndarray, failed: np.ndarray) -> pl.DataFrame:
        sub = lines.gather(rows)
        doc = sub.str.json_path_match("$")
        reason = np.full(rows.size, L.NO_SPANS, dtype=object)
        reason[np.isin(rows, failed)] = L.BAD_RECORD
        reason[doc.is_null().to_numpy()] = L.NOT_JSON
        reason[L.blank(sub).to_numpy()] = L.BLANK_LINE
        return pl.DataFrame(
            {"line": pl.Series(rows, dtype=pl.Int64), "r": pl.Series(reason.tolist(), dtype=pl.String)}
        )


def _attribute(attrs: pl.Expr, key: str) -> pl.Expr:
    """The value of ``key`` in an OTLP KeyValue list, as text (AnyValue's scalar forms)."""
    hit = attrs.list.eval(pl.element().filter(pl.element().struct.field("key") == key)).list.first()
    value = hit.struct.field("value")
    return pl.coalesce(
        value.struct.field("stringValue"),
        value.struct.field("intValue"),
        value.struct.field("doubleValue"),
        value.struct.field("boolValue"),
    )


def _enum(code: pl.Expr, names: tuple[str, ...], prefix: str) -> pl.Expr:
    """An OTLP enum (an integer, or its name though the spec forbids names) as our name."""
    mapping = {str(i): n for i, n in enumerate(names)} | {f"{prefix}{n.upper()}": n for n in names}
    return code.replace_strict(mapping, default=None, return_dtype=pl.String).fill_null(names[0])


def looks_like(lines: list[str]) -> str | None:
    """``traces`` for OTLP trace documents; the signal's name for other OTLP documents."""
    head = "\n".join(lines[:5])
    for key, signal in (
        ("resourceSpans", "traces"),
        ("resourceMetrics", "metrics"),
        ("resourceLogs", "logs"),
    ):
        if f'"{key}"' in head:
            return signal
    return None


def plan(data: bytes, options: ScanOptions) -> OtlpLayout:
    value = options.field or options.column or "duration"
    if options.pattern:
        raise OgiveError("--pattern reads free text; OTLP spans are read by field (--field, --by).")
    if options.time_field is not None and options.time_field not in ("start", "startTimeUnixNano"):
        raise OgiveError(
            f"--time-field {options.time_field!r}: each span's time is its start, used without --time-field."
        )
    names = ("v", "g", "t") if options.by else ("v", "t")
    what = "span duration, end - start" if value == "duration" else f"span attribute {value}"
    return OtlpLayout(
        format="otlp",
        one_row_per_line=False,
        names=names,
        value=value,
        group=options.by,
        description=f"{what} (OTLP JSON traces)",
        time_format="epoch_ns",
        time_source="each span's startTimeUnixNano",
        input_unit="ns" if value == "duration" else None,
    )
