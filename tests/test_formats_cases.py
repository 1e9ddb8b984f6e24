"""The cases of the formats work one by one, through the CLI, on the corpus (tests/formats)
and on small files written here: groups, field escapes, encodings and their warnings,
times that cannot be read, rows that reach no sketch, and damaged input.

Expected numbers are worked out here with Python's json, re, codecs and datetime
(outside references); specs as named in test_formats_corpus.py.
"""

from __future__ import annotations

import datetime as dt
import json
import random
import re
from collections import Counter
from pathlib import Path
from typing import Any

import pytest

from ogive.cli import main
from ogive.store import load_sketches

CORPUS = Path(__file__).parent / "formats"


def scan_json(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, dict[str, Any], str]:
    code = main(["scan", *argv, "--json", "--quiet"])
    out, err = capsys.readouterr()
    return code, (json.loads(out) if out.strip() else {}), err


def groups(doc: dict[str, Any]) -> dict[str, int]:
    """Values per group; the group of rows without a key ("(missing)": here only lines that
    are not records at all) holds their skip counts and no values."""
    return {name: s["n"] for name, s in doc["sketches"].items() if s["n"]}


def test_access_log_by_status(capsys: pytest.CaptureFixture[str]) -> None:
    """Common Log Format: status is the field after the request; lines without a latency
    or with an impossible [...] time (datetime.strptime refuses it) are in no status group."""
    rx = re.compile(r'^\S+ \S+ \S+ \[([^\]]+)\] "[^"]*" (\d{3}) \S+ ".*" \d+\.\d+$')
    want: Counter[str] = Counter()
    for line in (CORPUS / "access_combined.log").read_text().splitlines():
        m = rx.match(line)
        try:
            if m:
                dt.datetime.strptime(m[1], "%d/%b/%Y:%H:%M:%S %z")
                want[f"status={m[2]}"] += 1
        except ValueError:
            pass
    code, doc, _ = scan_json(capsys, str(CORPUS / "access_combined.log"), "--by", "status")
    assert code == 0 and groups(doc) == dict(want)


@pytest.mark.parametrize(
    ("by", "key"),
    [
        ("service.name", lambda rs, sp: rs["resource"]["attributes"][0]["value"]["stringValue"]),
        ("kind", lambda rs, sp: {2: "server", 3: "client"}[sp["kind"]]),
        ("status", lambda rs, sp: {2: "error"}.get(sp.get("status", {}).get("code", 0), "unset")),
        ("name", lambda rs, sp: sp["name"]),
        ("ferry.route", lambda rs, sp: sp["attributes"][0]["value"]["stringValue"]),
    ],
)
def test_otlp_by(by: str, key: Any, capsys: pytest.CaptureFixture[str]) -> None:
    """OTLP JSON encoding: kind and status.code are integers (SpanKind 2 server, 3 client;
    StatusCode 2 error, absent = 0 unset); service.name is a resource attribute."""
    want: Counter[str] = Counter()
    for line in (CORPUS / "traces.otlp.jsonl").read_text().splitlines():
        try:
            doc = json.loads(line)
        except ValueError:
            continue
        for rs in doc.get("resourceSpans", []):
            for ss in rs["scopeSpans"]:
                for sp in ss["spans"]:
                    want[f"{by}={key(rs, sp)}"] += 1
    code, doc, _ = scan_json(capsys, str(CORPUS / "traces.otlp.jsonl"), "--by", by)
    assert code == 0 and groups(doc) == dict(want)


def test_syslog_5424_by_severity(capsys: pytest.CaptureFixture[str]) -> None:
    # RFC 5424 section 6.2.1: PRI = facility * 8 + severity; 3 is err, 6 info.
    want: Counter[str] = Counter()
    for line in (CORPUS / "syslog_rfc5424.log").read_text().splitlines():
        m = re.match(r"^<(\d+)>1 (\S+) .*dur=", line)
        if m and m[2] != "-":
            want["severity=" + {3: "err", 6: "info"}[int(m[1]) % 8]] += 1
    code, doc, _ = scan_json(capsys, str(CORPUS / "syslog_rfc5424.log"), "--by", "severity")
    assert code == 0 and groups(doc) == dict(want)


@pytest.mark.parametrize("spec", [r"labels.k\.dot", 'labels["k.dot"]'])
def test_ndjson_key_with_a_dot_and_odd_keys(spec: str, capsys: pytest.CaptureFixture[str]) -> None:
    want: Counter[str] = Counter()
    for line in (CORPUS / "ecs.ndjson").read_text().splitlines():
        try:
            doc = json.loads(line)
        except ValueError:
            continue
        if isinstance(doc, dict) and "labels" in doc:
            want[f"{spec}={doc['labels']['k.dot']}"] += 1
    code, doc, _ = scan_json(capsys, str(CORPUS / "ecs.ndjson"), "--field", "@t", "--by", spec)
    assert code == 0 and groups(doc) == dict(want)  # @t: a key that is no identifier


def test_encoding_warnings_count_lines(capsys: pytest.CaptureFixture[str]) -> None:
    # Reference: the lines Python's codec cannot read as UTF-8.
    raw = (CORPUS / "latin1.log").read_bytes().split(b"\n")[:-1]
    bad = [i + 1 for i, line in enumerate(raw) if not _utf8(line)]
    code, doc, _ = scan_json(capsys, str(CORPUS / "latin1.log"), "--by", "user")
    assert code == 0
    (note,) = [w for w in doc["warnings"] if "not UTF-8" in w]
    assert note.startswith(f"{len(bad)} lines") and f"latin1.log:{bad[0]}, {bad[1]}" in note
    assert "user=Jos\ufffd" in doc["sketches"]  # the --by value, bad byte replaced
    nul = (CORPUS / "nul.log").read_bytes().split(b"\n")
    code, doc, _ = scan_json(capsys, str(CORPUS / "nul.log"))
    (note,) = [w for w in doc["warnings"] if "NUL" in w]
    with_nul = sum(b"\x00" in line for line in nul)
    assert note.startswith(f"{with_nul} lines")


def _utf8(line: bytes) -> bool:
    try:
        line.decode("utf-8")
    except UnicodeDecodeError:
        return False
    return True


@pytest.mark.parametrize("codec", ["utf-16", "utf-16-le", "utf-16-be"])
def test_utf16_with_or_without_bom(codec: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    text = "".join(f"2026-03-04T10:00:{i:02d}Z fare dur={i + 1}ms café\n" for i in range(40))
    path = tmp_path / "u16.log"
    path.write_bytes(text.encode(codec))
    code, doc, _ = scan_json(capsys, str(path))
    assert code == 0 and doc["sketches"]["all"]["n"] == 40 and doc["sketches"]["all"]["max"] == 40
    assert any("UTF-16" in w for w in doc["warnings"])


def test_cr_only_line_ends(capsys: pytest.CaptureFixture[str]) -> None:
    code, doc, _ = scan_json(capsys, str(CORPUS / "cr_only.log"))
    assert code == 0 and doc["sketches"]["all"]["n"] == (CORPUS / "cr_only.log").read_bytes().count(b"\r")
    assert any("CR alone" in w for w in doc["warnings"])


def test_mixed_epoch_units_are_counted(capsys: pytest.CaptureFixture[str]) -> None:
    # Reference: rows whose ts has more digits than epoch seconds (ms, us, ns).
    rows = (CORPUS / "epoch_mixed.csv").read_text().splitlines()[1:]
    other = sum(1 for r in rows if r.split(",")[0].isdigit() and len(r.split(",")[0]) > 11)
    code, doc, _ = scan_json(capsys, str(CORPUS / "epoch_mixed.csv"), "--time-field", "ts")
    assert code == 0
    assert any(w.startswith(f"{other} epoch times were not in s") for w in doc["warnings"])


def test_rfc3164_says_which_year(capsys: pytest.CaptureFixture[str]) -> None:
    _, doc, _ = scan_json(capsys, str(CORPUS / "syslog_rfc3164.log"))
    (note,) = [w for w in doc["warnings"] if "RFC 3164" in w]
    assert "no year" in note and f"here: {doc['sketches']['all']['time_first'][:4]}" in note


def test_text_time_field_without_a_named_group(capsys: pytest.CaptureFixture[str]) -> None:
    """--time-field on free text whose lines begin with a time stamp needs no regex group;
    --split-at then cuts by those times (one continuation line, without a value, is skipped)."""
    path = CORPUS / "leading_time.log"
    lines = path.read_text().splitlines()
    code, doc, _ = scan_json(
        capsys,
        str(path),
        "--pattern",
        r"took=(\S+)",
        "--time-field",
        "when",
        "--split-at",
        "2026-03-04T09:05:00Z",
    )
    assert code == 0 and set(doc["sketches"]) == {"before", "after"}
    assert doc["unassigned"] == {} and sum(s["n"] for s in doc["sketches"].values()) == len(lines) - 1


def test_rows_without_a_time_under_a_split_are_in_the_saved_file(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "t.csv"
    path.write_text("ts,ms\n2026-03-04T10:00:00Z,1\nnot a time,2\n2026-03-04T12:00:00Z,3\n,4\n")
    out = tmp_path / "t.ogive"
    code, doc, _ = scan_json(
        capsys, str(path), "--time-field", "ts", "--split-at", "2026-03-04T11:00:00Z", "-o", str(out)
    )
    assert code == 0
    assert doc["unassigned"] == {"bad_timestamp": {"count": 2, "examples": [f"{path}:3", f"{path}:5"]}}
    saved = load_sketches(str(out))
    assert saved.unassigned["bad_timestamp"].count == 2
    total = sum(s["n"] + s["skipped_total"] for s in doc["sketches"].values()) + 2
    assert total == doc["sketches"]["before"]["lines_read"] - 1  # every row: a value or counted
    main(["show", str(out)])
    assert "in no sketch: bad timestamp: 2" in capsys.readouterr().out
    both, copy = tmp_path / "both.ogive", tmp_path / "copy.ogive"
    copy.write_bytes(out.read_bytes())
    assert main(["merge", str(out), str(copy), "-o", str(both), "--quiet"]) == 0
    assert load_sketches(str(both)).unassigned["bad_timestamp"].count == 4


def test_a_10_mb_line_is_counted_and_never_printed(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "big.ndjson"
    blob = "Q" * (10 << 20)
    path.write_text('{"ms": 1}\n' + f"not json {blob}\n" + '{"ms": 2}\n' * 20)
    code, doc, err = scan_json(capsys, str(path), "--field", "ms")
    assert code == 0 and doc["sketches"]["all"]["skipped"]["not_json"]["count"] == 1
    assert "QQQQ" not in err and "QQQQ" not in json.dumps(doc)
    code = main(["scan", str(path), "--field", "ms", "--strict"])
    _, err = capsys.readouterr()
    assert code == 3 and len(err) < 300 and "QQQQ" not in err and f"{path}:2" in err


def test_a_line_too_long_for_any_group_is_unassigned(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "long.log"
    path.write_text("dur=1ms host=a\n" + "x" * 5000 + "\ndur=2ms host=b\n")
    from ogive.read import ScanOptions, scan

    res = scan([str(path)], ScanOptions(field="dur", by="host", max_line_bytes=1000, chunk_bytes=100))
    assert res.sketches.unassigned["too_long"].count == 1


@pytest.mark.parametrize("name", sorted(p.name for p in CORPUS.iterdir() if p.suffix != ".py"))
def test_damaged_copies_never_end_in_an_internal_error(
    name: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """Cut, byte-flipped and spliced copies of every corpus file: a result or one clear
    line (exit 0 or 3), never a traceback or an internal error."""
    data = (CORPUS / name).read_bytes()
    rng = random.Random(name)
    for k in range(4):
        cut = data[: rng.randrange(1, len(data))]
        spoilt = bytearray(cut)
        for _ in range(20):
            spoilt[rng.randrange(len(spoilt))] = rng.randrange(256)
        if k == 3:
            spoilt += bytes(rng.randrange(256) for _ in range(300)) + data[: len(data) // 3]
        path = tmp_path / f"{k}-{name}"
        path.write_bytes(bytes(spoilt))
        extra = [[], ["--by", "host"], ["--split-at", "2026-03-04T09:02:00Z"], ["--by", "status"]][k]
        code = main(["scan", str(path), "--quiet", *extra])
        _, err = capsys.readouterr()
        assert code in (0, 3), err
        assert "internal error" not in err and "Traceback" not in err
        if code == 3:
            assert err.count("\n") == 1


@pytest.mark.parametrize("name", ["traces.otlp.jsonl", "access_combined.log", "ecs.ndjson"])
def test_polars_own_reader_gives_the_same_counts(name: str) -> None:
    """``lazy_files`` (polars' streaming reader) or the chunked reader: the same result;
    OTLP, whose lines hold several spans, always goes the chunked way."""
    from ogive.read import ScanOptions, scan

    a = scan([str(CORPUS / name)], ScanOptions(lazy_files=True))
    b = scan([str(CORPUS / name)], ScanOptions())
    sa, sb = a.sketches["all"], b.sketches["all"]
    assert (sa.count, a.rows_read, a.lines_read) == (sb.count, b.rows_read, b.lines_read)
    assert {r: t.count for r, t in a.skipped.items()} == {r: t.count for r, t in b.skipped.items()}


def test_strict_names_the_reason_of_a_record_format(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["scan", str(CORPUS / "ecs.ndjson"), "--strict"]) == 3
    err = capsys.readouterr().err
    assert "ecs.ndjson:41: the line is blank (blank_line); stopped because of --strict." in err


@pytest.mark.parametrize(
    ("text", "flags", "warned"),
    [
        ("latency_ms\n12\n13ms\n14\n", [], 1),  # the unit from the name: said once
        ("latency_ms\n12\n13ms\n14\n", ["--unit", "ms"], 0),
        ("latency_ms\n12\n13ms\n14\n", ["--input-unit", "ms"], 0),
        ("ms\n12\n13ms\n14\n", [], 1),  # bare numbers beside suffixed ones: said once
        ("ms\n12\n13ms\n14\n", ["--unit", "ms"], 0),
    ],
)
def test_the_unit_of_bare_numbers_is_told_once_and_only_when_not_given(
    text: str, flags: list[str], warned: int, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "u.csv"
    path.write_text(text)
    assert main(["scan", str(path), *flags]) == 0
    out, err = capsys.readouterr()
    told = [ln for ln in (out + err).splitlines() if "without a suffix" in ln or "had no unit suffix" in ln]
    assert len(told) == warned, told


def test_latin1_in_the_first_ndjson_lines(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """The format and the value are worked out from bytes not yet cleaned: a Latin-1 byte
    in every line (a key, the --by value) must not hide the JSON."""
    path = tmp_path / "l1.ndjson"
    rows = [b'{"event":{"duration":%d},"user":"Jos\xe9","caf\xe9":1}' % (i * 10**6) for i in range(1, 31)]
    path.write_bytes(b"\n".join(rows) + b"\n")
    code, doc, _ = scan_json(capsys, str(path), "--by", "user")
    assert code == 0 and groups(doc) == {"user=Jos\ufffd": 30}
    assert any(w.startswith("30 lines held bytes that are not UTF-8") for w in doc["warnings"])


def test_a_file_of_blank_lines_is_counted_not_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "blank.log"
    path.write_text("\n \n\n")
    code, doc, _ = scan_json(capsys, str(path))
    assert code == 0 and doc["sketches"]["all"]["n"] == 0
    assert doc["sketches"]["all"]["skipped"]["blank_line"]["count"] == 3
