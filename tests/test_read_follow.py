"""Following a growing file: appended lines, rename-and-recreate, truncation."""

from __future__ import annotations

import os
import threading
import time
from pathlib import Path

import numpy as np
import pytest

from ogive.errors import OgiveError
from ogive.read import ScanOptions
from ogive.read.follow import FollowProgress, RecentWindow, follow, recent_name, recent_window


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


def test_a_file_that_appears_later_has_no_backlog(tmp_path: Path) -> None:
    """Everything in a file created after following began is new: it all belongs in the
    recent window (the first read once it appears is not a backlog to leave out)."""
    log = tmp_path / "late.log"

    def writer() -> None:
        time.sleep(0.1)
        log.write_text("dur=3ms\ndur=4ms\n")

    t = threading.Thread(target=writer)
    t.start()
    start = time.monotonic()
    options = ScanOptions(pattern=r"dur=(\d+)")
    recent = recent_window("5m", options)
    result, _ = follow(
        str(log), options, cancel=lambda: time.monotonic() - start > 0.6, poll_s=0.02, recent=recent
    )
    t.join()
    assert result.sketches["all"].count == 2
    assert result.sketches[recent.name].count == 2


# ---------------------------------------------------------------- the recent window


class _Clock:
    """A clock the test moves by hand: slices expire without any real waiting."""

    def __init__(self, t: float = 1_000_000.0) -> None:
        self.t = t

    def __call__(self) -> float:
        return self.t


def test_recent_slices_expire_on_the_arrival_clock() -> None:
    clock = _Clock()
    w = RecentWindow(60e6, slices=6, clock=clock)  # 60 s in six 10 s slices
    w.add(np.array([1.0, 2.0, 3.0]))
    clock.t += 30
    w.add(np.array([10.0]))
    assert w.sketch().count == 4
    # Younger than its span: it covers from the first value's slice to now, not a full minute.
    assert w.covered() == (1_000_000e6, 1_000_030e6)
    clock.t += 35  # the first batch is now 65 s old: out; the second 35 s: in
    assert w.sketch().count == 1
    assert float(w.sketch().quantile(0.5)) == 10.0
    clock.t += 60  # nothing arrived for a minute: a quiet log's window is empty
    assert w.sketch().count == 0
    assert len(w) == 0


def test_recent_quantiles_match_numpy_on_the_values_in_the_window() -> None:
    rng = np.random.default_rng(5)
    clock = _Clock()
    w = RecentWindow(300e6, slices=10, clock=clock)  # 5 minutes in 30 s slices
    arrived: list[tuple[float, np.ndarray]] = []
    for _ in range(40):  # 40 batches, 20 s apart: 13 minutes of arrivals
        batch = rng.lognormal(3.0, 0.8, 60)
        w.add(batch)
        arrived.append((clock.t, batch))
        clock.t += 20
    start, end = w.covered() or (0.0, 0.0)
    assert end == clock.t * 1e6
    assert 270e6 <= end - start <= 300e6  # one slice (30 s) of slack, never more than the span
    inside = np.concatenate([b for t, b in arrived if t * 1e6 >= start])
    s = w.sketch()
    assert s.count == inside.size
    qs = np.array([0.0, 0.1, 0.5, 0.9, 0.99, 0.999, 1.0])
    # Outside reference: numpy.quantile (linear, Hyndman & Fan type 7) on exactly the
    # values of the live slices. Fewer than 2 x 1024 values: the sketch is exact.
    np.testing.assert_allclose(s.quantile(qs), np.quantile(inside, qs), rtol=1e-12)


def test_recent_window_is_bounded_by_its_slice_count() -> None:
    clock = _Clock()
    w = RecentWindow(60e6, slices=12, clock=clock)
    for _ in range(2000):  # 2000 arrivals 3 s apart: 100 minutes, 100 windows' worth
        w.add(np.arange(5.0))
        clock.t += 3
        assert len(w) <= 12
    assert w.sketch().count <= 5 * 21  # 60 s / 3 s = 20 arrivals (+1 at the edge)
    with pytest.raises(ValueError, match="slices must lie between 1 and 60"):
        RecentWindow(60e6, slices=61)


def test_recent_on_record_time_uses_the_newest_record_as_now() -> None:
    clock = _Clock(0.0)  # must not be used: the records' own times decide
    w = RecentWindow(600e6, slices=10, clock=clock)
    t0 = 1.8e15  # epoch microseconds, 2027
    tus = t0 + np.arange(0, 3600e6, 6e6)  # one record every 6 s for an hour
    vals = np.arange(tus.size, dtype=np.float64)
    for i in range(0, tus.size, 50):  # batches of 5 minutes, each within the window
        w.add(vals[i : i + 50], tus[i : i + 50])
    late_t = np.array([t0, np.nan])  # an hour-old record and one without a time
    w.add(np.array([-1.0, -2.0]), late_t)
    assert w.too_old == 1 and w.untimed == 1
    start, end = w.covered() or (0.0, 0.0)
    keep = (tus >= start) & (tus < end)
    s = w.sketch()
    # Outside reference: numpy.quantile on the records whose time lies in the covered span.
    np.testing.assert_allclose(s.quantile([0.0, 0.5, 1.0]), np.quantile(vals[keep], [0.0, 0.5, 1.0]))
    assert 540e6 <= end - start <= 600e6
    assert s.provenance.time_first is not None and s.provenance.time_last is not None


def test_follow_keeps_a_recent_sketch_beside_the_all_time_one(tmp_path: Path) -> None:
    log = tmp_path / "live.log"
    log.write_text("".join(f"dur={v}ms\n" for v in range(1000, 1100)))  # backlog before following
    clock = _Clock()
    window = recent_window("2m", ScanOptions(), clock=clock)
    phase: list[str] = []

    def on_update(p: FollowProgress) -> None:
        if p.caught_up and not phase:
            phase.append("old")
            with open(log, "a") as fh:
                fh.write("".join(f"dur={v}ms\n" for v in range(1, 21)))
        elif phase == ["old"] and p.values >= 120:
            phase.append("moved")
            clock.t += 180  # three minutes pass: the first appended batch leaves the window
            with open(log, "a") as fh:
                fh.write("".join(f"dur={v}ms\n" for v in range(500, 505)))
        elif phase == ["old", "moved"] and p.values >= 125:
            phase.append("done")

    start = time.monotonic()
    result, _ = follow(
        str(log),
        ScanOptions(pattern=r"dur=(\S+)"),
        cancel=lambda: phase[-1:] == ["done"] or time.monotonic() - start > 10,
        on_update=on_update,
        poll_s=0.01,
        update_s=0.02,
        recent=window,
    )
    assert phase == ["old", "moved", "done"]
    assert list(result.sketches.sketches) == ["all", "recent-2m"]
    assert result.sketches["all"].count == 125
    recent = result.sketches["recent-2m"]
    # The backlog had no arrival time and the first appended batch aged out: only 500..504.
    assert recent.count == 5
    assert list(recent.quantile([0.0, 1.0])) == [500.0, 504.0]
    assert recent.unit == "ms"
    assert recent.provenance.time_first is not None


def test_recent_width_errors_are_one_sentence() -> None:
    with pytest.raises(OgiveError, match=r"--recent '5x' is not a positive number"):
        recent_window("5x", ScanOptions())
    assert recent_name(" 5m ") == "recent-5m"


def test_scan_follow_recent_saves_the_window_as_its_own_sketch(tmp_path: Path) -> None:
    import signal
    import subprocess
    import sys

    from ogive.store import load_sketches

    log, out = tmp_path / "app.log", tmp_path / "live.ogive"
    log.write_text("".join(f"dur={v}ms\n" for v in range(1, 101)))  # the backlog
    cmd = [sys.executable, "-m", "ogive", "scan", "--follow", str(log), "--pattern", r"dur=(\S+)"]
    proc = subprocess.Popen(
        [*cmd, "--recent", "1m", "-o", str(out)], stderr=subprocess.PIPE, stdout=subprocess.PIPE, text=True
    )
    try:
        deadline = time.monotonic() + 20
        assert proc.stderr is not None
        first = proc.stderr.readline()  # the first live line: the backlog has been read
        assert "following" in first and "values" in first and time.monotonic() < deadline
        with open(log, "a") as fh:
            fh.write("".join(f"dur={v}ms\n" for v in range(500, 530)))
        line = first
        while "last 1m p50" not in line and time.monotonic() < deadline:
            line = proc.stderr.readline()
        assert "130 values" in line and "all-time p50" in line and "last 1m p50" in line
        proc.send_signal(signal.SIGINT)
        proc.communicate(timeout=20)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 0
    saved = load_sketches(str(out))
    assert saved.names() == ["all", "recent-1m"]
    assert saved["all"].count == 130
    window = saved["recent-1m"]  # only what was appended while followed
    assert window.count == 30 and list(window.quantile([0.0, 1.0])) == [500.0, 529.0]
    assert window.provenance.time_first is not None and window.provenance.time_last is not None


def test_follow_holds_a_quoted_record_until_it_is_complete(tmp_path: Path) -> None:
    """A CSV record whose quoted field spans lines is read whole, even when the writer
    has only written half of it when the follower looks (RFC 4180 quoting)."""
    log = tmp_path / "q.csv"
    log.write_text('id,note,latency_ms\n1,"first\nsecond",10\n2,"half of it\n')
    step = {"n": 0}

    def stop() -> bool:
        step["n"] += 1
        if step["n"] == 5:
            with open(log, "a") as fh:
                fh.write('and the rest",20\n3,plain,bad\n4,x,40\n')
        return step["n"] > 40

    result, _ = follow(str(log), ScanOptions(column="latency_ms"), cancel=stop, poll_s=0.01)
    s = result.sketches["all"]
    assert s.count == 3 and sorted(s.quantile([0.0, 0.5, 1.0])) == [10.0, 20.0, 40.0]
    # The bad row is reported on the line it is on in an editor (line 6).
    assert result.skipped["not_a_number"].examples == [f"{log}:6"]


def test_follow_refuses_windows_that_would_grow_without_end(tmp_path: Path) -> None:
    log = tmp_path / "w.csv"
    log.write_text("ts,latency_ms\n2026-03-04T10:00:00Z,1\n")
    with pytest.raises(OgiveError, match="--recent"):
        follow(str(log), ScanOptions(column="latency_ms", time_field="ts", window="1m"), cancel=lambda: True)
