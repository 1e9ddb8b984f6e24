"""Fuzzing the sketch loader and the line parsers: only our own one-line errors come out,
a damaged file is refused (or, when the damage is only JSON whitespace, reads the same),
and every line a parser is given is in a sketch or counted, exactly.

Outside references: the line count of the generated input (``str.count``), and the
sketch file's own bytes before the damage.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from ogive.errors import OgiveError
from ogive.read import ScanOptions, scan
from ogive.sketch import Sketch, SketchFormatError, SketchSet, dumps, loads

_s = Sketch("ms")
_s.add(np.random.default_rng(0).lognormal(2, 1, 5000))
VALID = dumps(SketchSet({"all": _s}))


@settings(max_examples=150, deadline=None)
@given(st.binary(max_size=2000))
def test_random_bytes_are_refused_cleanly(data: bytes) -> None:
    with pytest.raises(SketchFormatError) as info:
        loads(data)
    assert "\n" not in str(info.value)


@settings(max_examples=150, deadline=None)
@given(st.integers(0, len(VALID) - 1), st.binary(min_size=1, max_size=8))
def test_damaged_files_are_refused_cleanly(at: int, junk: bytes) -> None:
    damaged = VALID[:at] + junk + VALID[at + len(junk) :]
    try:
        back = loads(damaged)
    except SketchFormatError as exc:
        assert "\n" not in str(exc)
        return
    # Accepted: only if nothing that counts changed (the same bytes, or JSON whitespace
    # the checksum rightly ignores): it reads back exactly as the undamaged file.
    assert dumps(back) == VALID


@settings(max_examples=60, deadline=None)
@given(
    st.sampled_from(["count", "low", "high", "compression", "tail_size", "scale", "unit"]),
    st.one_of(
        st.none(),
        st.booleans(),
        st.integers(-5, 10**20),
        st.floats(allow_nan=False, allow_infinity=False),
        st.text(max_size=5),
        st.lists(st.one_of(st.integers(-3, 3), st.text(max_size=2)), max_size=4),
    ),
)
# Found by this test: a file asking for compression 1.4e11 made the first flush try to
# allocate 528 GiB; a huge tail_size would have let a sketch keep every value.
@example(field="compression", value=143_506_416_566)
@example(field="tail_size", value=10**18)
def test_wrong_field_values_with_a_valid_checksum_are_refused(field: str, value: object) -> None:
    """An edit that recomputes the checksum must still not get past the field checks."""
    from ogive.sketch.codec import _canonical

    doc = json.loads(VALID)
    doc["sketches"]["all"][field] = value
    import hashlib

    doc["checksum"] = "sha256:" + hashlib.sha256(_canonical(doc)).hexdigest()
    try:
        back = loads(json.dumps(doc).encode())
    except SketchFormatError as exc:
        assert "\n" not in str(exc)
        return
    # Accepted: the value is a legitimate one, kept as given, and the sketch is consistent.
    s = back["all"]
    assert isinstance(s, Sketch)
    s.check()
    assert json.loads(dumps(back))["sketches"]["all"][field] == value


LINE = st.text(alphabet=st.characters(codec="utf-8", exclude_characters="\r\n"), max_size=40)


PARSERS = {
    "csv": ScanOptions(format="csv", column="1", header=False),
    "tsv": ScanOptions(format="tsv", column="2", header=False),
    "text": ScanOptions(pattern=r"(\S+)ms"),
    "ndjson": ScanOptions(format="ndjson", field="a.b"),
    "access": ScanOptions(format="access", field="bytes"),
    "syslog": ScanOptions(format="syslog", field="dur"),
}
"""One fuzz target per line parser (OTLP metrics and OpenMetrics: ``test_metrics_fuzz.py``)."""

JUNK_LINE = st.one_of(
    LINE,
    st.sampled_from(
        [
            '{"a": {"b": 5}}',
            '{"a": {"b": "7ms"}}',
            "12ms",
            "1,2",
            '"3",4',
            '1.2.3.4 - - [04/Mar/2026:10:00:00 +0000] "GET / HTTP/1.1" 200 512',
            "<34>Mar  4 10:00:00 web-1 app: dur=12",
            "a\t9",
            "\x1b[31m5ms",
            '{"a": ' + "[" * 5000 + "]" * 5000 + "}",
        ]
    ),
)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(JUNK_LINE, max_size=30), st.sampled_from(sorted(PARSERS)))
def test_random_lines_give_counts_or_one_line_errors(tmp_path: Path, lines: list[str], fmt: str) -> None:
    f = tmp_path / f"in.{fmt}"
    f.write_text("\n".join(lines) + "\n", encoding="utf-8")
    options = PARSERS[fmt]
    try:
        res = scan([str(f)], options)
    except OgiveError as exc:
        assert "\n" not in str(exc)
        return
    written = max(
        len(lines), 1
    )  # lines in the file: each ends with the one "\n" (an empty list: one blank line)
    in_sketches = 0
    for s in res.sketches.sketches.values():
        assert isinstance(s, Sketch)
        # Every row given to a sketch is in it (NaN/inf counted among the skipped) or skipped.
        assert s.count + s.provenance.skipped_total == s.provenance.rows_read
        in_sketches += s.provenance.rows_read
    unassigned = sum(t.count for t in res.sketches.unassigned.values())
    if res.sketches.sketches:
        # Every line read is in one sketch or counted as belonging to none.
        assert in_sketches + unassigned == res.lines_read
        assert res.lines_read == written
