"""Log lines wrapped in JSON, as a container runtime stores what a program printed
(read/ndjson.py: the value read inside a text field).

Outside references: the lines are the shape of Docker's json-file logging driver, one
object per line with ``log`` (the printed line, newline included), ``stream`` and
``time`` (RFC 3339 with nanoseconds) (from memory); they are written with Python's
``json``; every figure is checked against numpy.quantile of the values written.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from ogive.read import ScanOptions, scan

Q = [0.0, 0.1, 0.5, 0.9, 1.0]
START = 1_772_618_400  # 2026-03-04T10:00:00Z


def _container_log(path: Path, n: int = 600) -> tuple[np.ndarray, list[str]]:
    """``n`` wrapped request lines (dur= in ms), then four awkward ones; the values and
    the stream of each request line."""
    rng = np.random.default_rng(31)
    values = np.round(rng.lognormal(3.0, 0.5, n), 2)
    streams = ["stdout" if i % 3 else "stderr" for i in range(n)]
    lines = []
    for i, (v, stream) in enumerate(zip(values, streams, strict=True)):
        stamp = f"2026-03-04T10:{i // 60 % 60:02d}:{i % 60:02d}.123456789Z"
        text = f"10.0.0.{i % 7} - GET /api/items/{i} 200 dur={v}ms\n"
        lines.append(json.dumps({"log": text, "stream": stream, "time": stamp}))
    lines.append(
        json.dumps({"log": "starting worker pool\n", "stream": "stdout", "time": "2026-03-04T11:00:00Z"})
    )
    lines.append("not json at all")
    lines.append("")
    lines.append(json.dumps({"stream": "stdout", "time": "2026-03-04T11:00:01Z"}))
    path.write_text("\n".join(lines) + "\n")
    return values, streams


def test_the_duration_inside_the_wrapped_line_is_found_without_options(tmp_path: Path) -> None:
    path = tmp_path / "container.log"
    values, _ = _container_log(path)
    result = scan([str(path)], ScanOptions())
    s = result.sketches["all"]
    assert s.unit == "ms" and s.count == 600
    assert any("dur= pairs in the text of field log" in w for w in result.warnings)
    skipped = {reason: tally.examples for reason, tally in result.skipped.items()}
    assert skipped["missing_field"] == [f"{path}:601", f"{path}:604"]  # no dur= / no log at all
    assert skipped["not_json"] == [f"{path}:602"] and skipped["blank_line"] == [f"{path}:603"]
    # Reference: numpy.quantile of the values written (600 values: held exactly).
    np.testing.assert_allclose(s.quantile(Q), np.quantile(values, Q), rtol=1e-12)


def test_split_by_the_wrapper_time_and_grouped_by_stream(tmp_path: Path) -> None:
    path = tmp_path / "container.log"
    values, streams = _container_log(path)
    split = "2026-03-04T10:05:00Z"  # after the first 300 request lines
    result = scan([str(path)], ScanOptions(field="log", time_field="time", split_at=split))
    for name, part in (("before", values[:300]), ("after", values[300:])):
        # Reference: numpy.quantile of the values written on each side of the moment.
        np.testing.assert_allclose(result.sketches[name].quantile(Q), np.quantile(part, Q), rtol=1e-12)
    grouped = scan([str(path)], ScanOptions(field="log", by="stream"))
    err = values[[s == "stderr" for s in streams]]
    # Reference: numpy.quantile of the stderr lines' values.
    np.testing.assert_allclose(grouped.sketches["stream=stderr"].quantile(Q), np.quantile(err, Q), rtol=1e-12)


def test_a_pattern_reads_the_text_of_the_named_field(tmp_path: Path) -> None:
    path = tmp_path / "container.log"
    values, _ = _container_log(path)
    result = scan(
        [str(path)], ScanOptions(field="log", pattern=r"GET \S+ (?P<status>\d+) dur=(?P<value>[\d.]+)ms")
    )
    s = result.sketches["all"]
    assert s.count == 600 and result.format == "ndjson"
    assert result.skipped["no_match"].examples == [f"{path}:601"]
    assert result.skipped["missing_field"].examples == [f"{path}:604"]
    # Reference: numpy.quantile of the values written.
    np.testing.assert_allclose(s.quantile(Q), np.quantile(values, Q), rtol=1e-12)


@pytest.mark.parametrize("field", [None, "log"])
def test_a_numeric_field_is_still_read_as_a_number(tmp_path: Path, field: str | None) -> None:
    """The text path is for text fields only: a field of numbers is read as before."""
    path = tmp_path / "plain.ndjson"
    path.write_text("".join(json.dumps({"log": i + 0.5, "msg": f"took dur={i}ms"}) + "\n" for i in range(50)))
    result = scan([str(path)], ScanOptions(field=field))
    # Reference: the values written, 0.5 to 49.5 (numpy.quantile of them).
    np.testing.assert_allclose(
        result.sketches["all"].quantile(Q), np.quantile(np.arange(50) + 0.5, Q), rtol=1e-12
    )
