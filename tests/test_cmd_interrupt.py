"""Ctrl-C during a scan keeps what was read: a partial sketch, flagged, saved atomically."""

from __future__ import annotations

import os
import signal
import time
from pathlib import Path
from typing import Any

import pytest

import ogive.read
from ogive.cli import main
from ogive.errors import EXIT_INTERRUPTED
from ogive.store import load_sketches


def test_first_ctrl_c_saves_a_partial_sketch(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    src = tmp_path / "r.csv"
    src.write_text("v\n" + "".join(f"{i % 97}.5\n" for i in range(200_000)))
    out = tmp_path / "r.ogive"
    real_scan = ogive.read.scan
    before = signal.getsignal(signal.SIGINT)  # the default, or SIG_IGN in a background job

    def interrupted_scan(*args: Any, **kwargs: Any) -> Any:
        real_cancel = kwargs["cancel"]
        asked = [0]

        def cancel() -> bool:
            asked[0] += 1
            if asked[0] == 3:  # as if the user pressed Ctrl-C once the first rows are in
                os.kill(os.getpid(), signal.SIGINT)
                time.sleep(0.05)
            return bool(real_cancel())

        kwargs["cancel"] = cancel
        return real_scan(*args, **kwargs)

    monkeypatch.setattr(ogive.read, "scan", interrupted_scan)
    monkeypatch.setattr(ogive.read.options.ScanOptions, "chunk_size", lambda self, *a, **k: 64 << 10)
    assert main(["scan", str(src), "--column", "v", "-o", str(out), "--quiet"]) == EXIT_INTERRUPTED
    saved = load_sketches(out)["all"]
    assert saved.provenance.partial is not None and "interrupted (Ctrl-C" in saved.provenance.partial
    assert 0 < saved.count < 200_000
    assert saved.count == saved.provenance.lines_read - 1  # every line read but the header is in it
    # The handler is gone afterwards: a later Ctrl-C does what it did before the scan.
    assert signal.getsignal(signal.SIGINT) is before


def test_saved_sketch_gets_an_ordinary_file_mode(tmp_path: Path) -> None:
    src = tmp_path / "r.csv"
    src.write_text("v\n1\n2\n3\n")
    out = tmp_path / "r.ogive"
    old = os.umask(0o022)
    try:
        assert main(["scan", str(src), "--column", "v", "-o", str(out), "--quiet"]) == 0
    finally:
        os.umask(old)
    assert out.stat().st_mode & 0o777 == 0o644
