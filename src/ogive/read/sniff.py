"""Which record format the first bytes are, when ``--format`` does not say.

Looked at in this order, each on the first 50 non-blank lines (most of them must agree,
so a few junk lines at the top do not mislead): binary data (refused), OTLP JSON
(``resourceSpans``), NDJSON (objects, one per line), RFC 5424 and RFC 3164 syslog
headers, Common Log Format time stamps, a W3C extended log's ``#Fields:`` directive,
delimited records (a CSV parser's field count, see ``delimited.sniff``), and free
text. Each rule is a property of the format's own grammar, so the order only matters
for lines that fit two (a CSV whose first column is a syslog-looking date would be read
as syslog).
"""

from __future__ import annotations

from ..errors import OgiveError
from . import access, delimited, encoding, otlp, syslog, w3c
from .delimited import MOST
from .options import ScanOptions
from .text import sample_lines

FORMATS = (
    "csv", "tsv", "ndjson", "text", "access", "syslog", "w3c", "otlp", "parquet", "otlp-metrics",
    "openmetrics",
)  # fmt: skip
"""What ``--format`` accepts (``csv;`` and ``csv|`` name other CSV separators)."""


def detect(data: bytes, options: ScanOptions) -> tuple[str, str]:
    """(format, CSV separator) of a source from its first bytes and the options."""
    fmt = options.format
    if fmt:
        if fmt.startswith("csv") or fmt == "tsv":
            sep = "\t" if fmt == "tsv" else fmt[3:] or delimited.sniff(data, want_column=True) or ","
            return ("tsv" if sep == "\t" else "csv"), sep
        return fmt, ","
    if encoding.is_binary(data[: encoding.HEAD_BYTES]):
        raise OgiveError(
            "the first bytes look like binary data, not text records; if the file is a format ogive "
            "reads, say which with --format, or check the file."
        )
    lines = sample_lines(data)
    if options.pattern:
        if (options.field or options.column) and _objects(lines):
            return "ndjson", ","  # --field names the JSON text the regex reads
        return _pattern_home(lines), ","
    if _objects(lines):
        signal = otlp.looks_like(lines)
        if signal == "traces":
            return "otlp", ","
        if signal == "metrics":  # reached only when the metrics reader was not asked (--format)
            raise OgiveError(
                "the records are OTLP metrics; they are read as histograms with --format otlp-metrics "
                "(or without --format)."
            )
        if signal is not None:
            raise OgiveError(
                f"the records are OTLP {signal}; ogive reads OTLP traces (resourceSpans) and metrics "
                f"(resourceMetrics), not {signal}."
            )
        return "ndjson", ","
    if (lines and lines[0].strip() in ("{", "[")) or (lines and lines[0].lstrip().startswith("[{")):
        raise OgiveError(
            "the file is one JSON document spread over lines (or a JSON array), not NDJSON; write one "
            "object per line (jq -c '.[]' does it for an array)."
        )
    if syslog.variant(lines):
        return "syslog", ","
    if access.looks_like(lines):
        return "access", ","
    if w3c.looks_like(lines):
        return "w3c", ","
    found = delimited.sniff(data, want_column=options.column is not None)
    if found is not None:
        return ("tsv" if found == "\t" else "csv"), found
    return "text", ","


def _objects(lines: list[str]) -> bool:
    """Most lines are JSON objects (or start as one)."""
    return bool(lines) and sum(ln.lstrip().startswith("{") for ln in lines) >= MOST * len(lines)


def _pattern_home(lines: list[str]) -> str:
    """With --pattern, the line formats that have their own time keep it; else text."""
    if syslog.variant(lines):
        return "syslog"
    if access.looks_like(lines):
        return "access"
    return "text"
