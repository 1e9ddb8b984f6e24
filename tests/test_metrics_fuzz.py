"""The metrics parsers fuzzed: whatever the bytes, a scan counts what it cannot use and goes on.

Mutations of valid OTLP JSON metric lines and OpenMetrics expositions (bad JSON, fields
dropped or of the wrong type, negative or non-monotone cumulative counts, ``le`` out of
order or NaN, bounds that do not increase): every scan ends with an OgiveError sentence
or a result in which every line is read and every point is either in a distribution or
counted by reason — never an internal error.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import metrics_files as mf
from ogive.errors import OgiveError
from ogive.read import ScanOptions, scan

RNG = np.random.default_rng(0)
VALUES = RNG.lognormal(2, 1, 300)
GOOD_POINT = mf.hist_point(
    mf.explicit(VALUES), mf.T0, mf.T0 + 60 * 10**9, {"route": "/a"}, min=0.1, max=900.0
)
GOOD_EXP = mf.exp_point(VALUES, 2, mf.T0, mf.T0 + 60 * 10**9)
JUNK = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(-(2**70), 2**70),
    st.floats(allow_nan=True),
    st.text(max_size=8),
    st.just("NaN"),
    st.just("-1"),
    st.lists(st.integers(-5, 5), max_size=20),
)


@st.composite
def otlp_point(draw: st.DrawFn) -> dict[str, object]:
    p = json.loads(json.dumps(draw(st.sampled_from([GOOD_POINT, GOOD_EXP]))))
    for key in draw(st.lists(st.sampled_from(sorted(p)), max_size=3)):
        if draw(st.booleans()):
            p.pop(key, None)
        else:
            p[key] = draw(JUNK)
    if (
        "bucketCounts" in p
        and isinstance(p["bucketCounts"], list)
        and p["bucketCounts"]
        and draw(st.booleans())
    ):
        i = draw(st.integers(0, len(p["bucketCounts"]) - 1))
        p["bucketCounts"][i] = draw(st.sampled_from(["-3", "x", "1.5", "18446744073709551616", None]))
    if "explicitBounds" in p and isinstance(p["explicitBounds"], list) and draw(st.booleans()):
        p["explicitBounds"] = list(reversed(p["explicitBounds"]))
    return p


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    points=st.lists(otlp_point(), min_size=1, max_size=4),
    temporality=st.sampled_from([0, 1, 2, "x", None]),
    cut=st.integers(0, 400),
    tail=st.sampled_from(["", "\n{", "\n[]", "\n\x00\xff"]),
)
def test_otlp_metrics_never_break(
    tmp_path: Path, points: list[dict[str, object]], temporality: object, cut: int, tail: str
) -> None:
    kind = "exponentialHistogram" if "scale" in points[0] else "histogram"
    text = mf.line(points, temporality=temporality, kind=kind)  # type: ignore[arg-type]
    if cut:
        text = text[: len(text) - cut] if cut < len(text) else text
    path = tmp_path / "f.jsonl"
    path.write_text(text + tail + "\n", errors="surrogateescape")
    try:
        res = scan([str(path)], ScanOptions(format="otlp-metrics"))
    except OgiveError as exc:
        assert "\n" not in str(exc)
        return
    # Every line written is read (an outside count of the file's lines); each is in a
    # distribution or counted as skipped.
    content = path.read_bytes()
    assert res.lines_read == content.count(b"\n") + (0 if content.endswith(b"\n") else 1)
    counted = sum(t.count for t in res.skipped.values())
    in_sets = sum(s.provenance.rows_read for s in res.sketches.sketches.values())
    assert in_sets + counted >= 1


@st.composite
def exposition(draw: st.DrawFn) -> str:
    lines = ["# TYPE lat histogram", *mf.scrape(VALUES, name="lat", ts=1_772_582_460.0)]
    for _ in range(draw(st.integers(0, 4))):
        i = draw(st.integers(1, len(lines) - 1))
        how = draw(st.sampled_from(["swap", "drop", "value", "le", "dup", "garble"]))
        if how == "swap" and i + 1 < len(lines):
            lines[i], lines[i + 1] = lines[i + 1], lines[i]
        elif how == "drop":
            lines.pop(i)
        elif how == "value":
            head, _, _ = lines[i].rpartition(" ")
            name_labels, _, _ = head.rpartition(" ")
            lines[i] = (
                f"{name_labels} {draw(st.sampled_from(['-1', 'NaN', '+Inf', '1e400', 'x', '0']))} 1772582460"
            )
        elif how == "le":
            lines[i] = lines[i].replace('le="', f'le="{draw(st.sampled_from(["NaN", "-", "x", "1e9"]))}', 1)
        elif how == "dup":
            lines.insert(i, lines[i])
        else:
            lines[i] = lines[i][: draw(st.integers(0, len(lines[i])))]
    return "\n".join([*lines, "# EOF"]) + "\n"


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=exposition())
def test_openmetrics_never_breaks(tmp_path: Path, text: str) -> None:
    path = tmp_path / "f.prom"
    path.write_text(text)
    try:
        res = scan([str(path)], ScanOptions(format="openmetrics"))
    except OgiveError as exc:
        assert "\n" not in str(exc)
        return
    total = sum(s.count for s in res.sketches.sketches.values())
    assert total in (0, VALUES.size) or res.skipped or res.warnings
