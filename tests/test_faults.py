"""Faults around a scan: damaged compressed input, a full disk, a source that changes
under the reader, a reader of our output that goes away.

Outside references: the compressors are Python's own gzip/bz2/lzma modules and the
``zstandard`` package; the kept values are checked against ``numpy.quantile`` of the
same first rows; the ``head``-like reader is a real pipe closed by a subprocess.
"""

from __future__ import annotations

import bz2
import errno
import gzip
import lzma
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import zstandard

from ogive.cli import main
from ogive.read import ScanOptions, ScanProgress, scan
from ogive.store import load_sketches

COMPRESS = {
    "gzip": gzip.compress,
    "bz2": bz2.compress,
    # preset 1, not the default 6: compressing the 4 MB test file took 9 s at 6, under 1 s
    # at 1; the container and the decoder (liblzma) are the same at every preset.
    "xz": lambda b: lzma.compress(b, preset=1),
    "zstd": lambda b: zstandard.ZstdCompressor().compress(b),
}
ROWS = 300_000


@pytest.fixture(scope="module")
def raw() -> np.ndarray:
    return np.round(np.random.default_rng(11).lognormal(2.5, 0.7, ROWS), 3)


def _csv(raw: np.ndarray) -> bytes:
    return ("id,latency_ms\n" + "".join(f"{i},{v}\n" for i, v in enumerate(raw))).encode()


@pytest.mark.parametrize("kind", sorted(COMPRESS))
def test_damaged_stream_keeps_the_good_part_flagged(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], raw: np.ndarray, kind: str
) -> None:
    blob = COMPRESS[kind](_csv(raw))
    src = tmp_path / f"cut.{kind}"
    src.write_bytes(blob[: int(len(blob) * 0.7)])
    out = tmp_path / "cut.ogive"
    code = main(["scan", str(src), "--column", "latency_ms", "-o", str(out), "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 3
    assert len(err) == 1 and "byte offset" in err[0] and f"saved to {out}" in err[0], err
    s = load_sketches(str(out))["all"]
    assert s.provenance.partial is not None and "damaged" in s.provenance.partial
    # Most of the good part survives (decompression goes in 1 MB pieces, so at most
    # about a piece is lost before the damage), and it is exactly the first rows.
    assert 0.3 * ROWS < s.count < 0.75 * ROWS
    first = raw[: s.count]
    qs = np.array([0.0, 0.5, 0.99, 1.0])
    np.testing.assert_allclose(s.quantile(qs), np.quantile(first, qs), rtol=2e-3)


def test_damaged_stream_without_output_still_fails(tmp_path: Path, raw: np.ndarray) -> None:
    from ogive.errors import OgiveError

    blob = gzip.compress(_csv(raw[:20_000]))
    src = tmp_path / "cut.gz"
    src.write_bytes(blob[: len(blob) // 2])
    with pytest.raises(OgiveError, match="byte offset"):
        scan([str(src)], ScanOptions(column="latency_ms"))  # callers other than `scan` see the error


def test_disk_full_leaves_the_old_file_and_no_temp(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch, raw: np.ndarray
) -> None:
    src = tmp_path / "d.csv"
    src.write_bytes(_csv(raw[:5000]))
    out = tmp_path / "keep.ogive"
    out.write_bytes(b"the user's earlier file")

    def full(fd: int) -> None:
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(os, "fsync", full)
    code = main(["scan", str(src), "--column", "latency_ms", "-o", str(out), "--quiet"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 3
    assert len(err) == 1 and "No space left on device" in err[0] and "nothing was changed" in err[0]
    assert out.read_bytes() == b"the user's earlier file"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["d.csv", "keep.ogive"]


def test_output_folder_missing_fails_before_the_scan(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], raw: np.ndarray
) -> None:
    src = tmp_path / "d.csv"
    src.write_bytes(_csv(raw[:100]))
    code = main(["scan", str(src), "--column", "latency_ms", "-o", str(tmp_path / "no" / "x.ogive")])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 3 and len(err) == 1 and "does not exist" in err[0]


def _scan_and_then(path: Path, action) -> tuple[int, list[str]]:  # type: ignore[no-untyped-def]
    done = []

    def progress(p: ScanProgress) -> None:
        if not done:
            done.append(True)
            action()

    r = scan([str(path)], ScanOptions(column="latency_ms", chunk_bytes=1 << 16), progress=progress)
    return r.sketches["all"].count, r.warnings


def test_source_deleted_mid_scan_is_read_to_its_end(tmp_path: Path, raw: np.ndarray) -> None:
    path = tmp_path / "gone.csv"
    path.write_bytes(_csv(raw[:50_000]))
    count, warnings = _scan_and_then(path, path.unlink)
    assert count == 50_000  # POSIX: the open file stays readable
    assert any("deleted during the scan" in w for w in warnings)


def test_source_replaced_mid_scan_is_named(tmp_path: Path, raw: np.ndarray) -> None:
    path = tmp_path / "swap.csv"
    path.write_bytes(_csv(raw[:50_000]))
    other = tmp_path / "other.csv"
    other.write_bytes(_csv(raw[:10]))
    count, warnings = _scan_and_then(path, lambda: os.replace(other, path))
    assert count == 50_000
    assert any("replaced during the scan" in w for w in warnings)


def test_source_truncated_mid_scan_is_named(tmp_path: Path, raw: np.ndarray) -> None:
    path = tmp_path / "short.csv"
    path.write_bytes(_csv(raw[:50_000]))
    count, warnings = _scan_and_then(path, lambda: os.truncate(path, 200_000))
    assert count < 50_000
    assert any("truncated during the scan" in w for w in warnings)


def test_pipe_closed_early_is_quiet(tmp_path: Path, raw: np.ndarray) -> None:
    src = tmp_path / "d.csv"
    src.write_bytes(_csv(raw[:2000]))
    sk = tmp_path / "d.ogive"
    assert main(["scan", str(src), "--column", "latency_ms", "-o", str(sk), "--quiet"]) == 0
    # ``show -q`` with 9999 quantiles writes ~200 KB, more than a pipe holds (64 KB on
    # Linux), so the writes after the reader has gone must meet EPIPE.
    qs = ",".join(f"{q / 10000:g}" for q in range(1, 10000))
    proc = subprocess.Popen(
        [sys.executable, "-m", "ogive", "show", str(sk), "-q", qs, "--json"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
    )
    assert proc.stdout is not None and proc.stderr is not None
    proc.stdout.readline()
    proc.stdout.close()  # what `| head -1` does
    err = proc.stderr.read().decode()
    assert proc.wait(timeout=60) == 0
    assert "Traceback" not in err and err == ""
