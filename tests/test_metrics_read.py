"""Reading OTLP JSON metrics and OpenMetrics histograms (issue 17), against raw samples.

The files are written by ``metrics_files.py`` from seeded raw samples, so the truth is
known: every quantile bound ogive reports must contain ``numpy.quantile`` of the raw
values (its default, Hyndman & Fan type 7), and the windows of cumulative series must
hold the counts worked out by hand (differences of the cumulative counts; a reset's
own counts). Specs: opentelemetry-proto metrics.proto (temporality, bucket rules) and
OpenMetrics 1.0 "Histogram".
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import metrics_files as mf
from ogive.errors import OgiveError
from ogive.read import ScanOptions, scan
from ogive.sketch import Binned

QS = np.array([0.0, 0.001, 0.01, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95, 0.99, 0.999, 1.0])
MIN = 60 * 10**9


def check_bounds(b: Binned, raw: np.ndarray) -> None:
    """Every bound holds numpy.quantile of the raw values, and every count bound the raw count."""
    lo, hi = b.quantile_bounds(QS)
    truth = np.quantile(raw, QS)
    assert np.all(lo <= truth) and np.all(truth <= hi), (lo, truth, hi)
    est = b.quantile(QS)
    assert np.all(lo <= est) and np.all(est <= hi)
    x = np.quantile(raw, np.linspace(0, 1, 41))
    sure, most = b.count_bounds(x)
    n_le = np.searchsorted(np.sort(raw), x, side="right")
    assert np.all(sure <= n_le) and np.all(n_le <= most)


def write(tmp: Path, name: str, lines: list[str]) -> str:
    p = tmp / name
    p.write_text("\n".join(lines) + "\n")
    return str(p)


def cumulative_file(tmp: Path, rng: np.random.Generator) -> tuple[str, list[np.ndarray]]:
    """Five windows of one series: three since a start, then a restart (new start) and two more."""
    windows = [rng.lognormal(3, 1, int(n)) for n in rng.integers(300, 900, 5)]
    lines, run = [], np.zeros(len(mf.BOUNDS) + 1, dtype=int)
    start = mf.T0
    for k, w in enumerate(windows):
        if k == 3:
            run[:], start = 0, mf.T0 + 3 * 10 * MIN  # the process restarted
        run += mf.explicit(w)
        lines.append(mf.line([mf.hist_point(run.tolist(), start, mf.T0 + (k + 1) * 10 * MIN)]))
    return write(tmp, "cum.jsonl", lines), windows


def test_cumulative_series_differenced_with_a_reset(tmp_path: Path) -> None:
    path, windows = cumulative_file(tmp_path, np.random.default_rng(1))
    res = scan([path], ScanOptions())
    b = res.sketches["all"]
    assert isinstance(b, Binned) and b.unit == "ms"
    raw = np.concatenate(windows)
    assert b.count == raw.size
    np.testing.assert_array_equal(b.parts[0].counts, mf.explicit(raw))  # hand count: the sum of windows
    check_bounds(b, raw)
    assert any("1 counter reset" in w for w in res.warnings)


def test_split_and_windows_take_the_differences(tmp_path: Path) -> None:
    path, windows = cumulative_file(tmp_path, np.random.default_rng(2))
    res = scan([path], ScanOptions(split_at="2026-03-04T00:25:00Z"))
    before, after = res.sketches["before"], res.sketches["after"]
    assert isinstance(before, Binned) and isinstance(after, Binned)
    np.testing.assert_array_equal(before.parts[0].counts, mf.explicit(np.concatenate(windows[:2])))
    np.testing.assert_array_equal(after.parts[0].counts, mf.explicit(np.concatenate(windows[2:])))
    check_bounds(after, np.concatenate(windows[2:]))
    res = scan([path], ScanOptions(window="20m"))
    assert res.sketches.names() == ["2026-03-04T00:00:00Z", "2026-03-04T00:20:00Z", "2026-03-04T00:40:00Z"]
    first = res.sketches["2026-03-04T00:00:00Z"]
    assert isinstance(first, Binned)  # the windows ending at 00:10 and 00:20 (intervals (start, end])
    np.testing.assert_array_equal(first.parts[0].counts, mf.explicit(np.concatenate(windows[:2])))
    res = scan([path], ScanOptions(split_at="2026-03-04T00:20:00Z"))  # a window ending at the moment
    assert res.sketches["before"].count == sum(w.size for w in windows[:2])
    assert not any("spans" in w for w in res.warnings)


def test_counts_going_down_are_a_reset(tmp_path: Path) -> None:
    rng = np.random.default_rng(3)
    a, b = rng.lognormal(2, 1, 500), rng.lognormal(2, 1, 200)
    lines = [
        mf.line([mf.hist_point(mf.explicit(a), 0, mf.T0 + MIN)]),
        mf.line([mf.hist_point(mf.explicit(b), 0, mf.T0 + 2 * MIN)]),  # no start time, fewer values
        mf.line([mf.hist_point(mf.explicit(b), 0, mf.T0 + 2 * MIN)]),  # repeated: no newer
    ]
    res = scan([write(tmp_path, "r.jsonl", lines)], ScanOptions())
    got = res.sketches["all"]
    assert got.count == 700
    assert res.skipped["older_point"].count == 1
    assert any("counter reset" in w for w in res.warnings)


def test_delta_exponential_with_min_max(tmp_path: Path) -> None:
    rng = np.random.default_rng(4)
    windows = [rng.gamma(2.0, 30.0, 400) + 0.01 for _ in range(4)]
    pts = [
        mf.exp_point(
            w,
            4,
            mf.T0 + k * MIN,
            mf.T0 + (k + 1) * MIN,
            min=float(w.min()),
            max=float(w.max()),
            sum=float(w.sum()),
        )
        for k, w in enumerate(windows)
    ]
    res = scan(
        [write(tmp_path, "e.jsonl", [mf.line(pts, temporality=1, kind="exponentialHistogram")])],
        ScanOptions(),
    )
    b = res.sketches["all"]
    raw = np.concatenate(windows)
    assert isinstance(b, Binned) and b.interpolation == "log-linear"
    check_bounds(b, raw)
    assert b.min == raw.min() and b.max == raw.max()
    assert b.mean == pytest.approx(raw.mean(), rel=1e-12)


def test_unit_conversion_and_groups(tmp_path: Path) -> None:
    rng = np.random.default_rng(5)
    a, c = rng.lognormal(-3, 1, 800), rng.lognormal(-2, 1, 800)  # seconds
    bounds = [x / 1000 for x in mf.BOUNDS]
    lines = [
        mf.line(
            [
                mf.hist_point(
                    mf.explicit(a, bounds), mf.T0, mf.T0 + MIN, {"http.route": "/a"}, bounds=bounds
                ),
                mf.hist_point(
                    mf.explicit(c, bounds), mf.T0, mf.T0 + MIN, {"http.route": "/c"}, bounds=bounds
                ),
            ],
            unit="s",
        ),
    ]
    res = scan([write(tmp_path, "g.jsonl", lines)], ScanOptions(by="http.route"))
    assert res.sketches.names() == ["http.route=/a", "http.route=/c"]
    ga = res.sketches["http.route=/a"]
    assert ga.unit == "ms"
    check_bounds(ga, a * 1000)


def test_metric_choice_and_errors(tmp_path: Path) -> None:
    rng = np.random.default_rng(6)
    v = rng.lognormal(2, 1, 100)
    lines = [mf.line([mf.hist_point(mf.explicit(v), mf.T0, mf.T0 + MIN)], name=n) for n in ("x.dur", "y.dur")]
    path = write(tmp_path, "two.jsonl", lines)
    res = scan([path], ScanOptions())
    assert res.sketches.names() == ["x.dur", "y.dur"]
    assert scan([path], ScanOptions(metric="y.dur")).sketches.names() == ["all"]
    with pytest.raises(OgiveError, match=r"no histogram metric named 'z'; the input has: x\.dur, y\.dur"):
        scan([path], ScanOptions(metric="z"))


def test_openmetrics_scrapes_are_windows(tmp_path: Path) -> None:
    rng = np.random.default_rng(7)
    w = [rng.lognormal(-4, 1, 700) for _ in range(3)]
    ts = [1_772_582_460.0, 1_772_582_520.0, 1_772_582_580.0]
    lines = ["# TYPE lat_seconds histogram"]
    for k in range(3):
        run = np.concatenate(w[: k + 1]) if k < 2 else w[2]  # the third scrape: a restarted process
        lines += mf.scrape(run, ts=ts[k], bounds=[b / 1000 for b in mf.BOUNDS])
        lines.append("# EOF")
    res = scan([write(tmp_path, "s.prom", lines)], ScanOptions())
    b = res.sketches["all"]
    assert isinstance(b, Binned) and b.unit == "ms" and b.count == 2100
    check_bounds(b, np.concatenate(w) * 1000)
    assert any("counter reset" in x for x in res.warnings)
    res = scan([write(tmp_path, "s.prom", lines)], ScanOptions(split_at="2026-03-04T00:01:30Z"))
    assert res.sketches["before"].count == 700 and res.sketches["after"].count == 1400


def test_one_snapshot_is_since_the_start(tmp_path: Path) -> None:
    v = np.random.default_rng(8).lognormal(1, 0.5, 1000)
    lines = ["# TYPE lat histogram", "# UNIT lat milliseconds", *mf.scrape(v, name="lat"), "# EOF"]
    b = scan([write(tmp_path, "one.prom", lines)], ScanOptions()).sketches["all"]
    assert isinstance(b, Binned) and b.unit == "ms" and b.count == 1000
    check_bounds(b, v)


@pytest.mark.parametrize(
    ("bad", "reason"),
    [
        ('lat_bucket{le="1"} 5\nlat_bucket{le="2"} 3\nlat_bucket{le="+Inf"} 6', "buckets_not_cumulative"),
        ('lat_bucket{le="1"} 5\nlat_bucket{le="2"} 6', "no_inf_bucket"),
        ('lat_bucket{le="NaN"} 5\nlat_bucket{le="+Inf"} 6', "nan_bound"),
        ('lat_bucket{le="1"} -5\nlat_bucket{le="+Inf"} 6', "bad_bucket_counts"),
        ('lat_bucket{le="1"} 5\nlat_bucket{le="+Inf"} 6\nlat_count 7', "count_mismatch"),
        ("lat_bucket{le=1 5", "bad_record"),
    ],
)
def test_openmetrics_faults_are_counted(tmp_path: Path, bad: str, reason: str) -> None:
    res = scan([write(tmp_path, "bad.prom", ["# TYPE lat histogram", *bad.splitlines()])], ScanOptions())
    assert res.skipped[reason].count == 1, res.skipped


def test_le_out_of_order_is_put_in_order(tmp_path: Path) -> None:
    lines = [
        "# TYPE lat histogram",
        'lat_bucket{le="2"} 6',
        'lat_bucket{le="1"} 5',
        'lat_bucket{le="+Inf"} 6',
    ]
    res = scan([write(tmp_path, "o.prom", lines)], ScanOptions())
    assert res.sketches["all"].count == 6
    assert any("out of le order" in w for w in res.warnings)


@pytest.mark.parametrize(
    ("point", "reason"),
    [
        ({"bucketCounts": ["1", "-2"], "explicitBounds": [1]}, "bad_bucket_counts"),
        ({"bucketCounts": ["1", "2"], "explicitBounds": [1, 2]}, "bad_bucket_counts"),
        ({"bucketCounts": ["1", "2", "3"], "explicitBounds": [2, 1]}, "bounds_out_of_order"),
        ({"bucketCounts": ["1", "2"], "explicitBounds": ["NaN"]}, "nan_bound"),
        ({"bucketCounts": ["1", "2"], "explicitBounds": [1], "count": "4"}, "count_mismatch"),
        ({"bucketCounts": ["1", "2"], "explicitBounds": [1], "max": 0.5}, "extremes_outside_buckets"),
        ({"bucketCounts": ["1", "2"], "explicitBounds": [1], "flags": 1}, "no_recorded_value"),
    ],
)
def test_otlp_faults_are_counted(tmp_path: Path, point: dict[str, object], reason: str) -> None:
    dp = {"startTimeUnixNano": str(mf.T0), "timeUnixNano": str(mf.T0 + MIN), **point}
    res = scan([write(tmp_path, "f.jsonl", [mf.line([dp])])], ScanOptions())
    assert res.skipped[reason].count == 1, res.skipped


def test_otlp_lines_that_are_no_metrics(tmp_path: Path) -> None:
    good = mf.line([mf.hist_point([1, 2] + [0] * 12, mf.T0, mf.T0 + MIN)])
    lines = [
        good,
        "{not json",
        "[1, 2]",
        '{"resourceSpans": []}',
        '{"resourceMetrics": [{"scopeMetrics": 3}]}',
    ]
    res = scan([write(tmp_path, "m.jsonl", lines)], ScanOptions())
    assert res.sketches["all"].count == 3
    assert {r: t.count for r, t in res.skipped.items()} == {
        "not_json": 1,
        "not_an_object": 1,
        "no_metrics": 1,
    }
    assert res.lines_read == 5
