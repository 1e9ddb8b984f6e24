"""The format corpus (tests/formats/), each file scanned end to end through the CLI.

For every file the expected numbers are worked out here, independently of ogive's
reader, with Python's ``json``, ``csv``, ``re`` and ``datetime`` and ``numpy.quantile``
(its default linear method, the definition the sketch follows; these files are small
enough that every value is held exactly): the count, the skipped rows by reason, p50 and
p99, the time range, and that the counts add up (lines = values + skipped + headers).
The spec each reference follows is named beside it.
"""

from __future__ import annotations

import csv
import datetime as dt
import importlib.util
import io
import json
import re
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from ogive.cli import main

CORPUS = Path(__file__).parent / "formats"
UTC = dt.UTC


def _load_generator() -> Any:
    spec = importlib.util.spec_from_file_location("make_corpus", CORPUS / "make_corpus.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@dataclass
class Expected:
    values: list[float] = field(default_factory=list)
    """In the sketch unit (ms)."""
    skipped: Counter[str] = field(default_factory=Counter)
    times: list[dt.datetime] = field(default_factory=list)
    """Times of the rows whose values were kept."""
    rows: int = 0
    lines: int = 0
    headers: int = 0
    groups: Counter[str] = field(default_factory=Counter)

    def skip(self, reason: str) -> None:
        self.skipped[reason] += 1

    def keep(self, value: float, when: dt.datetime | None, group: str | None = None) -> None:
        self.values.append(value)
        if when is not None:
            self.times.append(when)
        if group is not None:
            self.groups[group] += 1


def _lines(path: Path, encoding: str = "utf-8", fix: Callable[[bytes], bytes] | None = None) -> list[str]:
    raw = path.read_bytes()
    text = (fix(raw) if fix else raw).decode(encoding, errors="replace")
    return text.split("\n")[:-1] if text.endswith("\n") else text.split("\n")


_DURATION = re.compile(r"^([0-9.]+)(ms|s|us)$")
_MS_PER = {"ms": 1.0, "s": 1000.0, "us": 0.001}


def _duration_ms(text: str) -> float | None:
    m = _DURATION.match(text)
    return float(m[1]) * _MS_PER[m[2]] if m else None


def _iso(text: str) -> dt.datetime | None:
    """ISO 8601 by datetime.fromisoformat (3.11 reads Z, offsets, a space, ','), no zone
    meaning UTC; a leap second (RFC 3339 5.7) as the next minute's start."""
    leap = re.match(r"^(.*T\d\d:\d\d):60(.*)$", text)
    try:
        if leap:
            return _iso(f"{leap[1]}:59{leap[2]}") + dt.timedelta(seconds=1)  # type: ignore[operator]
        moment = dt.datetime.fromisoformat(text)
    except ValueError:
        return None
    return moment.replace(tzinfo=UTC) if moment.tzinfo is None else moment.astimezone(UTC)


# ----------------------------------------------------------------- references


def ref_ecs(path: Path) -> Expected:
    """NDJSON (one JSON text per line) in the Elastic Common Schema shape: event.duration
    is in nanoseconds, nested or as a flat dotted key; @timestamp is ISO 8601."""
    e = Expected()
    for line in _lines(path):
        e.rows += 1
        if not line.strip():
            e.skip("blank_line")
            continue
        try:
            doc = json.loads(line)
        except ValueError:
            e.skip("not_json")
            continue
        if not isinstance(doc, dict):
            e.skip("not_an_object")
            continue
        event = doc.get("event")
        if isinstance(event, dict) and "duration" in event:
            dur = event["duration"]
        elif "event.duration" in doc:
            dur = doc["event.duration"]
        else:
            e.skip("missing_field")
            continue
        if dur is None:
            e.skip("null_value")
        elif isinstance(dur, list | dict):
            e.skip("not_a_scalar")
        elif (when := _iso(doc.get("@timestamp", ""))) is None:
            e.skip("bad_timestamp")
        else:
            e.keep(float(dur) / 1e6, when)
    e.lines = e.rows
    return e


_CLF = re.compile(
    r'^(\S+) (\S+) (\S+) \[([^\]]+)\] "((?:[^"\\]|\\.)*)" (\d{3}) (\d+|-)'
    r'(?: "((?:[^"\\]|\\.)*)" "((?:[^"\\]|\\.)*)")?(?: (\S+))?$'
)


def ref_access(unit_ms: float) -> Callable[[Path], Expected]:
    """Common Log Format (NCSA/Apache ``%h %l %u %t "%r" %>s %b``), combined with
    referer and user agent, then one latency field; %t read by datetime.strptime."""

    def ref(path: Path) -> Expected:
        e = Expected()
        for line in _lines(path):
            e.rows += 1
            m = _CLF.match(line)
            if not line.strip():
                e.skip("blank_line")
            elif not m:
                e.skip("bad_record")
            elif m[10] is None:
                e.skip("missing_field")
            else:
                try:
                    when = dt.datetime.strptime(m[4], "%d/%b/%Y:%H:%M:%S %z").astimezone(UTC)
                except ValueError:
                    e.skip("bad_timestamp")
                    continue
                e.keep(float(m[10]) * unit_ms, when, m[6])
        e.lines = e.rows
        return e

    return ref


def _rfc3164_year(month: int, day: int, hms: tuple[int, int, int]) -> dt.datetime:
    """RFC 3164 has no year: the latest one not more than a day after now (ogive's rule)."""
    now = dt.datetime.now(UTC)
    for year in range(now.year, now.year - 8, -1):
        try:
            cand = dt.datetime(year, month, day, *hms, tzinfo=UTC)
        except ValueError:
            continue
        if cand <= now + dt.timedelta(days=1):
            return cand
    raise AssertionError("no year")


_3164 = re.compile(
    r"^(?:<\d{1,3}>)?([A-Z][a-z]{2}) +(\d{1,2}) (\d\d):(\d\d):(\d\d) (\S+) ([^\s\[:]+)(?:\[\d+\])?: (.*)$"
)
_DUR = re.compile(r"(?:^|\s)dur=\"?([^\s\"]+)")


def ref_syslog3164(path: Path) -> Expected:
    """RFC 3164 section 4.1: [<PRI>]TIMESTAMP HOSTNAME TAG: MSG; the value from dur=."""
    months = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]
    e = Expected()
    for line in _lines(path):
        e.rows += 1
        m = _3164.match(line)
        d = _DUR.search(line)
        if not line.strip():
            e.skip("blank_line")
        elif d is None:
            e.skip("missing_field" if m else "bad_record")
        else:
            when = _rfc3164_year(months.index(m[1]) + 1, int(m[2]), (int(m[3]), int(m[4]), int(m[5])))  # type: ignore[index]
            e.keep(_duration_ms(d[1]), when, m[7])  # type: ignore[arg-type, index]
    e.lines = e.rows
    return e


_5424 = re.compile(r"^<(\d{1,3})>1 (\S+) (\S+) (\S+) (\S+) (\S+) (-|\[.*?\])(?: (.*))?$")


SEVERITY = ("emerg", "alert", "crit", "err", "warning", "notice", "info", "debug")  # RFC 5424 table 2


def ref_syslog5424(path: Path) -> Expected:
    """RFC 5424 section 6: <PRI>1 TIMESTAMP HOST APP PROCID MSGID SD MSG; the time is
    RFC 3339 or '-' (NILVALUE); the value an SD-PARAM dur="...ms"."""
    e = Expected()
    for line in _lines(path):
        e.rows += 1
        m = _5424.match(line)
        d = _DUR.search(line)
        if m is None:
            e.skip("bad_record")
        elif d is None:
            e.skip("missing_field")
        elif (when := _iso(m[2])) is None:
            e.skip("bad_timestamp")
        else:
            e.keep(_duration_ms(d[1]), when, SEVERITY[int(m[1]) % 8])  # type: ignore[arg-type]
    e.lines = e.rows
    return e


def ref_leading(
    path: Path, encoding: str = "utf-8", key: str = "took", fix: Callable[[bytes], bytes] | None = None
) -> Expected:
    """Free text: an ISO 8601 time stamp (maybe in brackets) begins the line; KEY=VALUE."""
    e = Expected()
    rx = re.compile(rf"(?:^|\s){key}=(\S+)")
    user = re.compile(r"(?:^|\s)user=(\S+)")
    for line in _lines(path, encoding, fix):
        e.rows += 1
        stamp = line.split(" ", 1)[0].strip("[]")
        if line.startswith("2026-03-04 ") or line.startswith("[2026-03-04 "):
            stamp = " ".join(line.split(" ", 2)[:2]).strip("[]")
        v = rx.search(line)
        if not line.strip():
            e.skip("blank_line")
        elif v is None:
            e.skip("missing_field")
        elif (when := _iso(stamp)) is None:
            e.skip("bad_timestamp")
        else:
            u = user.search(line)
            e.keep(_duration_ms(v[1]), when, u[1] if u else None)  # type: ignore[arg-type]
    e.lines = e.rows
    return e


def ref_epoch_csv(path: Path) -> Expected:
    """RFC 4180 CSV with a header; ts in epoch seconds, some rows in ms/us/ns (told
    apart by magnitude: below 1e11 s, 1e14 ms, 1e17 us, 1e20 ns)."""
    e = Expected(headers=1)
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    for ts, _route, latency in rows[1:]:
        e.rows += 1
        try:
            x = float(ts)
        except ValueError:
            e.skip("bad_timestamp")
            continue
        bounds = ((1e11, 1.0), (1e14, 1e3), (1e17, 1e6), (1e20, 1e9))
        scale = next((s for bound, s in bounds if x < bound), None)
        if scale is None:
            e.skip("bad_timestamp")
            continue
        e.keep(float(latency), dt.datetime.fromtimestamp(x / scale, tz=UTC))
    e.lines = e.rows
    return e


def ref_quoted(path: Path, delimiter: str = ",") -> Expected:
    """RFC 4180 section 2: quoted fields hold delimiters, doubled quotes and newlines."""
    e = Expected(headers=1)
    text = path.read_text()
    rows = list(csv.reader(io.StringIO(text), delimiter=delimiter))
    for row in rows[1:]:
        e.rows += 1
        try:
            e.keep(float(row[3]), None)
        except ValueError:
            e.skip("not_a_number")
    e.lines = text.count("\n") - 1
    return e


def ref_otlp(path: Path) -> Expected:
    """OTLP JSON encoding (opentelemetry-proto docs/specification.md): TracesData per
    line; start/endTimeUnixNano as decimal strings or numbers; duration = end - start
    (computed in Python integers, exact); grouped by the resource's service.name."""
    e = Expected()
    for line in _lines(path):
        e.lines += 1
        if not line.strip():
            e.skip("blank_line")
            e.rows += 1
            continue
        try:
            doc = json.loads(line)
        except ValueError:
            e.skip("not_json")
            e.rows += 1
            continue
        spans = [
            (rs, sp)
            for rs in doc.get("resourceSpans", [])
            for ss in rs.get("scopeSpans", [])
            for sp in ss.get("spans", [])
        ]
        if not spans:
            e.skip("no_spans")
            e.rows += 1
        for rs, sp in spans:
            e.rows += 1
            start, end = int(sp["startTimeUnixNano"]), int(sp["endTimeUnixNano"])
            attrs = rs["resource"]["attributes"]
            service = next(a["value"]["stringValue"] for a in attrs if a["key"] == "service.name")
            when = dt.datetime(1970, 1, 1, tzinfo=UTC) + dt.timedelta(microseconds=start // 1000)
            e.keep((end - start) / 1e6, when, service)
    return e


# ----------------------------------------------------------------- cases

def ref_w3c(unit_ms: float, sep: str) -> Callable[[Path], Expected]:
    """W3C extended log (W3C Working Draft WD-logfile-960323): ``#`` lines are directives,
    ``#Fields:`` names the fields of each entry, ``-`` is a field without a value, date
    and time are UTC; entries split with the ``csv`` module (the draft's quoted strings)."""

    def ref(path: Path) -> Expected:
        e = Expected()
        raw = path.read_bytes().removeprefix(b"\xef\xbb\xbf").replace(b"\r\n", b"\n")
        fields: list[str] = []
        for line in raw.decode().split("\n")[:-1]:
            e.rows += 1
            if line.startswith("#"):
                e.skip("w3c_directive")
                if line.startswith("#Fields:"):
                    fields = line.split()[1:]
                continue
            if not line.strip():
                e.skip("blank_line")
                continue
            row = next(csv.reader([line], delimiter=sep, quotechar='"'))
            if len(row) != len(fields):
                e.skip("bad_record")
                continue
            entry = dict(zip(fields, row, strict=True))
            if entry["time-taken"] == "-":
                e.skip("missing_field")
                continue
            when = dt.datetime.strptime(f"{entry['date']} {entry['time']}", "%Y-%m-%d %H:%M:%S")
            e.keep(float(entry["time-taken"]) * unit_ms, when.replace(tzinfo=UTC), entry["sc-status"])
        e.lines = e.rows
        return e

    return ref


CASES: dict[str, tuple[list[str], Callable[[Path], Expected], str]] = {
    "ecs.ndjson": ([], ref_ecs, "NDJSON, Elastic Common Schema"),
    "access_combined.log": ([], ref_access(1000.0), "Common Log Format, combined, latency in s"),
    "access_clf_micros.log": ([], ref_access(0.001), "Common Log Format, latency in us (%D)"),
    "syslog_rfc3164.log": ([], ref_syslog3164, "RFC 3164"),
    "syslog_rfc5424.log": ([], ref_syslog5424, "RFC 5424 / RFC 3339"),
    "leading_time.log": ([], ref_leading, "free text, ISO 8601 leading time"),
    "epoch_mixed.csv": (["--time-field", "ts"], ref_epoch_csv, "RFC 4180, epoch times"),
    "quoted.csv": ([], ref_quoted, "RFC 4180"),
    "quoted.tsv": ([], lambda p: ref_quoted(p, "\t"), "tab-separated, RFC 4180 quoting"),
    "traces.otlp.jsonl": ([], ref_otlp, "OTLP JSON encoding"),
    "iis_w3c.log": ([], ref_w3c(1.0, " "), "W3C extended log as IIS writes it (time-taken in ms)"),
    "cdn_w3c.log": ([], ref_w3c(1000.0, "\t"), "W3C extended log, tab-separated, time-taken in s"),
    "latin1.log": ([], lambda p: ref_leading(p, "latin-1", "dur"), "free text, Latin-1 bytes"),
    "utf16.log": ([], lambda p: ref_leading(p, "utf-16", "dur"), "free text, UTF-16 with BOM"),
    "cr_only.log": (
        [],
        lambda p: ref_leading(p, "utf-8", "dur", lambda b: b.replace(b"\r", b"\n")),
        "free text, CR line ends",
    ),
    "nul.log": (
        [],
        lambda p: ref_leading(p, "utf-8", "dur", lambda b: b.replace(b"\x00", b"")),
        "free text with NUL bytes",
    ),
}


def _scan_json(
    capsys: pytest.CaptureFixture[str], path: Path, argv: list[str]
) -> tuple[int, dict[str, Any], str]:
    code = main(["scan", str(path), *argv, "--json"])
    out, err = capsys.readouterr()
    return code, json.loads(out) if out.strip() else {}, err


@pytest.mark.parametrize("name", sorted(CASES))
def test_corpus_file_end_to_end(name: str, capsys: pytest.CaptureFixture[str]) -> None:
    argv, ref, _spec = CASES[name]
    path = CORPUS / name
    want = ref(path)
    code, doc, err = _scan_json(capsys, path, argv)
    assert code == 0, err
    assert "internal error" not in err
    (s,) = doc["sketches"].values()
    skipped = {r: t["count"] for r, t in s["skipped"].items()}
    assert s["n"] == len(want.values), (skipped, dict(want.skipped))
    assert skipped == dict(want.skipped)
    np.testing.assert_allclose(
        [s["p50"], s["p99"]], np.quantile(np.array(want.values), [0.5, 0.99]), rtol=1e-9
    )
    # The counts add up: every record is a value or a counted skip.
    assert s["rows_read"] == want.rows == s["n"] + sum(skipped.values())
    assert s["lines_read"] == want.lines + want.headers
    if want.times:
        first, last = min(want.times), max(want.times)
        assert s["time_first"] == first.isoformat().replace("+00:00", "Z")
        assert s["time_last"] == last.isoformat().replace("+00:00", "Z")


def test_corpus_is_what_the_generator_writes() -> None:
    """The files are the generator's output, byte for byte (regenerate after changing it)."""
    gen = _load_generator()
    for name, data in gen.build().items():
        assert (CORPUS / name).read_bytes() == data, f"{name}: run python tests/formats/make_corpus.py"
