"""The timeline's pictures and text: time ticks people can read, a chart and strip that
fit their size exactly, change marks where the changes are, and highest-density bands
computed as the method says (Hyndman 1996: the densest cells holding the share)."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from ogive.fit.strip import STRIP_BANDS, density_strip
from ogive.fit.timeline import Timeline, build_timeline, read_windows
from ogive.render.timeline import chart_figure, span_text, sparkline, strip_lines, time_label, time_ticks
from ogive.render.timeline_text import report_lines
from timeline_streams import day, sketch_set


def _us(*args: int) -> float:
    return dt.datetime(*args, tzinfo=dt.UTC).timestamp() * 1e6


def test_time_ticks_fall_on_round_moments_and_read_as_clocks_or_dates() -> None:
    day_ticks = time_ticks(_us(2026, 3, 4), _us(2026, 3, 5), 70)
    labels = [t.label for t in day_ticks]
    assert labels[0] == "00:00" and all(len(x) == 5 and x[2] == ":" for x in labels)
    steps = np.diff([t.value for t in day_ticks]) / 3600e6
    assert len(set(steps.round(6))) == 1 and steps[0] in (1, 2, 3, 6)  # whole hours
    week = time_ticks(_us(2026, 3, 4), _us(2026, 3, 11), 70)
    assert [t.label for t in week][:2] == ["Mar 04", "Mar 05"]
    hour = time_ticks(_us(2026, 3, 4, 13), _us(2026, 3, 4, 13, 2), 60)
    assert hour[0].label == "13:00:00" and hour[1].label.startswith("13:00:")
    # Across midnight on a sub-day axis the day change is named.
    night = time_ticks(_us(2026, 3, 4, 22), _us(2026, 3, 5, 2), 60)
    assert "Mar 05" in [t.label for t in night]
    assert time_label(_us(2026, 3, 4, 13, 30), 900, days=False) == "13:30"
    assert [span_text(s) for s in (300, 90, 5400, 86400 * 2)] == ["5m", "1m30s", "1h30m", "2d"]


def test_hdr_levels_follow_the_definition() -> None:
    """Cells sorted by mass, densest first; a cell is in band k when the cells denser than
    it hold less than that band's share. Checked on one column against the rule by hand."""
    from ogive.sketch import Sketch

    rng = np.random.default_rng(1)
    x = np.concatenate((rng.lognormal(0, 0.2, 3000), rng.lognormal(3, 0.2, 1000)))  # two modes
    s = Sketch("ms", compression=200, tail_size=128)
    s.add(x)
    strip = density_strip([s], rows=20, columns=1, low=0.3, high=60.0)
    counts = np.histogram(x, bins=strip.edges)[0].astype(float)  # numpy on the raw values
    order = np.argsort(-counts, kind="stable")
    before = (np.cumsum(counts[order]) - counts[order]) / x.size
    expect = np.zeros(20, dtype=int)
    for k, band in reversed(list(enumerate(STRIP_BANDS))):
        expect[order[before < band]] = len(STRIP_BANDS) - k
    expect[counts == 0] = 0
    got = strip.levels[:, 0].astype(int)
    # The dense bands (half and 90 % of the values) are those of the raw histogram.
    np.testing.assert_array_equal(got >= 3, expect >= 3)
    # Centroids stand at their means: cells at a band's edge may differ by a level, and a
    # centroid holding values of both modes lights one cell of the gap, not all of them.
    assert (got == expect).mean() >= 0.8
    assert np.count_nonzero(got[counts == 0]) <= 1
    # Two modes: the densest cells form two runs with lighter cells between them.
    dense = np.flatnonzero(got >= 3)
    assert np.any(np.diff(dense) > 1)


@pytest.fixture(scope="module")
def two() -> Timeline:
    return build_timeline(read_windows(sketch_set(day("two", 5, per_window=800))), table="changes")


@pytest.mark.parametrize(("width", "ascii_only"), [(80, True), (100, False), (40, False)])
def test_chart_and_strip_fit_their_size(two: Timeline, width: int, ascii_only: bool) -> None:
    fig = chart_figure(two, two.streams[0], width=width, height=16, ascii_only=ascii_only)
    lines = fig.lines()
    assert len(lines) == 16 and all(len(x) <= width for x in lines)
    assert two.strip is not None
    strip = strip_lines(two, two.strip, width=width, label_width=fig.ylabel_width, ascii_only=ascii_only)
    assert all(len(x) <= width for x in strip)
    assert len(strip) == two.strip.levels.shape[0] + 3  # key, rows, axis, labels
    text = "\n".join(report_lines(two, "two.csv", "two.csv --column ms", width=width, ascii_only=ascii_only))
    assert text.isascii() == ascii_only or not ascii_only


def test_change_marks_sit_at_their_moment(two: Timeline) -> None:
    fig = chart_figure(two, two.streams[0], width=100, height=16)
    lines = fig.lines()
    for k, c in enumerate(two.streams[0].changes, 1):
        cell = fig.to_cell(c.start_us, fig.yscale.hi)
        assert cell is not None
        col = fig.ylabel_width + 1 + cell[1]
        top = lines[fig.header_rows]
        assert top[col] == str(k)
    # The two changes of the "two" day: 09:00 and 17:00 (tests/timeline_streams.py).
    hours = [dt.datetime.fromtimestamp(c.start_us / 1e6, dt.UTC).hour for c in two.streams[0].changes]
    assert hours == [9, 17]


def test_sparkline_marks_peaks_on_one_log_scale() -> None:
    values = np.array([1.0, 1.0, 10.0, np.nan, 100.0])
    assert sparkline(values, 1.0, 100.0, 5) == "▁▁▅ █"
    assert sparkline(values, 1.0, 100.0, 5, ascii_only=True) == "__= #"
