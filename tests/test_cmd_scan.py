"""`ogive scan`, `show` and `merge` end to end, through the real command line.

Outside reference: the raw latencies are read back with Python's ``csv`` module and
measured with ``numpy.quantile`` (default linear method, Hyndman & Fan type 7, which is
also the sketch's definition).
"""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from ogive import demo
from ogive.cli import main
from ogive.store import load_sketches

DEMO = Path(__file__).resolve().parents[1] / "demo_logs"
PATTERN = demo.TEXT_PATTERN

# Each bundled file, with the flags that find its latency.
FORMATS = [
    ("checkout-before.log", ["--pattern", PATTERN], 12_000 - 4, 4),
    ("checkout-after.log.gz", ["--pattern", PATTERN], 12_000 - 4, 4),
    ("checkout-day.csv", ["--column", "latency_ms", "--unit", "ms"], 24_000 - 6, 6),
    ("checkout-before.ndjson", ["--field", "timing.total_ms", "--unit", "ms"], 4_000 - 2, 2),
    ("checkout-after.ndjson.gz", ["--field", "timing.total_ms", "--unit", "ms"], 4_000 - 2, 2),
]


def _run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize(("name", "flags", "n", "bad"), FORMATS)
def test_scan_each_demo_file(
    name: str, flags: list[str], n: int, bad: int, capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    out_file = tmp_path / "s.ogive"
    code, out, err = _run(capsys, "scan", str(DEMO / name), *flags, "-o", str(out_file), "--quiet")
    assert code == 0, err
    assert f"{n:,}" in out and "skipped rows (not in the sketch):" in out
    assert f"saved 1 sketch to {out_file}" in out
    sset = load_sketches(out_file)
    s = sset["all"]
    assert s.count == n and s.unit == "ms" and s.provenance.skipped_total == bad
    # show prints the very same table from the saved file.
    code, shown, _ = _run(capsys, "show", str(out_file))
    assert code == 0
    table = shown.splitlines()
    assert len(table) >= 6 and any(ln.startswith("sketch") for ln in table)
    assert table == out.splitlines()[: len(table)]


def test_json_is_one_document_with_the_numbers(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    path = DEMO / "checkout-day.csv"
    code, out, _ = _run(
        capsys, "scan", str(path), "--column", "latency_ms", "--unit", "ms", "--json", "--quiet"
    )
    assert code == 0
    doc = json.loads(out)
    row = doc["sketches"]["all"]
    raw = np.array(
        [
            float(r["latency_ms"])
            for r in csv.DictReader(io.StringIO(path.read_text()))
            if _is_float(r["latency_ms"])
        ]
    )
    assert row["n"] == raw.size
    # The top 512 of 24k values are kept exactly, so p99 and above match numpy.quantile.
    np.testing.assert_allclose(
        [row["p99"], row["p99.9"], row["p99.99"], row["max"]],
        np.quantile(raw, [0.99, 0.999, 0.9999, 1.0]),
        rtol=1e-9,
    )
    assert row["skipped"]["not_a_number"]["count"] == 3 and row["skipped"]["missing_field"]["count"] == 3


def _is_float(text: str | None) -> bool:
    try:
        float(text or "")
    except ValueError:
        return False
    return True


def _raw_latencies(path: Path) -> np.ndarray:
    return np.array([float(r["latency_ms"]) for r in csv.DictReader(io.StringIO(path.read_text()))])


def test_merge_of_halves_matches_whole_and_numpy(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    a, b, whole = tmp_path / "a.csv", tmp_path / "b.csv", tmp_path / "whole.csv"
    demo.write(str(a), "csv", "before", rows=30_000, seed=21)
    demo.write(str(b), "csv", "after", rows=30_000, seed=22)
    whole.write_text(a.read_text() + "".join(b.read_text().splitlines(keepends=True)[1:]))
    flags = ["--column", "latency_ms", "--unit", "ms", "--quiet"]
    for src in (a, b, whole):
        assert _run(capsys, "scan", str(src), *flags, "-o", str(src.with_suffix(".ogive")))[0] == 0
    code, out, err = _run(
        capsys,
        "merge",
        str(a.with_suffix(".ogive")),
        str(b.with_suffix(".ogive")),
        "-o",
        str(tmp_path / "m.ogive"),
    )
    assert code == 0, err
    assert "merged 2 files into 1 sketch" in out
    merged, scanned = (
        load_sketches(tmp_path / "m.ogive")["all"],
        load_sketches(whole.with_suffix(".ogive"))["all"],
    )
    raw = np.sort(np.concatenate([_raw_latencies(a), _raw_latencies(b)]))
    assert merged.count == scanned.count == raw.size
    qs = np.array([0.01, 0.1, 0.5, 0.9, 0.95])
    for s in (merged, scanned):
        # Rank error against numpy on the raw values: the sketch's value must sit within
        # 0.2 % of n of the asked rank (common practice bound; the digest is far tighter).
        est = s.quantile(qs)
        ranks = np.searchsorted(raw, est, side="right") / raw.size
        assert np.all(np.abs(ranks - qs) < 2e-3), (ranks, qs)
    # The extreme tail (the top 512 of 60k: p99.2 and up) is held exactly in both, so it
    # matches numpy exactly.
    tail = np.array([0.992, 0.999, 0.9999, 1.0])
    np.testing.assert_allclose(merged.quantile(tail), np.quantile(raw, tail), rtol=1e-12)
    np.testing.assert_allclose(scanned.quantile(tail), np.quantile(raw, tail), rtol=1e-12)


def test_merge_refuses_different_fields_in_one_line(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    t, n = tmp_path / "t.ogive", tmp_path / "n.ogive"
    assert (
        _run(
            capsys, "scan", str(DEMO / "checkout-before.log"), "--pattern", PATTERN, "-o", str(t), "--quiet"
        )[0]
        == 0
    )
    flags = ["--field", "timing.total_ms", "--unit", "ms", "--quiet"]
    assert _run(capsys, "scan", str(DEMO / "checkout-before.ndjson"), *flags, "-o", str(n))[0] == 0
    code, out, err = _run(capsys, "merge", str(t), str(n), "-o", str(tmp_path / "x.ogive"))
    assert code == 3 and out == ""
    assert err.count("\n") == 1 and "cannot merge sketch 'all'" in err and "--force" in err
    assert not (tmp_path / "x.ogive").exists()
    code, _, err = _run(
        capsys, "merge", str(t), str(n), "-o", str(tmp_path / "x.ogive"), "--force", "--quiet"
    )
    assert code == 0 and "warning" in err
    assert load_sketches(tmp_path / "x.ogive")["all"].count == (12_000 - 4) + (4_000 - 2)


def test_merge_converts_duration_units(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    ms, s = tmp_path / "ms.ogive", tmp_path / "s.ogive"
    src = str(DEMO / "checkout-before.ndjson")
    assert (
        _run(capsys, "scan", src, "--field", "timing.total_ms", "--unit", "ms", "-o", str(ms), "--quiet")[0]
        == 0
    )
    flags = ["--field", "timing.total_ms", "--input-unit", "ms", "--unit", "s", "-o", str(s), "--quiet"]
    assert _run(capsys, "scan", src, *flags)[0] == 0
    code, _, _ = _run(capsys, "merge", str(ms), str(s), "-o", str(tmp_path / "x.ogive"), "--quiet")
    assert code == 0  # durations convert (issue 11): the same values twice, in ms
    once, twice = load_sketches(ms)["all"], load_sketches(tmp_path / "x.ogive")["all"]
    assert twice.unit == "ms" and twice.count == 2 * once.count
    # Merging two digests regroups their centroids: within the t-digest's own error (0.1 %), not exact.
    np.testing.assert_allclose(twice.quantile([0.5, 0.99]), once.quantile([0.5, 0.99]), rtol=1e-3)


def test_groups_merge_by_name(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    flags = ["--column", "latency_ms", "--unit", "ms", "--by", "host", "--quiet"]
    a, b = tmp_path / "a.csv", tmp_path / "b.csv"
    demo.write(str(a), "csv", "before", rows=4000, seed=31)
    demo.write(str(b), "csv", "after", rows=4000, seed=32)
    for src in (a, b):
        assert _run(capsys, "scan", str(src), *flags, "-o", str(src.with_suffix(".ogive")))[0] == 0
    assert (
        _run(
            capsys,
            "merge",
            str(a.with_suffix(".ogive")),
            str(b.with_suffix(".ogive")),
            "-o",
            str(tmp_path / "m.ogive"),
        )[0]
        == 0
    )
    merged = load_sketches(tmp_path / "m.ogive")
    assert sorted(merged.names()) == sorted(f"host={h}" for h in demo.HOSTS)
    assert sum(merged[n].count for n in merged.names()) == 8000


def test_show_quantiles_in_three_spellings(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    out_file = tmp_path / "d.ogive"
    flags = [
        "--column",
        "latency_ms",
        "--unit",
        "ms",
        "--time-field",
        "timestamp",
        "--split-at",
        demo.RELEASE_ISO,
    ]
    assert (
        _run(capsys, "scan", str(DEMO / "checkout-day.csv"), *flags, "-o", str(out_file), "--quiet")[0] == 0
    )
    results = []
    for spelling in ("0.5,0.999", "p50,p99.9", "50%,99.9%"):
        code, out, _ = _run(capsys, "show", f"{out_file}:after", "-q", spelling, "--json")
        assert code == 0
        results.append(json.loads(out)["sketches"]["after"])
    assert results[0] == results[1] == results[2]
    assert set(results[0]) >= {"p50", "p99.9"}
    code, out, _ = _run(capsys, "show", str(out_file), "-q", "p50,max")
    assert out.splitlines()[0].split() == ["sketch", "n", "p50", "max"]
    assert [ln.split()[0] for ln in out.splitlines()[1:]] == ["before", "after"]


@pytest.mark.parametrize(
    "argv",
    [
        ["scan", "/nonexistent/file.log", "--pattern", PATTERN],
        ["scan", str(DEMO / "checkout-before.log"), "--pattern", r"(\S+) dur=(\S+)"],  # two groups
        ["show", str(DEMO / "checkout-day.csv")],
        ["show", "/nonexistent.ogive"],
        ["merge", "/nonexistent.ogive", "/nonexistent2.ogive", "-o", "/tmp/never.ogive"],
    ],
)
def test_errors_are_one_line_exit_3(argv: list[str], capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(capsys, *argv)
    assert code == 3 and out == ""
    assert err.startswith("ogive: error: ") and err.count("\n") == 1 and "Traceback" not in err


def test_show_bad_quantile_is_one_line(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    out_file = tmp_path / "s.ogive"
    assert (
        _run(
            capsys,
            "scan",
            str(DEMO / "checkout-before.log"),
            "--pattern",
            PATTERN,
            "-o",
            str(out_file),
            "--quiet",
        )[0]
        == 0
    )
    for bad in ("99.9", "p101", "fast"):
        code, _, err = _run(capsys, "show", str(out_file), "-q", bad)
        assert code == 3 and err.count("\n") == 1, err


def test_sketch_to_stdout_table_to_stderr(tmp_path: Path) -> None:
    """The remote pattern: `ssh host ogive scan ... -o - > host.ogive`."""
    proc = subprocess.run(
        [
            sys.executable,
            "-m",
            "ogive",
            "scan",
            str(DEMO / "checkout-after.log.gz"),
            "--pattern",
            PATTERN,
            "-o",
            "-",
        ],
        capture_output=True,
        check=False,
    )
    assert proc.returncode == 0, proc.stderr
    (tmp_path / "remote.ogive").write_bytes(proc.stdout)
    assert load_sketches(tmp_path / "remote.ogive")["all"].count == 12_000 - 4
    assert b"p99.99" in proc.stderr and b"Traceback" not in proc.stderr


def test_group_cap_warning_reaches_json(capsys: pytest.CaptureFixture[str]) -> None:
    flags = ["--column", "latency_ms", "--unit", "ms", "--by", "host", "--max-groups", "2", "--json"]
    code, out, err = _run(capsys, "scan", str(DEMO / "checkout-day.csv"), *flags)
    assert code == 0
    doc = json.loads(out)
    assert "host=(other)" in doc["sketches"] and len(doc["sketches"]) == 3
    assert any("max-groups" in w for w in doc["warnings"])
    assert "warning" in err  # also told on stderr, as it happened
    assert sum(s["n"] for s in doc["sketches"].values()) == 24_000 - 6


def test_merge_to_stdout_and_json(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    a, b = tmp_path / "a.ogive", tmp_path / "b.ogive"
    for name, out_file in (("checkout-before.log", a), ("checkout-after.log.gz", b)):
        assert (
            _run(capsys, "scan", str(DEMO / name), "--pattern", PATTERN, "-o", str(out_file), "--quiet")[0]
            == 0
        )
    proc = subprocess.run(
        [sys.executable, "-m", "ogive", "merge", str(a), str(b), "-o", "-"], capture_output=True, check=False
    )
    assert proc.returncode == 0 and b"merged 2 files" in proc.stderr
    (tmp_path / "m.ogive").write_bytes(proc.stdout)
    assert load_sketches(tmp_path / "m.ogive")["all"].count == 2 * (12_000 - 4)
    code, out, _ = _run(capsys, "merge", str(a), str(b), "-o", str(tmp_path / "j.ogive"), "--json")
    doc = json.loads(out)
    assert code == 0 and doc["sketches"]["all"]["n"] == 2 * (12_000 - 4)
    assert doc["sketches"]["all"]["skipped_total"] == 8


def test_scan_refuses_a_sketch_and_an_unwritable_output(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    s = tmp_path / "s.ogive"
    assert (
        _run(
            capsys, "scan", str(DEMO / "checkout-before.log"), "--pattern", PATTERN, "-o", str(s), "--quiet"
        )[0]
        == 0
    )
    code, _, err = _run(capsys, "scan", str(s))
    assert code == 3 and "ogive show" in err
    code, _, err = _run(
        capsys, "scan", str(DEMO / "checkout-before.log"), "--pattern", PATTERN, "-o", "/no/such/x.ogive"
    )
    assert code == 3 and "does not exist" in err


def test_saved_sketch_gives_the_same_numbers_exactly(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    out_file = tmp_path / "d.ogive"
    flags = [
        "--column",
        "latency_ms",
        "--unit",
        "ms",
        "--by",
        "host",
        "--json",
        "--quiet",
        "-o",
        str(out_file),
    ]
    code, scanned, _ = _run(capsys, "scan", str(DEMO / "checkout-day.csv"), *flags)
    assert code == 0
    code, shown, _ = _run(capsys, "show", str(out_file), "--json")
    assert code == 0
    # Every number, including the digest-estimated middle quantiles, survives the file; the
    # codec may shorten centroid means to 12 significant digits, hence rtol 1e-9, not ==.
    a, b = json.loads(shown)["sketches"], json.loads(scanned)["sketches"]
    assert a.keys() == b.keys()
    for name in a:
        assert a[name].keys() == b[name].keys()
        for key, value in a[name].items():
            if isinstance(value, float):
                assert value == pytest.approx(b[name][key], rel=1e-9), (name, key)
            else:
                assert value == b[name][key], (name, key)
