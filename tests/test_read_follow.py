"""Following a growing file: appended lines, rename-and-recreate, truncation."""

from __future__ import annotations

import os
import threading
import time
from pathlib import Path

import numpy as np

from ogive.read import ScanOptions
from ogive.read.follow import follow


def test_follow_survives_rotation_and_truncation(tmp_path: Path) -> None:
    log = tmp_path / "app.log"
    done = threading.Event()
    written: list[float] = []

    def writer() -> None:
        def emit(v: float) -> None:
            with open(log, "a") as fh:
                fh.write(f"req dur={v}ms\n")
            written.append(v)

        for i in range(40):
            emit(1.0 + i)
            if i % 10 == 0:
                time.sleep(0.03)
        os.rename(log, tmp_path / "app.log.1")  # rotated away, a new file takes the name
        time.sleep(0.1)
        for i in range(25):
            emit(1000.0 + i)
        time.sleep(0.3)
        log.write_text("")  # truncated in place
        time.sleep(0.1)
        emit(7.0)
        done.set()

    t = threading.Thread(target=writer)
    t.start()
    start = time.monotonic()

    def stop() -> bool:
        return (done.is_set() and time.monotonic() - start > 1.5) or time.monotonic() - start > 20

    result, rotations = follow(str(log), ScanOptions(pattern=r"dur=(\S+)"), cancel=stop, poll_s=0.02)
    t.join()
    s = result.sketches["all"]
    assert rotations == 2
    assert s.count == len(written) == 66
    # Reference: numpy.quantile on every value the writer wrote (66 values: the sketch is exact).
    np.testing.assert_allclose(s.quantile([0.1, 0.5, 0.9]), np.quantile(written, [0.1, 0.5, 0.9]))


def test_follow_waits_for_the_file_and_reads_a_last_line_without_newline(tmp_path: Path) -> None:
    log = tmp_path / "late.log"

    def writer() -> None:
        time.sleep(0.1)
        log.write_text("dur=3ms\ndur=4ms\ndur=5")

    t = threading.Thread(target=writer)
    t.start()
    start = time.monotonic()
    result, rotations = follow(
        str(log),
        ScanOptions(pattern=r"dur=(\d+)"),
        cancel=lambda: time.monotonic() - start > 0.6,
        poll_s=0.02,
    )
    t.join()
    assert rotations == 0
    assert sorted(result.sketches["all"].quantile([0.0, 0.5, 1.0])) == [3.0, 4.0, 5.0]
