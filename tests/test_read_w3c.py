"""W3C extended log files through the CLI, against the W3C Working Draft "Extended Log
File Format" (WD-logfile-960323): ``#`` lines are directives, ``#Fields:`` names each
entry's fields in order, fields are separated by white space, ``-`` is a field without a
value, a string may be quoted with ``""`` for a quote inside, ``date`` and ``time`` are
UTC (``time`` as ``HH:MM``, seconds optional) and ``time-taken`` is in seconds. IIS
writes ``time-taken`` in milliseconds (Microsoft's IIS logging documentation, from
memory) and names itself in ``#Software:``.

References: ``numpy.quantile`` of the values written, ``datetime`` for the times; the
corpus files (``tests/formats/iis_w3c.log``, ``cdn_w3c.log``) are checked end to end in
``test_formats_corpus.py``.
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from ogive.cli import main

IIS_HEAD = [
    "#Software: Microsoft Internet Information Services 10.0",
    "#Version: 1.0",
    "#Date: 2026-11-30 08:00:00",
    "#Fields: date time s-ip cs-method cs-uri-stem sc-status time-taken",
]
START = dt.datetime(2026, 11, 30, 8, 0, 0, tzinfo=dt.UTC)


def _iis(path: Path, rows: list[tuple[int, str, str, int]], *, head: list[str] = IIS_HEAD) -> Path:
    """(seconds after START, server, route, time-taken ms) as IIS writes them."""
    lines = list(head)
    for sec, server, route, ms in rows:
        t = START + dt.timedelta(seconds=sec)
        lines.append(f"{t:%Y-%m-%d %H:%M:%S} {server} GET {route} 200 {ms}")
    path.write_text("\r\n".join(lines) + "\r\n")
    return path


def _scan(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, dict[str, Any], str]:
    code = main(["scan", *argv, "--json"])
    out, err = capsys.readouterr()
    return code, json.loads(out) if out.strip() else {}, err


def _rows(n: int, seed: int) -> list[tuple[int, str, str, int]]:
    rng = np.random.default_rng(seed)
    ms = np.round(rng.lognormal(3.0, 0.8, n)).astype(int)
    return [(i, f"10.0.0.{1 + i % 3}", ("/cart", "/pay")[i % 2], int(m)) for i, m in enumerate(ms)]


def test_iis_log_read_without_options(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    rows = _rows(600, 1)
    code, doc, err = _scan(capsys, str(_iis(tmp_path / "u_ex261130.log", rows)))
    assert code == 0, err
    s = doc["sketches"]["all"]
    want = np.array([r[3] for r in rows], dtype=float)
    assert s["n"] == want.size
    np.testing.assert_allclose([s["p50"], s["p99"]], np.quantile(want, [0.5, 0.99]), rtol=1e-9)
    assert s["unit"] == "ms"
    assert {r: t["count"] for r, t in s["skipped"].items()} == {"w3c_directive": 4}
    assert s["time_first"] == "2026-11-30T08:00:00Z"
    assert s["time_last"] == (START + dt.timedelta(seconds=599)).isoformat().replace("+00:00", "Z")
    assert "in milliseconds, as IIS writes it" in err


def test_groups_and_a_split_by_the_entries_own_time(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    rows = _rows(900, 2)
    path = _iis(tmp_path / "u.log", rows)  # the split falls 450 s after START
    code, doc, err = _scan(capsys, str(path), "--by", "cs-uri-stem", "--split-at", "2026-11-30T08:07:30Z")
    assert code == 0, err
    for half, keep in (("before", lambda s: s < 450), ("after", lambda s: s >= 450)):
        for route in ("/cart", "/pay"):
            want = np.array([ms for sec, _, r, ms in rows if r == route and keep(sec)], dtype=float)
            s = doc["sketches"][f"{half}/cs-uri-stem={route}"]
            assert s["n"] == want.size
            np.testing.assert_allclose(s["p90"], np.quantile(want, 0.9), rtol=1e-9)


def test_the_draft_forms_quoted_strings_dashes_and_minutes(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """No #Software: the draft's seconds; ``"..."`` strings with spaces and doubled quotes
    are one field; ``-`` is no value (a missing group, a missing value); ``HH:MM`` times."""
    path = tmp_path / "draft.log"
    path.write_text(
        "#Version: 1.0\n"
        "#Fields: date time cs-method cs(User-Agent) sc-status time-taken\n"
        '2026-11-30 08:00 GET "Mozilla 5.0 (X11)" 200 0.25\n'
        '2026-11-30 08:01 GET "say ""hi""" - 1.5\n'
        "2026-11-30 08:02 GET - 404 -\n"
        "2026-11-30 08:03 GET - 200 2\n"
    )
    code, doc, err = _scan(capsys, str(path), "--by", "cs(User-Agent)")
    assert code == 0, err
    sk = doc["sketches"]
    assert sk["cs(User-Agent)=Mozilla 5.0 (X11)"]["p50"] == 250.0
    assert sk['cs(User-Agent)=say "hi"']["p50"] == 1500.0
    missing = sk["cs(User-Agent)=(missing)"]
    assert missing["n"] == 1 and missing["p50"] == 2000.0
    assert missing["skipped"]["missing_field"]["count"] == 1
    assert missing["time_first"] == "2026-11-30T08:03:00Z"
    assert "in seconds, as the W3C draft defines it" in err


def test_input_unit_and_another_field(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    rows = _rows(200, 3)
    path = _iis(tmp_path / "u.log", rows)
    code, doc, err = _scan(capsys, str(path), "--input-unit", "us")
    assert code == 0, err
    want = np.array([r[3] for r in rows], dtype=float) / 1000.0
    np.testing.assert_allclose(doc["sketches"]["all"]["p50"], np.quantile(want, 0.5), rtol=1e-9)
    assert "as IIS writes it" not in err
    code, doc, err = _scan(capsys, str(path), "--field", "sc-status")
    assert code == 0, err
    assert doc["sketches"]["all"]["p50"] == 200.0


def test_restart_blocks_and_rotated_files(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """IIS writes its directive block again at a restart, and each day's file has its own."""
    a, b = _rows(300, 4), _rows(300, 5)
    first = _iis(tmp_path / "u_ex1.log", a)
    text = first.read_text().split("\n")
    first.write_text("\n".join(text[:100] + IIS_HEAD + text[100:]))
    second = _iis(tmp_path / "u_ex2.log", b)
    code, doc, err = _scan(capsys, str(first), str(second))
    assert code == 0, err
    s = doc["sketches"]["all"]
    want = np.array([r[3] for r in a + b], dtype=float)
    assert s["n"] == want.size
    np.testing.assert_allclose(s["p90"], np.quantile(want, 0.9), rtol=1e-9)
    assert s["skipped"]["w3c_directive"]["count"] == 12
    assert s["rows_read"] == s["lines_read"] == 612


def test_strict_passes_directives_and_stops_at_a_bad_entry(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = _iis(tmp_path / "u.log", _rows(50, 6))
    code, _, err = _scan(capsys, str(path), "--strict")
    assert code == 0, err
    with path.open("a") as fh:
        fh.write("2026-11-30 09:00:00 10.0.0.1 GET\r\n")
    code, _, err = _scan(capsys, str(path), "--strict")
    assert code == 3
    assert "u.log:55: the line does not have the layout" in err and "--strict" in err


def test_a_changed_field_list_is_refused_not_misread(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """Same count of fields, other order: read under the first list every value would be
    another field's. One line says so."""
    path = _iis(tmp_path / "u.log", _rows(20, 7))
    with path.open("a") as fh:
        fh.write("#Fields: date time s-ip cs-method cs-uri-stem time-taken sc-status\r\n")
        fh.write("2026-11-30 09:00:00 10.0.0.1 GET /cart 12 200\r\n")
    code, _, err = _scan(capsys, str(path))
    assert code == 3
    assert err.count("\n") == 1 and "a later #Fields: directive lists other fields" in err
    assert "Traceback" not in err


def test_field_names_and_what_is_missing(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = _iis(tmp_path / "u.log", _rows(20, 8))
    code, _, err = _scan(capsys, str(path), "--by", "CS-URI-STEM")
    assert code == 3 and "did you mean cs-uri-stem?" in err
    code, _, err = _scan(capsys, str(path), "--field", "bytes")
    assert code == 3 and "has no such field (it has: date time s-ip" in err
    no_value = _iis(tmp_path / "n.log", [], head=["#Version: 1.0", "#Fields: date time cs-uri-stem"])
    with no_value.open("a") as fh:
        fh.write("2026-11-30 08:00:00 /cart\n")
    code, _, err = _scan(capsys, str(no_value))
    assert code == 3 and "no time-taken field; choose the value with --field" in err


def test_a_utf8_byte_order_mark_hides_no_first_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """Windows programs begin files with a UTF-8 byte-order mark; the first line is read
    as if it were not there (an IIS directive, a JSON object)."""
    rows = _rows(100, 9)
    path = _iis(tmp_path / "bom.log", rows)
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    code, doc, err = _scan(capsys, str(path))
    assert code == 0, err
    assert doc["sketches"]["all"]["n"] == 100
    ndjson = tmp_path / "short.ndjson"  # 2 of 3 lines looked like JSON: under the sniffer's 80 %
    ndjson.write_bytes(b'\xef\xbb\xbf{"ms": 1.5}\n{"ms": 2.5}\n{"ms": 3.5}\n')
    code, doc, err = _scan(capsys, str(ndjson))
    assert code == 0, err
    s = doc["sketches"]["all"]
    assert s["n"] == 3 and not s["skipped"] and s["p50"] == 2.5


def test_the_csv_path_and_the_line_regex_read_alike(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Chunks of plain entries go to polars' CSV reader, chunks with a directive, a blank
    line or a quote to the line regex. Small chunks mix both; the sketches (the saved
    bytes) and the skips must be what the regex alone gives: bad entries of every kind
    fall in chunks of each path."""
    from ogive.read import ScanOptions, scan, w3c
    from ogive.read import layout as L
    from ogive.sketch import dumps

    rows = _rows(3000, 10)
    path = _iis(tmp_path / "u.log", rows)
    lines = path.read_text().split("\n")
    spoilt = {
        700: "2026-11-30 08:11:40 10.0.0.1 GET /cart 200",  # a field short
        900: "2026-11-30 08:15:00 10.0.0.1 GET /cart 200 12 7",  # a field too many
        1100: "2026-11-30 08:18:20 10.0.0.1 GET /cart 200 -",  # no time-taken
        1300: "2026-11-30 08:21:40 10.0.0.1  GET /cart 200 12",  # two spaces: an empty field
        1500: "   ",  # white space only
        1700: "2026-11-30 08:28:20 10.0.0.2 GET /pay 200 abc",  # not a number
        1900: "- 08:31:40 10.0.0.2 GET /pay 200 30",  # no date: no time
        2100: "2026-11-30 08:35:00 10.0.0.2 GET /pay 200 31  ",  # trailing spaces: an entry
    }
    for at, text in spoilt.items():
        lines[at] = text + "\r"
    lines[2200:2200] = [h + "\r" for h in IIS_HEAD]
    path.write_text("\n".join(lines))
    options = ScanOptions(by="s-ip", chunk_bytes=2048)

    def run() -> tuple[bytes, dict[str, tuple[int, list[str]]]]:
        r = scan([str(path)], options)
        return dumps(r.sketches), {k: (t.count, t.examples) for k, t in r.skipped.items()}

    fast = w3c.W3cLayout._entries
    calls: list[int] = []

    def counted(self: w3c.W3cLayout, data: bytes, **kw: bool) -> object:
        calls.append(len(data))
        return fast(self, data, **kw)

    monkeypatch.setattr(w3c.W3cLayout, "_entries", counted)
    mixed = run()
    assert len(calls) > 20  # most chunks went the CSV way
    monkeypatch.setattr(w3c.W3cLayout, "parse", L.Layout.parse)
    by_regex = run()
    assert mixed == by_regex
    # The regex and the reference agree on each spoilt line (W3C draft: one entry per line
    # of the #Fields: count, "-" for no value; no date, no time).
    assert {k: count for k, (count, _) in mixed[1].items()} == {
        "w3c_directive": 8,
        "bad_record": 3,
        "missing_field": 1,
        "not_a_number": 1,
        "blank_line": 1,
        "bad_timestamp": 1,
    }
    # Where an editor shows them: list index 700 is line 701.
    assert [e.rsplit("/", 1)[1] for e in mixed[1]["bad_record"][1]] == [
        "u.log:701",
        "u.log:901",
        "u.log:1301",
    ]


def test_by_date_beside_the_time_and_the_time_as_the_value(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """One field may feed two columns: ``--by date`` splits per day while date and time
    still give each entry's moment (it used to end in an internal error)."""
    rows = _rows(600, 11)
    path = _iis(tmp_path / "u.log", [(sec * 300, s, r, ms) for sec, s, r, ms in rows])  # 50 h
    code, doc, err = _scan(capsys, str(path), "--by", "date")
    assert code == 0, err
    per_day: dict[str, list[int]] = {}
    for sec, _, _, ms in rows:
        day = (START + dt.timedelta(seconds=sec * 300)).date().isoformat()
        per_day.setdefault(day, []).append(ms)
    assert {k: v["n"] for k, v in doc["sketches"].items()} == {
        f"date={d}": len(v) for d, v in per_day.items()
    }
    for day, values in per_day.items():
        s = doc["sketches"][f"date={day}"]
        np.testing.assert_allclose(s["p50"], np.quantile(values, 0.5), rtol=1e-9)
        assert s["time_first"].startswith(day)
