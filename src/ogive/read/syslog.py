"""Syslog lines: RFC 3164 (BSD) and RFC 5424, as files written by a syslog daemon.

RFC 3164 section 4.1: ``<PRI>Mmm dd hh:mm:ss HOSTNAME TAG[pid]: MSG``; the ``<PRI>``
is usually not written to files, the day is space-padded (``Mar  4``), and there is no
year and no zone: ogive reads the time as UTC, in the latest year that does not put it
more than a day after the scan began (said in a note, since it is an assumption).
RFC 5424 section 6: ``<PRI>1 TIMESTAMP HOSTNAME APP-NAME PROCID MSGID [SD] MSG`` with an
RFC 3339 time stamp (``-`` when unknown: counted as an unreadable time).

The value comes from the message: ``--field KEY`` reads ``KEY=VALUE`` pairs (RFC 5424
structured-data parameters ``KEY="VALUE"`` included), ``--pattern`` a regex; without
either, the one key whose pairs hold durations. ``--by`` takes ``host``, ``app``,
``pid``, ``msgid`` (RFC 5424), ``severity`` or ``facility`` (from ``<PRI>``, RFC 5424
section 6.2.1), or any key of the pairs.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import polars as pl

from ..errors import OgiveError
from . import layout as L
from .delimited import MOST
from .options import ScanOptions
from .text import Extract, extract_columns, key_value_regex, sample_lines, value_source

RFC3164 = (
    r"^(?:<(?P<pri>\d{1,3})>)?(?P<time>[A-Z][a-z]{2} [ \d]?\d \d{2}:\d{2}:\d{2}(?:\.\d+)?) "
    r"(?P<host>\S+) (?:(?P<app>[^\s\[\]:]+)(?:\[(?P<pid>[^\]]*)\])?: ?)?(?P<msg>.*)$"
)
RFC5424 = (
    r"^<(?P<pri>\d{1,3})>1 (?P<time>\S+) (?P<host>\S+) (?P<app>\S+) (?P<pid>\S+) (?P<msgid>\S+) "
    r'(?P<sd>-|(?:\[(?:[^\]"\\]|\\.|"(?:[^"\\]|\\.)*")*\])+)(?: (?P<msg>.*))?$'
)
SEVERITIES = ("emerg", "alert", "crit", "err", "warning", "notice", "info", "debug")
"""RFC 5424 table 2, severity codes 0-7 (the short names syslog daemons use)."""
HEADER_FIELDS = ("host", "app", "pid", "msgid")
_SNIFF = {"rfc5424": re.compile(r"^<\d{1,3}>1 \S+ "), "rfc3164": re.compile(RFC3164)}


def capturing(regex: str, wanted: set[str]) -> str:
    """``regex`` with only the ``wanted`` named groups capturing (captures cost time; the
    message group alone copies most of each line)."""
    if "msg" not in wanted:  # the header alone decides whether the line is syslog
        regex = regex.replace("(?: (?P<msg>.*))?$", "").replace("(?P<msg>.*)$", "")
    return re.sub(r"\(\?P<(\w+)>", lambda m: m[0] if m[1] in wanted else "(?:", regex)


def variant(lines: list[str]) -> str | None:
    """``rfc5424`` or ``rfc3164`` when most lines are of that kind, else None."""
    for name, rx in _SNIFF.items():
        if lines and sum(bool(rx.match(ln)) for ln in lines) >= MOST * len(lines):
            return name
    return None


@dataclass(frozen=True)
class SyslogLayout(L.Layout):
    regex: str = ""
    fields: tuple[tuple[str, str], ...] = ()
    """(output name, header group) pairs; the group ``pri`` is turned into ``severity``
    or ``facility`` names."""
    group_from_pri: str = ""
    extracts: tuple[Extract, ...] = ()
    """Columns read from the whole line (the value, pairs)."""
    missing_reason: str = L.NO_MATCH

    def frame(self, lines: pl.Series) -> pl.DataFrame:
        found = lines.str.extract_groups(self.regex)
        cols = extract_columns(self.extracts, lines)
        for name, group in self.fields:
            col = found.struct.field(group)
            if group == "pri":
                pri = col.cast(pl.Int64, strict=False)
                if self.group_from_pri == "severity":
                    col = (pri % 8).replace_strict(list(range(8)), list(SEVERITIES), default=None)
                else:
                    col = (pri // 8).cast(pl.String)
            cols.append(col.alias(name))
        df = pl.DataFrame(cols).select(self.names)
        matched = found.struct.field("time").is_not_null()
        missing = L.rows_where(df.get_column("v").is_null())
        if not missing.size:
            return df
        bad = L.rows_where(~matched)
        empty = bad[L.rows_where(L.blank(lines.gather(bad)))] if bad.size else bad
        r = L.reason_column(
            len(lines), [(empty, L.BLANK_LINE), (bad, L.BAD_RECORD), (missing, self.missing_reason)]
        )
        return df if r is None else df.with_columns(r)


def plan(data: bytes, options: ScanOptions) -> SyslogLayout:
    lines = sample_lines(data)
    kind = variant(lines) or "rfc3164"
    regex = RFC5424 if kind == "rfc5424" else RFC3164
    name = "RFC 5424" if kind == "rfc5424" else "RFC 3164"
    src = value_source(options, lines, what=f"syslog ({name}) lines")
    extracts = [src.extract]
    fields: list[tuple[str, str]] = []
    from_pri = ""
    by = options.by
    if by is not None:
        if by in src.named:
            extracts.append(src.group("g", by))
        elif by in HEADER_FIELDS:
            if by == "msgid" and kind != "rfc5424":
                raise OgiveError("--by msgid: RFC 3164 lines have no MSGID; use host, app or pid.")
            fields.append(("g", by))
        elif by in ("severity", "facility"):
            fields.append(("g", "pri"))
            from_pri = by
        else:
            extracts.append(Extract("g", key_value_regex(by), (1, 2)))
    if options.time_field is not None and options.time_field not in ("time", "timestamp"):
        raise OgiveError(
            f"--time-field {options.time_field!r}: syslog lines carry their time in the header; it is "
            "used without --time-field."
        )
    fields.append(("t", "time"))
    notes = list(src.notes)  # the RFC 3164 year rule is told with the years used
    names = tuple(
        n for n in ("v", "g", "t") if any(n == c.name for c in extracts) or any(n == h for h, _ in fields)
    )
    return SyslogLayout(
        format="syslog",
        names=names,
        regex=capturing(regex, {group for _, group in fields}),
        fields=tuple(fields),
        group_from_pri=from_pri,
        extracts=tuple(extracts),
        missing_reason=src.missing_reason,
        description=f"{src.description} ({name} syslog)",
        time_format="iso" if kind == "rfc5424" else "rfc3164",
        time_source=f"the {name} header time stamp",
        notes=tuple(notes),
    )
