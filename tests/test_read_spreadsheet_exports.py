"""Spreadsheet exports and their habits (read/delimited.py): a decimal comma, a ``sep=;``
first line, two columns of one name; and the decimal comma in ``KEY=VALUE`` logs.

A spreadsheet set to a European locale exports ``;``-separated records with ``12,5``
(the separator is ``;`` because the comma is taken, common practice of such exports).
Before, such a file was read with the comma as separator and the digits after it as
the value: quantiles of fractions, without a warning.

Outside references: the files are written with Python's ``csv`` module (RFC 4180
quoting) from the true values, and every figure is checked against numpy.quantile of
those values (at most 2,000 values: the sketch holds them exactly).
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest

from ogive.errors import OgiveError
from ogive.read import ScanOptions, scan
from ogive.read.delimited import decimal_comma

Q = [0.0, 0.1, 0.5, 0.9, 0.99, 1.0]


def _write(path: Path, header: list[str], rows: list[list[str]], sep: str, *, bom: bool = False) -> None:
    with open(path, "w", newline="", encoding="utf-8-sig" if bom else "utf-8") as fh:
        w = csv.writer(fh, delimiter=sep, lineterminator="\r\n")
        w.writerow(header)
        w.writerows(rows)


def _comma(x: float) -> str:
    return f"{x:.3f}".rstrip("0").rstrip(".").replace(".", ",")


def test_a_european_spreadsheet_export_is_read_as_written(tmp_path: Path) -> None:
    rng = np.random.default_rng(11)
    raw = np.round(rng.lognormal(3.0, 0.6, 1500), 3)
    path = tmp_path / "export.csv"
    rows = [
        [f"2026-03-04 10:{i // 60 % 60:02d}:{i % 60:02d}", f"h{i % 3}", _comma(v)] for i, v in enumerate(raw)
    ]
    _write(path, ["Zeitpunkt", "Rechner", "Dauer_ms"], rows, ";", bom=True)
    result = scan([str(path)], ScanOptions())
    s = result.sketches["all"]
    assert s.count == 1500 and result.skipped == {}
    assert any("decimal comma" in w for w in result.warnings)
    # Reference: numpy.quantile of the values written (1500 values: held exactly).
    np.testing.assert_allclose(s.quantile(Q), np.quantile(raw, Q), rtol=1e-12)


def test_two_columns_split_at_the_separator_not_at_the_decimal_comma(tmp_path: Path) -> None:
    """``host;12,5`` has two fields split at ``;`` and also two split at ``,``: the
    separator is the one the header agrees with."""
    raw = np.round(np.random.default_rng(5).exponential(20.0, 400), 2)
    path = tmp_path / "two.csv"
    _write(path, ["host", "dur"], [[f"web-{i % 4}", _comma(v)] for i, v in enumerate(raw)], ";")
    result = scan([str(path)], ScanOptions(by="host"))
    assert sorted(result.sketches.names()) == ["host=web-0", "host=web-1", "host=web-2", "host=web-3"]
    for k in range(4):
        # Reference: numpy.quantile of the values of that host.
        np.testing.assert_allclose(
            result.sketches[f"host=web-{k}"].quantile(Q), np.quantile(raw[k::4], Q), rtol=1e-12
        )


def test_durations_and_chunks_that_need_the_text_path(tmp_path: Path) -> None:
    """Chunks of plain numbers go through polars' own decimal-comma reader, chunks holding
    durations (``12,5 ms``) through ours: the same reading either way, and a value with
    both marks (``1.234,5``) is counted, never read as something else."""
    rng = np.random.default_rng(8)
    raw = np.round(rng.gamma(2.0, 10.0, 2000), 2)
    cells = [_comma(v) for v in raw]
    for i in range(1500, 2000):
        cells[i] = f"{cells[i]} ms"  # the last quarter written as durations
    cells.append("1.234,5")
    path = tmp_path / "mixed.csv"
    _write(path, ["host", "latency_ms"], [[f"h{i % 2}", c] for i, c in enumerate(cells)], ";")
    result = scan([str(path)], ScanOptions(column="latency_ms", chunk_bytes=4096))
    s = result.sketches["all"]
    assert s.count == 2000
    assert result.skipped["not_a_number"].count == 1
    assert result.skipped["not_a_number"].examples == [f"{path}:2002"]
    # Reference: numpy.quantile of the values written.
    np.testing.assert_allclose(s.quantile(Q), np.quantile(raw, Q), rtol=1e-12)


def test_quoted_decimal_commas_in_a_comma_separated_file(tmp_path: Path) -> None:
    raw = np.round(np.random.default_rng(2).uniform(0.5, 9.5, 300), 1)
    path = tmp_path / "quoted.csv"
    _write(path, ["host", "dur"], [["a", _comma(v)] for v in raw], ",")
    assert b'"' in path.read_bytes()  # the csv module quoted the fields holding the separator
    s = scan([str(path)], ScanOptions(column="dur")).sketches["all"]
    # Reference: numpy.quantile of the values written.
    np.testing.assert_allclose(s.quantile(Q), np.quantile(raw, Q), rtol=1e-12)


@pytest.mark.parametrize(
    ("values", "sep", "expected"),
    [
        (["12,5", "7", "3,25"], ";", True),
        (["12,5 ms", "7ms"], "\t", True),
        (["12.5", "7"], ";", False),  # no comma at all
        (["1,234,567", "12,5"], ";", False),  # two commas: digit grouping beyond doubt
        (["1,234", "12,345"], ",", False),  # quoted "1,234" in a comma file: grouping or not?
        (["1,234", "12,5"], ",", True),  # a comma followed by one digit is no grouping
        (["1,234", "12,345"], ";", True),  # the ;-separated export writes decimals so
    ],
)
def test_when_a_comma_is_a_decimal_mark(values: list[str], sep: str, expected: bool) -> None:
    assert decimal_comma(values, sep) is expected


def test_digit_grouping_in_a_comma_file_is_counted_not_guessed(tmp_path: Path) -> None:
    path = tmp_path / "grouped.csv"
    _write(path, ["host", "bytes"], [["a", "1,234"], ["b", "12,345"], ["c", "7"]], ",")
    result = scan([str(path)], ScanOptions(column="bytes"))
    assert result.sketches["all"].count == 1  # only the 7
    assert result.skipped["not_a_number"].count == 2


# ----------------------------------------------------------------- KEY=VALUE lines


def test_key_value_durations_with_a_decimal_comma(tmp_path: Path) -> None:
    """``Dauer=59,74ms`` was cut at the comma and read as 59 (and the key, holding no
    duration then, lost to ``status=``); now it is the duration, with a note."""
    rng = np.random.default_rng(4)
    raw = np.round(rng.lognormal(3.0, 0.5, 800), 2)
    path = tmp_path / "app.log"
    path.write_text(
        "".join(
            f"2026-03-04T10:{i // 60:02d}:{i % 60:02d}Z info Anfrage beendet Dauer={_comma(v)}ms status=200\n"
            for i, v in enumerate(raw)
        )
    )
    result = scan([str(path)], ScanOptions())
    s = result.sketches["all"]
    assert s.unit == "ms" and s.count == 800 and result.skipped == {}
    assert any("Dauer= pairs, the only ones that hold durations" in w for w in result.warnings)
    assert any("decimal comma" in w for w in result.warnings)
    # Reference: numpy.quantile of the values written (800 values: held exactly).
    np.testing.assert_allclose(s.quantile(Q), np.quantile(raw, Q), rtol=1e-12)


def test_a_comma_fraction_of_a_time_pair_is_kept(tmp_path: Path) -> None:
    """ISO 8601 writes a fraction of a second after a comma or a point (its decimal sign;
    from memory, RFC 3339 section 5.6 keeps only the point); ``ts=...:00,750Z`` was cut to
    ``...:00`` and landed before a split half a second later."""
    path = tmp_path / "t.log"
    path.write_text(
        "ts=2026-03-04T10:00:00,250Z dur=5ms\n"
        "ts=2026-03-04T10:00:00,750Z dur=7ms\n"
        "ts=2026-03-04T10:00:01,000Z, dur=9ms\n"
    )
    result = scan([str(path)], ScanOptions(time_field="ts", split_at="2026-03-04T10:00:00.5Z"))
    assert result.sketches["before"].count == 1 and result.sketches["after"].count == 2
    assert result.sketches["before"].max == 5.0


def test_pairs_separated_by_commas_still_end_at_the_comma(tmp_path: Path) -> None:
    path = tmp_path / "c.log"
    path.write_text("".join(f"a={i},dur={i + 0.5}ms,b=x\n" for i in range(50)))
    s = scan([str(path)], ScanOptions(field="dur")).sketches["all"]
    # Reference: the values written, 0.5 to 49.5 (numpy.quantile of them).
    np.testing.assert_allclose(s.quantile(Q), np.quantile(np.arange(50) + 0.5, Q), rtol=1e-12)


# ----------------------------------------------------------------- the sep= line


def _sep_export(path: Path, raw: np.ndarray, *, bom: bool = False, header: bool = True) -> None:
    """A spreadsheet export that names its separator on a first ``sep=;`` line, CRLF line
    ends, a decimal comma, and one bad cell at the end."""
    lines = ["sep=;"] + (["host;dauer_ms"] if header else [])
    lines += [f"h{i % 2};{_comma(v)}" for i, v in enumerate(raw)] + ["h0;kaputt"]
    path.write_bytes((b"\xef\xbb\xbf" if bom else b"") + "\r\n".join(lines).encode() + b"\r\n")


@pytest.mark.parametrize("lazy", [False, True])
@pytest.mark.parametrize("bom", [False, True])
def test_a_sep_line_names_the_separator_and_is_no_record(tmp_path: Path, bom: bool, lazy: bool) -> None:
    raw = np.round(np.random.default_rng(9).lognormal(2.0, 0.7, 600), 2)
    path = tmp_path / "sep.csv"
    _sep_export(path, raw, bom=bom)
    result = scan([str(path)], ScanOptions(lazy_files=lazy))
    s = result.sketches["all"]
    assert s.unit == "ms"  # from the header's name, dauer_ms: the header was read as one
    assert s.count == 600 and result.lines_read == 603
    assert result.skipped["not_a_number"].examples == [f"{path}:603"]  # as an editor numbers it
    # Reference: numpy.quantile of the values written (600 values: held exactly).
    np.testing.assert_allclose(s.quantile(Q), np.quantile(raw, Q), rtol=1e-12)


def test_every_source_loses_its_own_sep_line(tmp_path: Path) -> None:
    rng = np.random.default_rng(10)
    a, b = np.round(rng.exponential(5.0, 200), 2), np.round(rng.exponential(9.0, 300), 2)
    _sep_export(tmp_path / "a.csv", a)
    _sep_export(tmp_path / "b.csv", b)
    result = scan([str(tmp_path / "a.csv"), str(tmp_path / "b.csv")], ScanOptions(column="dauer_ms"))
    assert result.sketches["all"].count == 500
    assert result.skipped["not_a_number"].count == 2
    both = np.concatenate([a, b])
    # Reference: numpy.quantile of the values written.
    np.testing.assert_allclose(result.sketches["all"].quantile(Q), np.quantile(both, Q), rtol=1e-12)


def test_a_sep_line_without_a_header(tmp_path: Path) -> None:
    raw = np.round(np.random.default_rng(12).uniform(1, 50, 100), 1)
    path = tmp_path / "plain.csv"
    _sep_export(path, raw, header=False)
    result = scan([str(path)], ScanOptions(column="2", header=False))
    assert result.sketches["all"].count == 100
    assert result.skipped["not_a_number"].examples == [f"{path}:102"]
    # Reference: numpy.quantile of the values written.
    np.testing.assert_allclose(result.sketches["all"].quantile(Q), np.quantile(raw, Q), rtol=1e-12)


def test_a_name_two_columns_share_is_refused_not_guessed(tmp_path: Path) -> None:
    """Spreadsheets let two columns carry one name; taking the first was a silent guess."""
    path = tmp_path / "dup.csv"
    _write(path, ["host", "latency", "latency"], [["a", "1", "100"], ["b", "2", "200"]], ",")
    with pytest.raises(OgiveError, match=r"2 columns are named 'latency' \(positions 2, 3\)"):
        scan([str(path)], ScanOptions(column="latency"))
    assert scan([str(path)], ScanOptions(column="3")).sketches["all"].max == 200.0
