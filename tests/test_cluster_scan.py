"""Scans on a real Dask cluster (two worker processes) equal the single-process scan.

Tiny parts (a few KB) put hundreds of boundaries into small files: CRLF line ends, a
last line without its newline, quoted CSV fields holding newlines (which a boundary
must not cut), multi-member gzip, zstd, Parquet row groups. Counts, skipped rows by
reason, min/max and the exact tail buffers must be identical; quantiles are checked
against ``numpy`` on the generated values with the sketch's own bound (Dunning & Ertl
2019 t-digest, bound as ``Sketch.rank_error_bound`` documents it); every place a
skipped row is reported at must be a place the generator put such a row.
"""

from __future__ import annotations

import dataclasses
import io
import json
import sys
from collections.abc import Iterator
from contextlib import redirect_stdout
from pathlib import Path

import numpy as np
import pytest

from cluster_data import (
    Truth,
    assert_places,
    assert_same,
    gzip_members,
    http_server,
    parquet_file,
    text_log,
    tricky_csv,
    zstd_log,
)
from ogive import cluster
from ogive.cli import main
from ogive.errors import OgiveError
from ogive.read import ScanOptions, scan
from rank_check import rank_error

distributed = pytest.importorskip(
    "distributed", reason="the cluster extra (pip install 'ogive[cluster]') is absent"
)


@pytest.fixture(scope="module")
def address() -> Iterator[str]:
    """One cluster of two worker processes for the whole module (starting one takes seconds)."""
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0", silence_logs=40
    ) as lc:
        yield lc.scheduler_address


@pytest.fixture(scope="module")
def files(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, Truth]]:
    d = tmp_path_factory.mktemp("logs")
    truth = {"a.csv": tricky_csv(d / "a.csv", 2500, seed=1)}
    plain, t = text_log(3000, 2, "c.log")
    (d / "c.log").write_bytes(plain)
    truth["c.log"] = t
    truth["b.log.gz"] = gzip_members(d / "b.log.gz", 2000, seed=3)
    truth["d.log.zst"] = zstd_log(d / "d.log.zst", 1500, seed=4)
    truth["e.parquet"] = parquet_file(d / "e.parquet", 30_000, seed=5, group_rows=4000)
    return d, truth


def both(sources: list[str], options: ScanOptions, address: str, part: int) -> tuple:  # type: ignore[type-arg]
    single = scan(sources, options)
    split = cluster.scan(sources, options, cluster=address, part_bytes=part, split_every=3)
    return single, split


@pytest.mark.parametrize("part", [700])
def test_csv_with_quoted_newlines_equals_single_process(files, address, part) -> None:  # type: ignore[no-untyped-def]
    d, truth = files
    options = ScanOptions(column="latency_ms", compression=50, tail_size=64)
    single, split = both([str(d / "a.csv")], options, address, part)
    assert_same(single, split)
    assert split.sketches["all"].count == len(truth["a.csv"].values)
    assert_places(split, truth["a.csv"])
    x = np.asarray(truth["a.csv"].values)
    grid = np.linspace(0.01, 0.99, 99)
    s = split.sketches["all"]
    assert not s.exact
    err = rank_error(x, s.quantile(grid), grid)
    # One position of slack for the interpolation convention (as tests/test_sketch_bound.py).
    assert err.max() <= s.rank_error_bound() + 1 / x.size


def test_groups_and_halves_equal_single_process(files, address) -> None:  # type: ignore[no-untyped-def]
    d, _ = files
    for options in (
        ScanOptions(column="latency_ms", by="host"),
        ScanOptions(column="latency_ms", time_field="ts", split_at="2026-03-04T10:20:00Z"),
        ScanOptions(
            column="latency_ms", by="host", max_groups=20, time_field="ts", split_at="2026-03-04T10:20:00Z"
        ),
    ):
        single, split = both([str(d / "a.csv")], options, address, 3000)
        assert_same(single, split)


def test_group_cap_folds_late_groups_as_single_process(files, address) -> None:  # type: ignore[no-untyped-def]
    """With parts that each meet fewer groups than the cap, (other) is the same sketch."""
    d, _ = files
    path = d / "hosts.csv"
    rng = np.random.default_rng(9)
    hosts = [f"web-{i // 40}" for i in range(4000)]  # host k appears only in rows 40k..40k+39
    path.write_text(
        "host,ms\n" + "".join(f"{h},{v:.2f}\n" for h, v in zip(hosts, rng.exponential(5, 4000), strict=False))
    )
    single, split = both([str(path)], ScanOptions(column="ms", by="host", max_groups=30), address, 900)
    assert_same(single, split)
    assert "host=(other)" in split.sketches.names()
    assert any("70 further values" in w for w in split.warnings)


def test_compressed_and_plain_sources_in_one_stream(files, address) -> None:  # type: ignore[no-untyped-def]
    d, truth = files
    sources = [str(d / "b.log.gz"), str(d / "c.log"), str(d / "d.log.zst")]
    single, split = both(sources, ScanOptions(pattern=r"dur=(\S+)"), address, 2048)
    assert_same(single, split)
    want = sum(len(truth[n].values) for n in ("b.log.gz", "c.log", "d.log.zst"))
    assert split.sketches["all"].count == want
    examples = split.skipped["no_match"].examples
    assert examples[0] == f"{d / 'b.log.gz'}:10"  # line numbers through a gzip member boundary


def test_parquet_by_row_groups(files, address) -> None:  # type: ignore[no-untyped-def]
    d, truth = files
    options = ScanOptions(column="latency_ms", by="host")
    single, split = both([str(d / "e.parquet")], options, address, 100_000)
    assert_same(single, split)
    assert sum(s.count for s in split.sketches.sketches.values()) == len(truth["e.parquet"].values)


def test_unbalanced_quote_reads_that_file_whole(tmp_path, address) -> None:  # type: ignore[no-untyped-def]
    """A stray quote makes every later newline look quoted: the parts cannot check out,
    and the file is read again by one task, exactly as the single-process scan reads it."""
    lines = [f"{i},{i * 1.5}\n" for i in range(3000)]
    lines[400] = '400,"oops\n'
    path = tmp_path / "stray.csv"
    path.write_text("id,ms\n" + "".join(lines))
    single, split = both([str(path)], ScanOptions(column="ms"), address, 1500)
    assert_same(single, split)


def test_utf16_and_cr_files_are_one_part_each(tmp_path, address) -> None:  # type: ignore[no-untyped-def]
    body = "".join(f"dur={i % 97}ms\n" for i in range(4000))
    (tmp_path / "u16.log").write_bytes(body.encode("utf-16"))
    (tmp_path / "cr.log").write_bytes(body.replace("\n", "\r").encode())
    sources = [str(tmp_path / "u16.log"), str(tmp_path / "cr.log")]
    single, split = both(sources, ScanOptions(pattern=r"dur=(\S+)"), address, 1000)
    assert_same(single, split)
    assert split.sketches["all"].count == 8000
    assert split.warnings == single.warnings  # "the file is UTF-16 ...", "lines end with CR alone ..."


def test_strict_names_the_first_bad_row_like_single_process(files, address) -> None:  # type: ignore[no-untyped-def]
    d, truth = files
    options = ScanOptions(column="latency_ms", strict=True)
    with pytest.raises(OgiveError) as single:
        scan([str(d / "a.csv")], options)
    with pytest.raises(OgiveError) as split:
        cluster.scan([str(d / "a.csv")], options, cluster=address, part_bytes=3000)
    assert str(split.value) == str(single.value)
    assert str(d / truth["a.csv"].places["not_a_number"][0]) in str(split.value)


def test_stopping_keeps_finished_parts_flagged_partial(files, address) -> None:  # type: ignore[no-untyped-def]
    d, truth = files
    calls = 0

    def stop() -> bool:
        nonlocal calls
        calls += 1
        return calls > 3

    options = ScanOptions(pattern=r"dur=(\S+)", keep_partial=True)
    got = cluster.scan([str(d / "c.log")], options, cluster=address, part_bytes=500, cancel=stop)
    assert got.partial is not None and got.partial.startswith("stopped on request")
    assert all(s.provenance.partial == got.partial for s in got.sketches.sketches.values())
    s = got.sketches["all"]
    assert s.count < len(truth["c.log"].values)
    # what was kept is counted once: no more lines than values and skips account for
    assert s.count + sum(t.count for t in got.skipped.values()) == got.rows_read <= got.lines_read
    # places after a missing part are given by byte offset, and the result says so
    kept = got.skipped["no_match"].examples if "no_match" in got.skipped else []
    for ex in kept:
        assert ex.removeprefix(f"{d}/") in truth["c.log"].places["no_match"] or "@" in ex
    if any("@" in ex for ex in kept):
        assert any("count lines from byte" in w for w in got.warnings)


def test_a_part_that_cannot_be_read_is_named_and_the_rest_kept(tmp_path, address) -> None:  # type: ignore[no-untyped-def]
    """A memory:// file exists in this process only: the client plans it, the workers
    cannot open it. The parts that fail are named by file and bytes; with
    ``keep_partial`` the rest is kept and the result is flagged; without it, an error."""
    import fsspec

    data, _ = text_log(400, 8, "x.log")
    with fsspec.open("memory://cluster-test/x.log", "wb") as fh:
        fh.write(data)
    (tmp_path / "ok.log").write_bytes(data)
    sources = [str(tmp_path / "ok.log"), "memory://cluster-test/x.log"]
    options = ScanOptions(pattern=r"dur=(\S+)", keep_partial=True)
    got = cluster.scan(sources, options, cluster=address, part_bytes=4096)
    assert got.error is not None and "memory://cluster-test/x.log bytes 0-4,096" in got.error
    assert got.partial is not None
    alone = scan([str(tmp_path / "ok.log")], dataclasses.replace(options, keep_partial=False))
    assert got.sketches["all"].count == alone.sketches["all"].count
    with pytest.raises(OgiveError, match="no such file"):
        cluster.scan(
            sources, dataclasses.replace(options, keep_partial=False), cluster=address, part_bytes=4096
        )


def test_https_path_read_in_ranges(files, address) -> None:  # type: ignore[no-untyped-def]
    """An object served over HTTP with Range support (http:// on 127.0.0.1; https:// is
    the same fsspec code with TLS): each part fetches its own bytes."""
    d, _ = files
    for base, handler in http_server(d):
        url = f"{base}/a.csv"
        options = ScanOptions(column="latency_ms")
        split = cluster.scan([url], options, cluster=address, part_bytes=8192)
        single = scan([str(d / "a.csv")], options)
        assert split.sketches["all"].count == single.sketches["all"].count
        assert (split.lines_read, split.rows_read, split.bytes_read) == (
            single.lines_read,
            single.rows_read,
            single.bytes_read,
        )
        assert handler.ranges >= 10


def test_cli_scan_and_compare_accept_cluster(files, address, tmp_path) -> None:  # type: ignore[no-untyped-def]
    d, _ = files

    def run(*argv: str) -> dict:  # type: ignore[type-arg]
        out = io.StringIO()
        with redirect_stdout(out):
            assert main(list(argv)) == 0
        return json.loads(out.getvalue())

    base = ["scan", str(d / "a.csv"), "--column", "latency_ms", "--by", "host", "--json", "--quiet"]
    here = run(*base)
    there = run(*base, "--cluster", address, "--part-size", "3k")
    for doc in (here, there):
        doc.pop("elapsed_s")
        for s in doc["sketches"].values():  # the sum is added in another order: a few ulps
            s["mean"] = round(s["mean"], 9)
    # ~360 values a host: every sketch is exact, so every quantile is identical too
    assert there == here
    cmp = ["compare", str(d / "c.log"), str(d / "b.log.gz"), "--pattern", r"dur=(\S+)", "--json"]
    split, single = run(*cmp, "--cluster", address, "--part-size", "4k"), run(*cmp)
    assert split["n"] == single["n"] and split["labels"] == single["labels"]
    # max is exact in both; the middle comes from a merged digest, within its bound
    assert split["ladder"][-1] == single["ladder"][-1]


def test_missing_extra_is_one_sentence(monkeypatch, files) -> None:  # type: ignore[no-untyped-def]
    d, _ = files
    monkeypatch.setitem(sys.modules, "distributed", None)
    with pytest.raises(OgiveError, match=r"--cluster needs dask's distributed scheduler.*ogive\[cluster\]"):
        cluster.scan([str(d / "c.log")], ScanOptions(pattern=r"dur=(\S+)"), cluster="local:1")
    monkeypatch.setitem(sys.modules, "fsspec", None)
    with pytest.raises(OgiveError, match=r"reading URLs needs fsspec.*ogive\[cluster\]"):
        scan(["s3://bucket/app.log"], ScanOptions())


async def test_workspace_scans_on_the_cluster(files, address) -> None:  # type: ignore[no-untyped-def]
    """``ogive view --cluster``: the workspace's background scan runs on the cluster."""
    from ogive.ui import OgiveApp

    d, truth = files
    options = ScanOptions(column="latency_ms")
    app = OgiveApp([str(d / "a.csv")], options, families=["lognormal"], cluster=address)
    async with app.run_test(size=(80, 24)) as pilot:
        for _ in range(600):
            if app.ws.jobs and all(j.done for j in app.ws.jobs):
                break
            await pilot.pause(0.1)
        rows = [r for r in app.ws.dists.values() if r.origin == str(d / "a.csv")]
        assert [r.sketch.count for r in rows] == [len(truth["a.csv"].values)]
        assert rows[0].state == "ready"
