"""Fuzzing the sketch loader and the line parsers: only our own one-line errors come out."""

from __future__ import annotations

import contextlib
import json
from pathlib import Path

import numpy as np
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
    with contextlib.suppress(SketchFormatError):
        loads(data)


@settings(max_examples=150, deadline=None)
@given(st.integers(0, len(VALID) - 1), st.binary(min_size=1, max_size=8))
def test_damaged_files_are_refused_cleanly(at: int, junk: bytes) -> None:
    damaged = VALID[:at] + junk + VALID[at + len(junk) :]
    with contextlib.suppress(SketchFormatError):
        loads(damaged)


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
    with contextlib.suppress(SketchFormatError):
        loads(json.dumps(doc).encode())


LINE = st.text(alphabet=st.characters(codec="utf-8", exclude_characters="\r\n"), max_size=40)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(LINE, max_size=30), st.sampled_from(["csv", "text", "ndjson"]))
def test_random_lines_give_counts_or_one_line_errors(tmp_path: Path, lines: list[str], fmt: str) -> None:
    f = tmp_path / f"in.{fmt}"
    f.write_text("\n".join(lines) + "\n", encoding="utf-8")
    options = {
        "csv": ScanOptions(format="csv", column="1", header=False),
        "text": ScanOptions(pattern=r"(\S+)ms"),
        "ndjson": ScanOptions(format="ndjson", field="a.b"),
    }[fmt]
    try:
        res = scan([str(f)], options)
    except OgiveError as exc:
        assert "\n" not in str(exc)
        return
    s = res.sketches.sketches.get("all")
    if s is not None:
        # Every row is either in the sketch (or its NaN/inf counts) or counted as skipped.
        assert s.count + s.nan_count + s.inf_count + s.provenance.skipped_total <= s.provenance.rows_read
