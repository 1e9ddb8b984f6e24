"""Sources named by URL, read through fsspec by the ordinary single-process scan.

``file://`` and ``memory://`` (fsspec's own file systems), an ``http://`` object from a
server started here that honours Range requests (RFC 9110, section 14), and globs of
each; compression is recognised from the bytes as for local files. The reference is
the scan of the same bytes from a local path.
"""

from __future__ import annotations

import gzip
import io
import json
from contextlib import redirect_stdout
from pathlib import Path

import pytest

from cluster_data import assert_same, http_server, text_log, tricky_csv
from ogive.cli import main
from ogive.errors import OgiveError
from ogive.read import ScanOptions, scan

fsspec = pytest.importorskip("fsspec", reason="the cluster extra (pip install 'ogive[cluster]') is absent")
DUR = ScanOptions(pattern=r"dur=(\S+)")


def with_names(result, names):  # type: ignore[no-untyped-def]
    """The same result as if the sources had been named ``names`` (provenance only)."""
    for s in result.sketches.sketches.values():
        s.provenance.sources = list(names)
    return result


@pytest.fixture
def logs(tmp_path: Path) -> Path:
    data, _ = text_log(3000, 1, "a.log")
    (tmp_path / "a.log").write_bytes(data)
    (tmp_path / "b.log.gz").write_bytes(gzip.compress(text_log(2000, 2, "b.log.gz")[0]))
    tricky_csv(tmp_path / "c.csv", 800, seed=3)
    return tmp_path


def test_file_urls_and_their_globs(logs: Path) -> None:
    local = scan([str(logs / "a.log"), str(logs / "b.log.gz")], DUR)
    urls = [f"file://{logs}/a.log", f"file://{logs}/b.log.gz"]
    assert_same(with_names(local, urls), scan(urls, DUR), exact_sum=True)
    globbed = scan([f"file://{logs}/*.log*"], DUR)  # a.log, then b.log.gz (name order)
    assert globbed.sketches["all"].provenance.sources == urls
    assert_same(with_names(local, urls), globbed, exact_sum=True)


def test_memory_urls_with_compression_from_the_bytes(logs: Path) -> None:
    for name in ("a.log", "b.log.gz", "c.csv"):
        with fsspec.open(f"memory://urls-test/{name}", "wb") as fh:
            fh.write((logs / name).read_bytes())
    url = "memory://urls-test/b.log.gz"
    assert_same(with_names(scan([str(logs / "b.log.gz")], DUR), [url]), scan([url], DUR), exact_sum=True)
    csv = ScanOptions(column="latency_ms", by="host")
    url = "memory://urls-test/c.csv"
    assert_same(with_names(scan([str(logs / "c.csv")], csv), [url]), scan([url], csv), exact_sum=True)
    assert scan(["memory://urls-test/*.log*"], DUR).sketches["all"].provenance.sources == [
        "memory:///urls-test/a.log",
        "memory:///urls-test/b.log.gz",
    ]


def test_http_object_read_with_range_requests(logs: Path) -> None:
    for base, handler in http_server(logs):
        for name, options in (("c.csv", ScanOptions(column="latency_ms")), ("b.log.gz", DUR)):
            url = f"{base}/{name}"
            assert_same(
                with_names(scan([str(logs / name)], options), [url]), scan([url], options), exact_sum=True
            )
        assert handler.ranges > 0


def test_cli_scan_of_a_url(logs: Path) -> None:
    out = io.StringIO()
    with redirect_stdout(out):
        assert main(["scan", f"file://{logs}/a.log", "--pattern", r"dur=(\S+)", "--json", "--quiet"]) == 0
    doc = json.loads(out.getvalue())
    assert doc["sketches"]["all"]["n"] == scan([str(logs / "a.log")], DUR).sketches["all"].count


@pytest.mark.parametrize(
    ("url", "message"),
    [
        ("memory://urls-test/none.log", "cannot open memory://urls-test/none.log: no such file."),
        ("memory://urls-test/nothing-*.log", "no file matches memory://urls-test/nothing-\\*.log."),
        ("s3://bucket/app.log", "cannot open s3://bucket/app.log: .*s3fs.*pip install it beside ogive"),
        ("gs://bucket/app.log", "cannot open gs://bucket/app.log: .*gcsfs.*pip install it beside ogive"),
        ("nosuchproto://x/app.log", "cannot open nosuchproto://x/app.log: .*nosuchproto"),
    ],
)
def test_url_problems_are_one_sentence(url: str, message: str) -> None:
    with pytest.raises(OgiveError, match=message):
        scan([url], DUR)


def test_a_local_glob_is_expanded_when_no_file_has_that_name(logs: Path) -> None:
    got = scan([str(logs / "*.log")], DUR)
    assert got.sketches["all"].provenance.sources == [str(logs / "a.log")]
    with pytest.raises(OgiveError, match="no file matches"):
        scan([str(logs / "*.nothing")], DUR)
