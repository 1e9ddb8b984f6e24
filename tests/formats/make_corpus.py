"""Write the format corpus: one small log per format ogive reads, invented and seeded.

Everything is made up: *Saltmarsh Ferries* runs a booking service (``booking-api``), a
berth planner and a tide feed on hosts ``quay-a`` and ``quay-b``. Each file holds a few
hundred records in the shape a real producer writes, plus lines spoilt on purpose (the
reasons the scan must count). ``python tests/formats/make_corpus.py`` rewrites the files
beside this script; ``test_formats_corpus.py`` checks that doing so changes nothing.

Only ``random.Random.random`` (a Mersenne Twister whose output Python keeps stable) and
arithmetic are used, so the bytes do not depend on library versions.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import random
import statistics
import sys
from collections.abc import Callable
from pathlib import Path

HERE = Path(__file__).resolve().parent
START = dt.datetime(2026, 3, 4, 9, 0, 0, tzinfo=dt.UTC)
_NORMAL = statistics.NormalDist()


class Draw:
    """Seeded draws built on ``random()`` alone."""

    def __init__(self, seed: int) -> None:
        self.r = random.Random(seed)

    def u(self) -> float:
        return self.r.random()

    def pick(self, items: list[str] | tuple[str, ...]) -> str:
        return items[int(self.u() * len(items))]

    def lognormal(self, median: float, sigma: float) -> float:
        u = min(max(self.u(), 1e-12), 1 - 1e-12)
        return median * math.exp(sigma * _NORMAL.inv_cdf(u))


def _iso(t: dt.datetime, *, frac: int = 3, sep: str = "T", zone: str = "Z", comma: bool = False) -> str:
    text = t.strftime(f"%Y-%m-%d{sep}%H:%M:%S")
    if frac:
        text += ("," if comma else ".") + f"{t.microsecond:06d}"[:frac]
    return text + zone


def _ns(t: dt.datetime) -> int:
    return (t - dt.datetime(1970, 1, 1, tzinfo=dt.UTC)) // dt.timedelta(microseconds=1) * 1000


ROUTES = ("/book", "/book", "/book", "/fares", "/fares", "/timetable", "/healthz")
METHODS = {"/book": "POST", "/fares": "GET", "/timetable": "GET", "/healthz": "GET"}
HOSTS = ("quay-a", "quay-b")


def ecs_ndjson(d: Draw) -> list[str]:
    """Structured logging in the Elastic Common Schema shape: ``@timestamp``,
    ``event.duration`` in nanoseconds, ``http.response.status_code``; odd keys, a dotted
    key, arrays, nulls, numbers as strings, and lines that are not JSON objects."""
    out = []
    t = START
    for i in range(600):
        t += dt.timedelta(milliseconds=int(d.u() * 900))
        route = d.pick(ROUTES)
        ms = d.lognormal(6.0 if route != "/book" else 18.0, 0.7)
        status = 200 if d.u() > 0.05 else 503
        rec: dict[str, object] = {
            "@timestamp": _iso(t, zone="Z" if i % 5 else "+00:00"),
            "log.level": "info" if status == 200 else "error",
            "service": {"name": "booking-api"},
            "host": {"name": d.pick(HOSTS)},
            "http": {"request": {"method": METHODS[route]}, "response": {"status_code": status}},
            "url": {"path": route},
            "event": {"duration": round(ms * 1e6)},
            "labels": {"k.dot": d.pick(("ebb", "flood")), "tags": ["ferry", "web"]},
            "@t": i,
            "x y": "spaced key",
            "a-b": None,
        }
        if i % 7 == 3:
            rec["event"] = {"duration": str(round(ms * 1e6))}  # a number written as a string
        if i % 11 == 5:
            rec.pop("event")
            rec["event.duration"] = round(ms * 1e6)  # the flat (dotted-key) spelling
        out.append(json.dumps(rec, separators=(",", ":")))
    spoilt = {
        40: "",  # blank line
        90: "[1, 2, 3]",  # JSON, not an object
        150: "42",
        210: "upstream said: connection reset",  # not JSON
        270: '{"@timestamp": "2026-03-04T09:10:00.000Z", "event": {"duration": 17',  # cut short
        330: '{"@timestamp": "2026-03-04T09:20:00.000Z", "event": {"duration": null}}',
        390: '{"@timestamp": "2026-03-04T09:30:00.000Z", "event": {"outcome": "failure"}}',
        450: '{"@timestamp": "2026-03-04T09:40:00.000Z", "event": {"duration": [1, 2]}}',
        510: '{"@timestamp": "not a time", "event": {"duration": 5000000}}',
    }
    for at, line in sorted(spoilt.items(), reverse=True):
        out.insert(at, line)
    return out


def _clf_time(t: dt.datetime, offset_h: int) -> str:
    local = t + dt.timedelta(hours=offset_h)
    sign = "+" if offset_h >= 0 else "-"
    return local.strftime("%d/%b/%Y:%H:%M:%S") + f" {sign}{abs(offset_h):02d}00"


def access_combined(d: Draw) -> list[str]:
    """Combined log format with nginx-style ``$request_time`` seconds at the end; fast
    responses are often ``0.000``."""
    out = []
    t = START
    agents = ("Mozilla/5.0 (X11; Linux x86_64)", 'curl/8.5.0 "quoted"', "Saltmarsh-App/3.1 (iOS)")
    for i in range(700):
        t += dt.timedelta(milliseconds=int(d.u() * 700))
        route = d.pick(ROUTES)
        secs = 0.0 if route == "/healthz" or d.u() < 0.25 else d.lognormal(0.012, 0.9)
        status = "200" if d.u() > 0.04 else "502"
        size = "-" if route == "/healthz" else str(int(200 + d.u() * 5000))
        agent = d.pick(agents).replace('"', '\\"')
        client = f"10.4.{int(d.u() * 8)}.{int(d.u() * 250)}"
        user = "-" if i % 9 else "mara"
        stamp = _clf_time(t, -7 if i % 3 else 1)
        request = f"{METHODS[route]} {route}?id={i} HTTP/1.1"
        out.append(f'{client} - {user} [{stamp}] "{request}" {status} {size} "-" "{agent}" {secs:.3f}')
    out.insert(100, "")
    out.insert(200, "\\x16\\x03\\x01 not a request line at all")
    out.insert(300, f'10.4.1.1 - - [{_clf_time(START, 0)}] "GET /fares HTTP/1.1" 200 512 "-" "probe"')
    out.insert(400, '10.4.1.2 - - [31/Foo/2026:25:61:00 +0000] "GET /fares HTTP/1.1" 200 512 "-" "x" 0.004')
    return out


def access_clf_micros(d: Draw) -> list[str]:
    """Common Log Format with Apache's ``%D`` (whole microseconds) appended."""
    out = []
    t = START
    for i in range(500):
        t += dt.timedelta(milliseconds=int(d.u() * 1200))
        route = d.pick(ROUTES)
        us = int(d.lognormal(9000.0, 0.8))
        request = f"{METHODS[route]} {route} HTTP/1.0"
        out.append(f'10.9.0.{i % 40} - - [{_clf_time(t, 0)}] "{request}" 200 {int(d.u() * 900)} {us}')
    out.insert(250, "10.9.0.1 - - [04/Mar/2026:09:10:00 +0000] truncated")
    return out


SYSLOG_APPS = (("berth-planner", True), ("cron", False), ("sshd", False), ("berth-planner", True))


def syslog_3164(d: Draw) -> list[str]:
    """BSD syslog as rsyslog writes files: no PRI, space-padded day, no year, no zone;
    only the planner's lines carry ``dur=``."""
    out = []
    t = START
    for i in range(500):
        t += dt.timedelta(seconds=int(d.u() * 20))
        app, timed = d.pick(SYSLOG_APPS)
        stamp = t.strftime("%b ") + f"{t.day:>2}" + t.strftime(" %H:%M:%S")
        host = d.pick(HOSTS)
        if timed:
            ms = d.lognormal(40.0, 0.6)
            dur = f"{ms:.1f}ms" if i % 4 else f"{ms / 1000:.4f}s"
            msg = f'plan berth={int(d.u() * 12)} vessel="MV Curlew" dur={dur} ok'
        else:
            msg = "session opened for user ferry" if app == "sshd" else "(root) CMD (tide-sync)"
        pri = f"<{8 * 3 + (6 if i % 10 else 3)}>" if i % 50 == 0 else ""
        out.append(f"{pri}{stamp} {host} {app}[{1000 + i % 97}]: {msg}")
    out.insert(123, "")
    out.insert(321, "-- MARK --")
    return out


def syslog_5424(d: Draw) -> list[str]:
    """RFC 5424 with RFC 3339 times (fractions, offsets), structured data holding the
    duration, and a NILVALUE time."""
    out = []
    t = START
    for i in range(400):
        t += dt.timedelta(milliseconds=int(d.u() * 3000))
        ms = d.lognormal(25.0, 0.5)
        sev = 6 if d.u() > 0.1 else 3
        zone = "Z" if i % 3 else "+02:00"
        shown = t + (dt.timedelta(hours=2) if zone != "Z" else dt.timedelta(0))
        stamp = _iso(shown, frac=6, zone=zone)
        sd = f'[tide@32473 dur="{ms:.2f}ms" quay="{d.pick(HOSTS)}"]'
        out.append(
            f"<{16 * 8 + sev}>1 {stamp} {d.pick(HOSTS)} tide-feed {2000 + i % 13} READ {sd} level read"
        )
    out.insert(200, '<134>1 - quay-a tide-feed 2001 READ [tide@32473 dur="9.50ms"] clock unknown')
    out.insert(300, "<134>1 2026-03-04T10:00:00Z quay-a tide-feed 2001 READ - no duration here")
    return out


def leading_time(d: Draw) -> list[str]:
    """Free text whose lines begin with an ISO 8601 time: ``.`` and ``,`` fractions,
    ``Z``, an offset or no zone, and one leap second."""
    out = []
    t = START
    for i in range(500):
        t += dt.timedelta(milliseconds=int(d.u() * 2000))
        form = i % 4
        if form == 0:
            stamp = _iso(t)
        elif form == 1:
            stamp = _iso(t, sep=" ", zone="", comma=True)
        elif form == 2:
            stamp = _iso(t + dt.timedelta(hours=1), frac=6, zone="+01:00")
        else:
            stamp = "[" + _iso(t, frac=0, zone="") + "]"
        ms = d.lognormal(120.0, 0.5)
        out.append(
            f"{stamp} INFO fare-quote route={d.pick(ROUTES)} took={ms:.2f}ms cache={d.pick(('hit', 'miss'))}"
        )
    out.insert(250, "2016-12-31T23:59:60Z INFO fare-quote route=/fares took=99.00ms cache=hit")
    out.insert(260, "    at harbour.Fares.quote(Fares.java:88)")
    return out


def epoch_csv(d: Draw) -> list[str]:
    """Epoch times in seconds, with some rows in ms, us and ns, and two out of range."""
    out = ["ts,route,latency_ms"]
    t = START
    units = ((1, "s"), (1000, "ms"), (1_000_000, "us"), (1_000_000_000, "ns"))
    for i in range(400):
        t += dt.timedelta(seconds=int(1 + d.u() * 30))
        secs = int(t.timestamp())
        scale, _ = units[0] if i % 25 else units[(i // 25) % 4]
        ts = str(secs * scale)
        out.append(f"{ts},{d.pick(ROUTES)},{d.lognormal(30.0, 0.6):.3f}")
    out.insert(100, "1e25,/book,12.500")
    out.insert(200, "-,/book,13.500")
    return out


def quoted_csv(d: Draw) -> list[str]:
    """RFC 4180: quoted header names, quoted delimiters and doubled quotes in the first
    rows, a quoted newline; only one column holds numbers."""
    out = ['"Request, path","Vessel ""name""","When","Latency (ms)"']
    t = START
    vessels = ("MV Curlew", 'Godwit, the "old" one', "Avocet")
    for _ in range(300):
        t += dt.timedelta(seconds=int(d.u() * 40))
        route = d.pick(ROUTES)
        vessel = d.pick(vessels).replace('"', '""')
        note = f'"{route}, {METHODS[route]}"'
        lat = f"{d.lognormal(50.0, 0.6):.2f}"
        out.append(f'{note},"{vessel}",{_iso(t, frac=0)},{lat}')
    out.insert(5, '"/book, POST","multi\nline",2026-03-04T09:01:00Z,44.00')
    out.insert(150, '"/fares, GET","Avocet",2026-03-04T09:20:00Z,n/a')
    return out


def quoted_tsv(d: Draw) -> list[str]:
    rows = quoted_csv(d)
    out = []
    for line in rows:
        out.append(line)
    # Same content, tab-separated: re-split by RFC 4180 and join with tabs.
    import csv
    import io

    table = list(csv.reader(io.StringIO("\n".join(out) + "\n")))
    buf = io.StringIO()
    csv.writer(buf, delimiter="\t", lineterminator="\n").writerows(table)
    return buf.getvalue().rstrip("\n").split("\n")


def otlp_traces(d: Draw) -> list[str]:
    """OTLP JSON trace export, one ``TracesData`` per line as a collector's file
    exporter writes it; times as decimal strings (some as numbers)."""
    out = []
    t = START
    services = ("booking-api", "berth-planner")
    names = {"booking-api": ("POST /book", "GET /fares"), "berth-planner": ("plan", "db.query")}
    for batch in range(80):
        svc = services[batch % 2]
        spans = []
        for j in range(int(2 + d.u() * 5)):
            t += dt.timedelta(milliseconds=int(d.u() * 400))
            dur_ns = int(d.lognormal(8e6 if svc == "booking-api" else 3e6, 0.8))
            start = _ns(t)
            span: dict[str, object] = {
                "traceId": f"{batch:016x}{j:016x}",
                "spanId": f"{batch * 16 + j:016x}",
                "name": d.pick(names[svc]),
                "kind": 2 if j == 0 else 3,
                "startTimeUnixNano": str(start) if (batch + j) % 9 else start,
                "endTimeUnixNano": str(start + dur_ns) if (batch + j) % 9 else start + dur_ns,
                "attributes": [{"key": "ferry.route", "value": {"stringValue": d.pick(ROUTES)}}],
                "status": {"code": 2} if d.u() < 0.08 else {},
            }
            spans.append(span)
        doc = {
            "resourceSpans": [
                {
                    "resource": {"attributes": [{"key": "service.name", "value": {"stringValue": svc}}]},
                    "scopeSpans": [
                        {"scope": {"name": "saltmarsh.tracing", "version": "1.0"}, "spans": spans}
                    ],
                }
            ]
        }
        out.append(json.dumps(doc, separators=(",", ":")))
    out.insert(20, "")
    out.insert(40, json.dumps({"resourceSpans": []}))
    out.insert(60, '{"resourceSpans":[{"scopeSpans":[{"spans":[{"name":"x","startTimeUnixNano":"5"')
    return out


def latin1_text(d: Draw) -> bytes:
    """A text log with Latin-1 bytes in a message, in a key and in the --by value."""
    lines = []
    t = START
    for i in range(300):
        t += dt.timedelta(seconds=1)
        user = "Jos\xe9" if i % 10 == 0 else d.pick(("mara", "ines"))
        extra = " caf\xe9=1" if i % 15 == 0 else ""
        lines.append(f"{_iso(t)} booking user={user}{extra} dur={d.lognormal(20.0, 0.5):.2f}ms")
    return ("\n".join(lines) + "\n").encode("latin-1")


def utf16_text(d: Draw) -> bytes:
    lines = [
        f"{_iso(START + dt.timedelta(seconds=i))} tide dur={d.lognormal(5.0, 0.4):.3f}ms" for i in range(200)
    ]
    return ("\r\n".join(lines) + "\r\n").encode("utf-16")  # with a byte-order mark


def cr_only_text(d: Draw) -> bytes:
    lines = [
        f"{_iso(START + dt.timedelta(seconds=i))} fare dur={d.lognormal(7.0, 0.4):.3f}ms" for i in range(200)
    ]
    return ("\r".join(lines) + "\r").encode()


def nul_text(d: Draw) -> bytes:
    """NUL bytes inside some lines, and a run of them where a crash left the file."""
    lines = []
    for i in range(200):
        line = f"{_iso(START + dt.timedelta(seconds=i))} fare dur={d.lognormal(7.0, 0.4):.3f}ms".encode()
        if i % 50 == 7:
            line = line[:20] + b"\x00" + line[20:]
        lines.append(line)
    return b"\n".join(lines) + b"\n" + b"\x00" * 4096 + b"\n"


def _w3c_stamp(t: dt.datetime, sep: str) -> str:
    return t.strftime(f"%Y-%m-%d{sep}%H:%M:%S")


def iis_w3c(d: Draw) -> bytes:
    """A W3C extended log as IIS writes it: a UTF-8 byte-order mark, CRLF line ends, the
    directive block again after a restart, single spaces, ``+`` for a space inside a
    field, ``time-taken`` in whole milliseconds; one entry without a time-taken, one cut
    short, one blank line."""
    fields = (
        "date time s-ip cs-method cs-uri-stem cs-uri-query s-port c-ip cs(User-Agent) sc-status time-taken"
    )
    agents = ("Mozilla/5.0+(Windows+NT+10.0;+Win64;+x64)", "Saltmarsh-App/3.1+(iOS)", "curl/8.5.0")

    def block(t: dt.datetime) -> list[str]:
        return [
            "#Software: Microsoft Internet Information Services 10.0",
            "#Version: 1.0",
            f"#Date: {_w3c_stamp(t, ' ')}",
            f"#Fields: {fields}",
        ]

    out = block(START)
    t = START
    for i in range(400):
        t += dt.timedelta(milliseconds=int(d.u() * 1500))
        route = d.pick(ROUTES)
        ms = "0" if route == "/healthz" else str(int(d.lognormal(14.0, 0.9)))
        status = "200" if d.u() > 0.05 else "503"
        query = "-" if route == "/healthz" else f"id={i}"
        server, client = f"10.7.0.{1 + i % 2}", f"172.16.{int(d.u() * 4)}.{int(d.u() * 250)}"
        out.append(
            f"{_w3c_stamp(t, ' ')} {server} {METHODS[route]} {route} {query} 443 {client} "
            f"{d.pick(agents)} {status} {ms}"
        )
        if i == 200:
            out.extend(block(t))  # the server restarted
    out[120] = out[120].rsplit(" ", 1)[0] + " -"  # no time-taken
    out.insert(250, out[249].split(" 443 ")[0])  # cut short
    out.insert(300, "")
    return ("\ufeff" + "\r\n".join(out) + "\r\n").encode()


def cdn_w3c(d: Draw) -> list[str]:
    """A W3C extended log as CDN exports write it: tab-separated, ``#Version:`` and
    ``#Fields:`` only, ``time-taken`` in seconds with three decimals (the draft's unit)."""
    out = [
        "#Version: 1.0",
        "#Fields: date time x-site sc-bytes c-ip cs-method cs-uri-stem sc-status cs(User-Agent) time-taken",
    ]
    t = START
    for i in range(300):
        t += dt.timedelta(milliseconds=int(d.u() * 2000))
        route = d.pick(ROUTES)
        secs = d.lognormal(0.030, 1.1)
        site = d.pick(("LHR-3", "AMS-1", "DUB-2"))
        client, agent = f"192.0.2.{i % 200}", "Saltmarsh-App/3.1%20(iOS)"
        row = [t.strftime("%Y-%m-%d"), t.strftime("%H:%M:%S"), site, str(int(d.u() * 9000)), client,
               METHODS[route], route, "200", agent, f"{secs:.3f}"]  # fmt: skip
        out.append("\t".join(row))
    return out


TEXT_FILES: dict[str, tuple[Callable[[Draw], list[str]], int]] = {
    "ecs.ndjson": (ecs_ndjson, 11),
    "access_combined.log": (access_combined, 12),
    "access_clf_micros.log": (access_clf_micros, 13),
    "syslog_rfc3164.log": (syslog_3164, 14),
    "syslog_rfc5424.log": (syslog_5424, 15),
    "leading_time.log": (leading_time, 16),
    "epoch_mixed.csv": (epoch_csv, 17),
    "quoted.csv": (quoted_csv, 18),
    "quoted.tsv": (quoted_tsv, 18),
    "traces.otlp.jsonl": (otlp_traces, 19),
    "cdn_w3c.log": (cdn_w3c, 25),
}
BYTE_FILES: dict[str, tuple[Callable[[Draw], bytes], int]] = {
    "latin1.log": (latin1_text, 21),
    "utf16.log": (utf16_text, 22),
    "cr_only.log": (cr_only_text, 23),
    "nul.log": (nul_text, 24),
    "iis_w3c.log": (iis_w3c, 26),
}


def build() -> dict[str, bytes]:
    """Every corpus file's bytes, by name."""
    files = {name: ("\n".join(make(Draw(seed))) + "\n").encode() for name, (make, seed) in TEXT_FILES.items()}
    files.update({name: make(Draw(seed)) for name, (make, seed) in BYTE_FILES.items()})
    return files


def main(argv: list[str]) -> int:
    target = Path(argv[1]) if len(argv) > 1 else HERE
    for name, data in build().items():
        (target / name).write_bytes(data)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
