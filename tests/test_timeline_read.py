"""The timeline's one pass: each row in its window (checked against Python's datetime),
each window's quantiles (checked against numpy.quantile on its raw values), the whole
beside the windows, groups, and names that say which window a sketch holds."""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import numpy as np
import pytest

from ogive.cli import main
from ogive.errors import OgiveError
from ogive.fit.timeline import read_windows
from ogive.read import ScanOptions, scan
from ogive.sketch import timekeys

T0 = dt.datetime(2026, 3, 4, 23, 40, tzinfo=dt.UTC)  # the windows cross midnight


def _timeline_options(**kw: object) -> ScanOptions:
    base: dict[str, object] = dict(
        column="latency_ms",
        time_field="ts",
        window="5m",
        timeline=True,
        window_compression=200,
        window_tail=128,
    )
    base.update(kw)
    return ScanOptions(**base)  # type: ignore[arg-type]


def _write(path: Path, stamps: list[str], values: np.ndarray, hosts: list[str] | None = None) -> None:
    head = "ts,latency_ms" + (",host" if hosts else "")
    rows = [
        f"{t},{v:.3f}" + (f",{hosts[i]}" if hosts else "")
        for i, (t, v) in enumerate(zip(stamps, values, strict=True))
    ]
    path.write_text("\n".join([head, *rows]) + "\n")


def _stamps(rng: np.random.Generator, n: int) -> tuple[list[str], list[dt.datetime]]:
    """Random moments over 40 minutes, written with or without fractions and offsets, some
    out of order (a merged log)."""
    secs = np.sort(rng.uniform(0, 2400, n))
    secs[::97] = secs[::97][::-1]  # a few rows out of order
    moments = [T0 + dt.timedelta(seconds=float(s)) for s in secs]
    texts = []
    for i, m in enumerate(moments):
        if i % 3 == 0:
            texts.append(m.strftime("%Y-%m-%dT%H:%M:%S.%f")[:-3] + "Z")
        elif i % 3 == 1:  # the same moment in another zone
            texts.append(m.astimezone(dt.timezone(dt.timedelta(hours=2))).isoformat(timespec="milliseconds"))
        else:
            texts.append(m.strftime("%Y-%m-%d %H:%M:%S.%f"))  # no offset: UTC
    # What the file says, read back by Python (milliseconds kept, as written).
    parsed = [dt.datetime.fromisoformat(t.replace("Z", "+00:00").replace(" ", "T")) for t in texts]
    parsed = [p if p.tzinfo else p.replace(tzinfo=dt.UTC) for p in parsed]
    return texts, parsed


def test_rows_land_in_the_window_python_datetime_puts_them_in(tmp_path: Path) -> None:
    rng = np.random.default_rng(4)
    texts, parsed = _stamps(rng, 4000)
    values = np.round(rng.lognormal(2, 0.6, len(texts)), 3)
    f = tmp_path / "t.csv"
    _write(f, texts, values)
    sset = scan([str(f)], _timeline_options()).sketches
    # Reference: each moment floored to 5 minutes by datetime arithmetic.
    expected: dict[str, list[float]] = {}
    for m, v in zip(parsed, values, strict=True):
        start = m.astimezone(dt.UTC).replace(
            second=0, microsecond=0, minute=m.astimezone(dt.UTC).minute // 5 * 5
        )
        expected.setdefault(start.strftime("%Y-%m-%dT%H:%M:%SZ") + "/PT5M", []).append(float(v))
    windows = {n: s for n, s in sset.sketches.items() if n != "all"}
    assert sorted(windows) == sorted(expected)
    for name, vals in expected.items():
        s = windows[name]
        assert s.count == len(vals)
        # Each window holds about 500 values, more than its exact tails (2 x 128): the
        # middle comes from the digest, so quantiles are checked by rank against
        # numpy.quantile on the raw values, within the sketch's own rank bound.
        ref = np.sort(vals)
        qs = np.array([0.1, 0.5, 0.9, 0.99, 0.999])
        est = s.quantile(qs)
        bound = s.rank_error_bound() * s.count + 1
        lo = np.searchsorted(ref, est, side="left")
        hi = np.searchsorted(ref, est, side="right")
        target = qs * (len(ref) - 1)
        assert np.all((target >= lo - 1 - bound) & (target <= hi + bound)), name
        np.testing.assert_allclose(s.quantile([0.999, 1.0]), np.quantile(ref, [0.999, 1.0]))  # exact tail
        key = timekeys.parse_key(name)
        assert key is not None and key.width_us == 300e6
    assert sset["all"].count == len(values)
    np.testing.assert_allclose(sset["all"].quantile([0.5, 0.99]), np.quantile(values, [0.5, 0.99]), rtol=2e-3)


def test_small_windows_are_exact_against_numpy(tmp_path: Path) -> None:
    rng = np.random.default_rng(8)
    texts, parsed = _stamps(rng, 600)
    values = np.round(rng.lognormal(1, 1, len(texts)), 3)
    f = tmp_path / "t.csv"
    _write(f, texts, values)
    data = read_windows(scan([str(f)], _timeline_options()).sketches)
    assert data.count == 8  # 23:40 to 00:20: 23:40, 23:45, ..., 00:15
    starts = np.array([p.timestamp() for p in parsed])
    for i, s in enumerate(data.streams["all"].windows):
        lo = data.start(i) / 1e6
        sel = values[(starts >= lo) & (starts < lo + 300)]
        assert s is not None and s.count == sel.size
        np.testing.assert_allclose(
            s.quantile([0.5, 0.9, 0.99]), np.quantile(sel, [0.5, 0.9, 0.99]), atol=1e-9
        )


def test_groups_bad_times_and_the_window_cap(tmp_path: Path) -> None:
    rng = np.random.default_rng(9)
    texts, _ = _stamps(rng, 900)
    hosts = [f"web-{i % 3}" for i in range(len(texts))]
    texts[10] = "yesterday"
    f = tmp_path / "g.csv"
    _write(f, texts, rng.lognormal(1, 0.5, len(texts)), hosts)
    res = scan([str(f)], _timeline_options(by="host"))
    names = res.sketches.names()
    assert {"all", "host=web-0", "host=web-1", "host=web-2"} <= set(names)
    groups = [n for n in names if n.startswith("host=web-0@")]
    assert len(groups) == 8 and all(timekeys.parse_key(n) is not None for n in groups)
    # Every timed row is in one window, its group and its group's window; the bad time in none.
    windows = [n for n in names if timekeys.parse_key(n) and "@" not in n]
    assert sum(res.sketches[n].count for n in windows) == res.sketches["all"].count == len(texts) - 1
    assert res.skipped["bad_timestamp"].count == 1
    assert sum(res.sketches[f"host=web-{i}"].count for i in range(3)) == len(texts) - 1
    with pytest.raises(OgiveError, match="more than 20 window sketches"):
        scan([str(f)], _timeline_options(by="host", max_windows=20))


def test_window_names_round_trip() -> None:
    start = dt.datetime(2026, 3, 4, 13, 0, tzinfo=dt.UTC).timestamp() * 1e6
    for width_s, text in (
        (300, "PT5M"),
        (86400, "P1D"),
        (90, "PT1M30S"),
        (0.5, "PT0.5S"),
        (3600 * 26, "P1DT2H"),
    ):
        assert timekeys.duration_text(width_s * 1e6) == text
        key = timekeys.parse_key(timekeys.window_key(start, width_s * 1e6, "route=/a@b"))
        assert key == timekeys.WindowKey("route=/a@b", start, width_s * 1e6)
    assert timekeys.parse_key("all") is None and timekeys.parse_key("2026-03-04T13:00:00Z/P") is None


def test_cli_saves_and_redraws_without_the_logs(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    from timeline_streams import DAY_START_US, day

    values = day("body", 21, per_window=40, windows=200)
    rows = []
    for w, x in enumerate(values):
        for k, v in enumerate(x):
            us = DAY_START_US + w * 300e6 + (k + 0.5) * 300e6 / x.size
            rows.append((dt.datetime.fromtimestamp(us / 1e6, dt.UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ"), v))
    f = tmp_path / "day.csv"
    f.write_text("ts,latency_ms\n" + "\n".join(f"{t},{v}" for t, v in rows) + "\n")
    out = tmp_path / "day.ogive"
    args = [str(f), "--column", "latency_ms", "--time-field", "ts", "--unit", "ms", "-o", str(out), "--quiet"]
    assert main(["timeline", *args, "--json"]) == 0
    first = json.loads(capsys.readouterr().out)
    assert main(["timeline", str(out), "--json"]) == 0
    again = json.loads(capsys.readouterr().out)
    keys = ("start", "end", "interval", "split_at", "kind", "moved", "before_n", "after_n")
    for a, b in zip(first["streams"][0]["changes"], again["streams"][0]["changes"], strict=True):
        assert {k: a[k] for k in keys} == {k: b[k] for k in keys}
        # The file keeps 12 significant digits of a mixed centroid's mean (the codec).
        assert [m["after"] for m in a["ladder"]] == pytest.approx([m["after"] for m in b["ladder"]], rel=1e-9)
    assert first["window"] == "PT5M" and first["windows"] == 200
    change = first["streams"][0]["changes"][0]  # truth: 13:00, window 156 (tests/timeline_streams.py)
    assert abs(change["search"]["first_window"] - 156) <= 1 and "gate_command" in change
    assert main(["timeline", str(out), "--ascii", "--width", "80"]) == 0
    text = capsys.readouterr().out
    assert "Change points in all" in text and "Windows of all (95% interval" in text
    assert all(len(line) <= 80 for line in text.splitlines() if "check it:" not in line)
    assert text.isascii()


DEMO = Path(__file__).resolve().parents[1] / "demo_logs"


@pytest.mark.parametrize(
    ("name", "start", "end"),
    [("checkout-day.csv", "13:00", "13:00"), ("checkout-rollout.csv.gz", "13:00", "13:40")],
)
def test_demo_release_is_found_at_its_time(name: str, start: str, end: str) -> None:
    """demo_logs/README.md: v4.2.0 at 13:00 (all hosts at once), and the same release
    rolled out host by host from 13:00 to 13:40; found within one 5-minute window."""
    sset = scan(
        [str(DEMO / name)], _timeline_options(column="latency_ms", time_field="timestamp", unit="ms")
    ).sketches
    from ogive.fit.timeline import build_timeline

    tl = build_timeline(read_windows(sset), table="none")
    first = tl.streams[0].changes[0]

    def minutes(us: float) -> float:
        m = dt.datetime.fromtimestamp(us / 1e6, dt.UTC)
        return m.hour * 60 + m.minute + m.second / 60

    assert abs(minutes(first.start_us) - minutes_of(start)) <= 5
    assert abs(minutes(first.end_us) - minutes_of(end)) <= 5
    assert first.gradual == (start != end)
    assert {"p90", "p99"} <= set(first.moved)


def minutes_of(clock: str) -> int:
    h, m = clock.split(":")
    return int(h) * 60 + int(m)


def test_a_followed_timeline_keeps_its_latest_windows(tmp_path: Path) -> None:
    """Following a log with windows: past max_windows the oldest windows go (the whole
    keeps every value), so memory stays bounded however long the follow lasts."""
    import threading
    import time

    from ogive.read.follow import follow

    log = tmp_path / "live.csv"
    log.write_text("ts,latency_ms\n")
    done = threading.Event()

    def writer() -> None:
        for minute in range(12):
            with open(log, "a") as fh:
                for k in range(20):
                    moment = T0 + dt.timedelta(minutes=minute, seconds=3 * k)
                    fh.write(f"{moment.strftime('%Y-%m-%dT%H:%M:%SZ')},{minute + 1}.5\n")
            time.sleep(0.02)
        done.set()

    t = threading.Thread(target=writer)
    t.start()
    start = time.monotonic()
    options = _timeline_options(window="1m", max_windows=5)
    result, _ = follow(
        str(log), options, cancel=lambda: done.is_set() and time.monotonic() - start > 1.0, poll_s=0.01
    )
    t.join()
    windows = sorted(n for n in result.sketches.names() if timekeys.parse_key(n))
    assert windows == [f"2026-03-04T23:{m}:00Z/PT1M" for m in range(47, 52)]  # T0 is 23:40
    assert result.sketches["all"].count == 12 * 20
    assert result.sketches[windows[-1]].quantile(0.5)[()] == 12.5  # the last minute's value


def test_no_timed_value_is_one_sentence(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    f = tmp_path / "empty.csv"
    f.write_text("ts,latency_ms\nnot-a-time,5\n")
    assert main(["timeline", str(f), "--column", "latency_ms", "--time-field", "ts", "--quiet"]) == 3
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "no time window holds a value" in err
