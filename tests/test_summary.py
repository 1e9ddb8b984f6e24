"""The summary renderer: readable numbers, the numbers the sketch holds, nothing hidden."""

from __future__ import annotations

import json

import numpy as np

from ogive.numbers import quantity
from ogive.render.summary import LADDER, quantile_lines, summarise, summary_dict, summary_lines
from ogive.sketch import Sketch, SketchSet


def _small_set() -> tuple[SketchSet, np.ndarray]:
    rng = np.random.default_rng(11)
    values = rng.lognormal(np.log(5.0), 0.6, 1000)
    s = Sketch("ms")
    s.add(values)
    s.provenance.sources = ["a.log", "b.log"]
    s.provenance.field = "pattern dur=(\\S+)"
    s.provenance.lines_read = 1003
    s.provenance.skip("not_a_number", 2, ["a.log:7", "b.log:9"])
    s.provenance.skip("missing_field", 1, ["a.log:30"])
    return SketchSet({"all": s}), values


def test_numbers_are_the_sketch_quantiles_which_here_are_exact() -> None:
    sset, values = _small_set()
    doc = summary_dict(sset)
    row = doc["sketches"]["all"]
    # 1000 values <= 2 * tail_size: the sketch holds them all, so its quantiles must equal
    # numpy.quantile's default (linear, Hyndman & Fan type 7) on the raw values.
    expect = np.quantile(values, LADDER)
    got = [row[k] for k in ("p50", "p90", "p99", "p99.9", "p99.99")]
    np.testing.assert_allclose(got, expect, rtol=1e-12)
    assert row["min"] == values.min() and row["max"] == values.max()
    assert row["n"] == 1000 and row["skipped_total"] == 3
    assert row["skipped"]["not_a_number"] == {"count": 2, "examples": ["a.log:7", "b.log:9"]}
    json.dumps(doc, allow_nan=False)  # valid strict JSON


def test_text_shows_provenance_table_and_every_skip_reason() -> None:
    sset, values = _small_set()
    lines = summary_lines(summarise(sset, warnings=["something to know"]))
    text = "\n".join(lines)
    assert lines[0] == "source: a.log, b.log"
    header = next(ln for ln in lines if ln.startswith("sketch"))
    assert header.split() == ["sketch", "n", "skipped", "min", "p50", "p90", "p99", "p99.9", "p99.99", "max"]
    row = lines[lines.index(header) + 1].split("  ")
    assert row[0] == "all"
    assert quantity(float(np.quantile(values, 0.5)), "ms") in text
    assert "not a number: 2 (first at a.log:7; b.log:9)" in text
    assert "missing field: 1 (first at a.log:30)" in text
    assert "every value is held exactly" in text
    assert lines[-1] == "warning: something to know"
    assert max(len(ln) for ln in lines if not ln.startswith(("source", "value"))) <= 90


def test_empty_and_nan_sketches_render_without_failing() -> None:
    s = Sketch("ms")
    s.add(np.array([np.nan, np.inf]))
    sset = SketchSet({"all": s})
    text = "\n".join(summary_lines(summarise(sset)))
    assert "NaN value: 1" in text and "infinite value: 1" in text and "no usable values" in text
    doc = summary_dict(sset)
    assert doc["sketches"]["all"]["p50"] is None
    json.dumps(doc, allow_nan=False)


def test_quantile_lines_names_min_and_max() -> None:
    sset, _ = _small_set()
    lines = quantile_lines(summarise(sset, qs=[0.0, 0.5, 0.999, 1.0]))
    assert lines[0].split() == ["sketch", "n", "min", "p50", "p99.9", "max"]


def test_time_line_says_which_sketches_it_covers() -> None:
    a, b = Sketch("ms"), Sketch("ms")
    a.add([1.0, 2.0])
    b.add([3.0])
    b.provenance.time_first, b.provenance.time_last = "2026-03-04T10:00:00Z", "2026-03-04T10:05:00Z"
    lines = summary_lines(summarise(SketchSet({"all": a, "recent-5m": b})))
    assert "time: 2026-03-04T10:00:00Z to 2026-03-04T10:05:00Z (recent-5m only)" in lines
    a.provenance.time_first, a.provenance.time_last = "2026-03-04T09:00:00Z", "2026-03-04T10:05:00Z"
    lines = summary_lines(summarise(SketchSet({"all": a, "recent-5m": b})))
    assert "time: 2026-03-04T09:00:00Z to 2026-03-04T10:05:00Z" in lines
