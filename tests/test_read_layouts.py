"""Record formats one by one (read/sniff.py and the format modules), on bytes in memory.

Outside references: the JSON documents are written with Python's ``json`` and the CSV
with Python's ``csv`` (RFC 4180 quoting); the OTLP documents follow the JSON encoding of
opentelemetry-proto (docs/specification.md, "JSON Protobuf Encoding": lowerCamelCase
keys, 64-bit integers as decimal strings, enums as integers); the syslog lines RFC 3164
section 4.1 and RFC 5424 section 6; the access lines the Common Log Format.
"""

from __future__ import annotations

import csv
import io
import json

import pytest

from ogive.errors import OgiveError
from ogive.read import fieldpath, records
from ogive.read.options import ScanOptions


def frame(data: bytes, **opts: object) -> tuple[records.Layout, list[dict[str, object]]]:
    layout = records.plan(data, ScanOptions(**opts))  # type: ignore[arg-type]
    df, _ = layout.parse(data)
    return layout, df.to_dicts()


# ----------------------------------------------------------------- sniffing


@pytest.mark.parametrize(
    ("first_lines", "fmt"),
    [
        ('{"a": 1}\n{"a": 2}\n', "ndjson"),
        ('{"resourceSpans": []}\n', "otlp"),
        ("<34>1 2026-03-04T10:00:00Z h app 1 - - dur=5ms\n" * 3, "syslog"),
        ("Mar  4 10:00:00 h app[1]: dur=5ms\n" * 3, "syslog"),
        ('1.2.3.4 - - [04/Mar/2026:10:00:00 +0000] "GET / HTTP/1.1" 200 5 0.001\n' * 3, "access"),
        ('"a, b",12\n"c ""d""",13\n', "csv"),
        ("a\tb\n1\t2\n", "tsv"),
        ("12.5\n13\n0.25\n", "csv"),
        ("2026-03-04T10:00:00Z GET /x took 12ms, then more\n" * 3, "text"),
    ],
)
def test_sniffing(first_lines: str, fmt: str) -> None:
    assert records.detect_format(first_lines.encode(), ScanOptions()) == fmt


def test_other_otlp_signals_and_pretty_json_are_refused_in_one_sentence() -> None:
    with pytest.raises(OgiveError, match="OTLP metrics"):
        records.plan(b'{"resourceMetrics": []}\n', ScanOptions())
    with pytest.raises(OgiveError, match="not NDJSON"):
        records.plan(b'[\n  {"a": 1}\n]\n', ScanOptions())
    with pytest.raises(OgiveError, match="binary"):
        records.plan(bytes(range(256)) * 8, ScanOptions())


# ----------------------------------------------------------------- CSV (RFC 4180)


def test_csv_with_quoted_header_and_delimiters_takes_the_only_numeric_column() -> None:
    buf = io.StringIO()
    w = csv.writer(buf)
    w.writerow(["Request, path", 'Vessel "name"', "Latency (ms)"])
    w.writerows([["/book, POST", 'the "old" one', "12.5"], ["/fares, GET", "x", "3"]])
    data = buf.getvalue().encode()
    layout = records.plan(data, ScanOptions())
    assert layout.format == "csv" and layout.header and data.startswith(layout.header_line)
    assert layout.description == "column Latency (ms)" and "only column" in layout.notes[0]
    rows = layout.parse(data[len(layout.header_line) + 1 :])[0].to_dicts()  # the scan drops the header
    assert [r["v"] for r in rows] == ["12.5", "3"]


def test_csv_with_several_numeric_columns_names_them() -> None:
    with pytest.raises(OgiveError, match=r"several columns hold numbers \(a, b\)"):
        records.plan(b"a,b,host\n1,2,x\n3,4,y\n", ScanOptions())


# ----------------------------------------------------------------- NDJSON


def test_field_paths_and_their_escapes() -> None:
    assert (
        fieldpath.json_path(fieldpath.groupings(fieldpath.parse_path(r"labels.k\.dot"))[0])
        == "$['labels']['k.dot']"
    )
    assert (
        fieldpath.json_path(fieldpath.groupings(fieldpath.parse_path('labels["k.dot"]'))[0])
        == "$['labels']['k.dot']"
    )
    assert (
        fieldpath.json_path(fieldpath.groupings(fieldpath.parse_path("items[2].ms"))[0])
        == "$['items'][2]['ms']"
    )
    assert fieldpath.json_path(fieldpath.groupings(fieldpath.parse_path("@t"))[0]) == "$['@t']"
    for bad in ("a..b", "", ".a", "a.", "a[x]", 'a["b"]c', 'a["b'):
        with pytest.raises(OgiveError, match="field path"):
            fieldpath.parse_path(bad)


def test_ndjson_keys_and_reasons() -> None:
    docs = [
        {"@t": 1, "x y": 2.5, "a-b": "3", "labels": {"k.dot": 4}, "arr": [1], "n": None},
        {"@t": 2, "x y": "nope", "labels": {"k.dot": "5"}},
    ]
    # Most lines must be objects for the file to be taken for NDJSON: the good ones come twice more.
    lines = (
        [json.dumps(d) for d in docs]
        + ["", "[1, 2]", "7", "{broken", '{"other": 1}']
        + [json.dumps(docs[0])] * 6
    )
    data = ("\n".join(lines) + "\n").encode()
    for spec, want in (("@t", ["1", "2"]), ("x y", ["2.5", "nope"]), ("a-b", ["3", None])):
        _, rows = frame(data, field=spec)
        assert [r["v"] for r in rows[:2]] == want
    _, rows = frame(data, field=r"labels.k\.dot")
    assert [r["v"] for r in rows[:2]] == ["4", "5"]
    _, rows = frame(data, field="n")
    want = "null_value missing_field blank_line not_an_object not_an_object not_json missing_field"
    assert [r["r"] for r in rows[:7]] == want.split()
    _, rows = frame(data, field="arr")
    assert rows[0]["r"] == "not_a_scalar"


def test_ecs_shape_needs_no_options_and_flat_or_nested_both_read() -> None:
    nested = {"@timestamp": "2026-03-04T10:00:00Z", "event": {"duration": 1_500_000}}
    flat = {"@timestamp": "2026-03-04T10:00:01Z", "event.duration": 2_500_000}
    data = (json.dumps(nested) + "\n" + json.dumps(nested) + "\n").encode()
    layout, rows = frame(data)
    assert layout.input_unit == "ns" and layout.names == ("v", "t")
    assert rows[0]["v"] == "1500000" and rows[0]["t"] == "2026-03-04T10:00:00Z"
    layout, rows = frame((json.dumps(flat) + "\n").encode(), field="event.duration")
    assert rows[0]["v"] == "2500000"


# ----------------------------------------------------------------- free text


def test_text_key_value_and_leading_time() -> None:
    data = (
        b'2026-03-04T10:00:00Z GET /x user="a b" dur=12ms\n'
        b"[2026-03-04 10:00:01,5] POST /y user=c dur=1.5s\n"
        b"   continuation line\n"
    )
    layout, rows = frame(data, by="user")
    assert layout.description == "field dur" and layout.time_source
    assert [(r["v"], r["g"], r["t"]) for r in rows[:2]] == [
        ("12ms", "a b", "2026-03-04T10:00:00Z"),
        ("1.5s", "c", "2026-03-04 10:00:01,5"),
    ]
    assert rows[2]["r"] == "missing_field"
    # --time-field needs no named group when the lines begin with a time stamp.
    layout, rows = frame(data, pattern=r"dur=(\S+)", time_field="when")
    assert rows[0]["t"] == "2026-03-04T10:00:00Z" and rows[2]["r"] == "no_match"


# ----------------------------------------------------------------- access logs


def test_access_log_fields() -> None:
    data = (
        b'10.0.0.1 - - [10/Oct/2026:13:55:36 -0700] "GET /cart HTTP/1.1" 200 2326 "-" "ua \\"q\\"" 0.004\n'
        b'10.0.0.2 - bo [10/Oct/2026:13:55:37 -0700] "POST /pay HTTP/1.1" 502 - "-" "ua" 1.250\n'
    ) * 4 + b"garbage\n"  # junk now and then, most lines in the format
    layout, rows = frame(data, by="method")
    assert layout.format == "access" and layout.input_unit == "s" and layout.time_format == "clf"
    assert [(r["v"], r["g"]) for r in rows[:2]] == [("0.004", "GET"), ("1.250", "POST")]
    assert rows[-1]["r"] == "bad_record"
    _, rows = frame(data, field="bytes", by="status")
    assert [(r["v"], r["g"]) for r in rows[:2]] == [("2326", "200"), ("0", "502")]  # "-": no body


# ----------------------------------------------------------------- syslog


def test_syslog_3164_and_5424() -> None:
    d3164 = b"Mar  4 13:00:01 web-1 planner[12]: dur=12ms\n<131>Mar  4 13:00:02 web-2 cron: no value\n"
    layout, rows = frame(d3164 * 2, by="severity")
    assert layout.time_format == "rfc3164"
    assert [(r["v"], r["g"], r["t"]) for r in rows[:2]] == [
        ("12ms", None, "Mar  4 13:00:01"),
        (None, "err", "Mar  4 13:00:02"),  # PRI 131 = facility 16, severity 3
    ]
    d5424 = b'<165>1 2026-03-04T13:00:01.5+01:00 web-1 app 7 ID1 [x@1 dur="8ms"] msg\n'
    layout, rows = frame(d5424 * 2, by="msgid")
    assert layout.time_format == "iso" and rows[0] == {
        "v": "8ms",
        "g": "ID1",
        "t": "2026-03-04T13:00:01.5+01:00",
    }


# ----------------------------------------------------------------- OTLP


def _span(start: object, end: object, **extra: object) -> dict[str, object]:
    ids = {"traceId": "5B8EFFF798038103D269B633813FC60C", "spanId": "EEE19B7EC3C1B174"}
    return {**ids, "name": "GET /x", "kind": 2, "startTimeUnixNano": start, "endTimeUnixNano": end, **extra}


def test_otlp_spans_rows_and_lines() -> None:
    doc = {
        "resourceSpans": [
            {
                "resource": {"attributes": [{"key": "service.name", "value": {"stringValue": "pay"}}]},
                "scopeSpans": [
                    {
                        "scope": {"name": "lib"},
                        "spans": [
                            _span("1772618400000000000", "1772618400012345678", status={"code": 2}),
                            _span(1772618400001000000, 1772618400002000000, kind=3),  # numbers accepted
                            _span("5", "0"),  # ends before it starts
                        ],
                    }
                ],
            }
        ]
    }
    data = (json.dumps(doc) + "\n\n" + json.dumps({"resourceSpans": []}) + "\n").encode()
    layout, rows = frame(data, by="service.name")
    assert layout.format == "otlp" and layout.input_unit == "ns"
    # end - start in integers: exact to the nanosecond (a float64 of the epoch is not).
    assert rows[0]["v"] == 12_345_678 and rows[1]["v"] == 1_000_000 and rows[0]["g"] == "pay"
    assert [(r["r"], r["line"]) for r in rows[2:]] == [("bad_span", 0), ("blank_line", 1), ("no_spans", 2)]
    for by, want in (
        ("kind", ["server", "client"]),
        ("status", ["error", "unset"]),
        ("name", ["GET /x"] * 2),
    ):
        _, rows = frame(data, by=by)
        assert [r["g"] for r in rows[:2]] == want


def test_named_groups_still_give_group_and_time() -> None:
    data = b"at 1772618400 host=a took 12ms\nat 1772618401 host=b took 13ms\n" * 3
    pattern = r"at (?P<ts>\d+) host=(?P<h>\w+) took (?P<value>\S+)"
    layout, rows = frame(data, pattern=pattern, by="h", time_field="ts")
    assert layout.format == "text"
    assert rows[1] == {"v": "13ms", "g": "b", "t": "1772618401"}
