"""The anchored twin of a --pattern regex (ogive.read.anchor) gives the pattern's own
columns, line for line.

Reference: the pattern itself, run by polars' regex engine over the same lines (what
ogive did before the twin), and Python's ``re`` for the match positions. The twin only
changes the cost; any difference in a column is a defect.
"""

from __future__ import annotations

import re
from pathlib import Path

import polars as pl
from hypothesis import given, settings
from hypothesis import strategies as st

from ogive.read import anchor
from ogive.read.options import ScanOptions
from ogive.read.scan import scan
from ogive.read.text import Extract, extract_columns
from ogive.sketch import dumps

ACCESS = r'\[(?P<ts>[^\]]+)\] "[^"]*" \d+ \d+ rt=(?P<value>[0-9.]+)ms'


def plain_columns(extracts: list[Extract], lines: pl.Series) -> list[pl.Series]:
    """The columns without any twin: each regex as given."""
    return extract_columns([Extract(e.name, e.regex, e.groups) for e in extracts], lines)


def test_twin_only_for_a_mandatory_first_literal() -> None:
    # A pattern that must begin with one character gets a twin...
    assert anchor.twin(r"\[(\d+)\]") == r"^[^\x{5b}]*(?:\[(\d+)\])"
    assert anchor.twin(r"a(b|c)(\d)") == r"^[^\x{61}]*(?:a(b|c)(\d))"
    assert anchor.twin(r"é=(\d+)") == r"^[^\x{e9}]*(?:é=(\d+))"
    # ... and no other: alternation at the top, a first character that may be absent or
    # repeated, a class, an escape standing for a class, an anchor, a group, flags.
    for pattern in (
        r"ab|x(\d)",
        r"(a)|b(\d)",
        r"a*(\d)",
        r"a?(\d)",
        r"a{0,2}(\d)",
        r"a+(\d)",
        r"[ab](\d)",
        r"\d+ rt=(\d)",
        r"\w(\d)",
        r"^a(\d)",
        r"(a)(\d)",
        r"(?i)a(\d)",
        r".(\d)",
        r" a(\d)",
        "",
    ):
        assert anchor.twin(pattern) is None, pattern
    # A '|' inside a class or a group is not a top-level one.
    assert anchor.twin(r"a[|](\d)") is not None
    assert anchor.twin(r"a[]|](\d)") is not None
    assert anchor.twin(r"a(?:x|y)(\d)") is not None
    assert anchor.twin(r"a\|(\d)|b") is None


def test_twin_used_only_where_it_pays() -> None:
    lines = ['10.0.0.1 - - [2026-05-27T16:40:00Z] "GET /v2/search HTTP/1.1" 200 12 rt=2.5ms'] * 20
    assert anchor.anchored_twin(ACCESS, lines) is not None
    # 'r' comes before "rt=" on every line: the twin would miss them all.
    assert anchor.anchored_twin(r"rt=([0-9.]+)ms", lines) is None
    # '.*' keeps the engine off its one-pass path: anchoring was slower (see the module).
    assert anchor.anchored_twin(r'"(?P<m>[A-Z]+) .* rt=(?P<value>[0-9.]+)ms', lines) is None
    assert anchor.anchored_twin(ACCESS, []) is None


LINE = st.text(alphabet="ab[]x=19 ", max_size=14)
PATTERNS = [
    r"a=(\d+)",
    r"\[(?P<k>[^\]]*)\] x=(?P<value>\d+)",
    r"b(a|x)=?(\d)",
    r"x(?P<value>\d+)( b)?",
    r"\[(a+)?(?P<value>\d)",
    r"a(?:b|\[)(\d*)",
]


@settings(max_examples=150, deadline=None)
@given(lines=st.lists(st.one_of(st.none(), LINE), max_size=30), which=st.sampled_from(PATTERNS))
def test_twin_columns_are_the_patterns_columns(lines: list[str | None], which: str) -> None:
    """Every line, hostile ones included (the first literal early, late, twice, not at
    all; optional groups left empty), reads the same through the twin."""
    twin = anchor.twin(which)
    assert twin is not None
    groups = re.compile(which).groups
    series = pl.Series("line", lines, dtype=pl.String)
    named = [Extract(f"c{g}", which, (g,), twin) for g in range(1, groups + 1)]
    got = extract_columns(named, series)
    want = plain_columns(named, series)
    for g, w in zip(got, want, strict=True):
        assert g.to_list() == w.to_list()
    # One group alone goes through str.extract rather than extract_groups.
    single = [Extract("v", which, (groups,), twin)]
    assert extract_columns(single, series)[0].to_list() == plain_columns(single, series)[0].to_list()
    # Python's re agrees on which lines match at all (the last group's column is not
    # null exactly where the pattern matched and that group took part).
    for line, value in zip(lines, got[-1].to_list(), strict=True):
        m = re.search(which, line) if line is not None else None
        assert value == (m.group(groups) if m else None)


def test_scan_with_a_twin_equals_the_scan_without(tmp_path: Path) -> None:
    """A whole scan, time split included: the same sketches either way, and the line the
    twin misses (its '[' comes late) still read through the pattern."""
    rows = []
    for i in range(3000):
        lead = "[x] " if i % 97 == 0 else ""  # a '[' before the real one: the twin misses
        rows.append(
            f"{lead}10.0.0.{i % 7} - - [2026-05-27T16:{i // 60 % 60:02d}:{i % 60:02d}Z] "
            f'"GET /p HTTP/1.1" 200 {i} rt={(i * 7919) % 1000 / 10:.1f}ms'
        )
    rows.append("a line with no match")
    path = tmp_path / "access.log"
    path.write_text("\n".join(rows) + "\n")
    opts = ScanOptions(pattern=ACCESS, unit="ms", time_field="ts", split_at="2026-05-27T16:30:00Z")
    assert anchor.anchored_twin(ACCESS, rows[1:50]) is not None  # the twin is taken
    with_twin = scan([str(path)], opts)
    saved = anchor.anchored_twin
    try:
        anchor.anchored_twin = lambda pattern, lines: None  # type: ignore[assignment]
        without = scan([str(path)], opts)
    finally:
        anchor.anchored_twin = saved
    a, b = with_twin.to_dict(), without.to_dict()
    a.pop("elapsed_s")
    b.pop("elapsed_s")
    assert a == b
    assert set(with_twin.sketches.names()) == {"before", "after"}
    assert dumps(with_twin.sketches) == dumps(without.sketches)
    assert sum(with_twin.sketches[n].count for n in ("before", "after")) == 3000
