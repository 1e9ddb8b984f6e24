"""read/route.py: coding a chunk's ``--by`` values in the parser threads.

The reference for every check is plain Python: the values in order of first appearance
(a dict), each row's index into them, and the row numbers holding each value.
"""

from __future__ import annotations

import numpy as np
import polars as pl
from hypothesis import given, settings
from hypothesis import strategies as st

from ogive.read.route import KNOWN_KEYS, MISSING, KeyCoder, Keys, code_keys, split_rows


def _reference(raw: list[str | None]) -> tuple[list[str], list[int], list[list[int]]]:
    """(distinct values in order of first appearance, each row's index, rows per value)."""
    first: dict[str, int] = {}
    local = []
    for v in raw:
        key = MISSING if v is None else v
        local.append(first.setdefault(key, len(first)))
    rows: list[list[int]] = [[] for _ in first]
    for i, code in enumerate(local):
        rows[code].append(i)
    return list(first), local, rows


def _assert_keys(keys: Keys, raw: list[str | None]) -> None:
    names, local, rows = _reference(raw)
    assert keys.names == names
    assert keys.local is not None and keys.parts is not None
    assert keys.local.tolist() == local
    assert [p.tolist() for p in keys.parts] == rows


VALUES = st.one_of(st.none(), st.sampled_from(["web-1", "web-2", "", "wëb-3", "a" * 30, "(other)", "x,y"]))


@settings(max_examples=60, deadline=None)
@given(st.lists(st.lists(VALUES, min_size=1, max_size=60), min_size=1, max_size=6))
def test_a_coder_gives_each_chunk_its_own_values_in_order(chunks: list[list[str | None]]) -> None:
    """Chunk after chunk, whether coded afresh or by the hashes of values met before, a
    chunk's keys are its own distinct values in order of first appearance, with each
    row's index and each value's rows as plain Python finds them."""
    coder = KeyCoder()
    for raw in chunks:
        _assert_keys(coder.code(pl.Series(raw, dtype=pl.String)), raw)
        _assert_keys(code_keys(pl.Series(raw, dtype=pl.String)), raw)


def test_a_new_value_after_known_ones_is_still_named() -> None:
    """The hashed path must not take a value it has not seen for one it has."""
    coder = KeyCoder()
    coder.code(pl.Series(["a", "b"] * 50))
    raw: list[str | None] = ["b", "a", "c", None, "a"]
    _assert_keys(coder.code(pl.Series(raw, dtype=pl.String)), raw)
    _assert_keys(coder.code(pl.Series(raw, dtype=pl.String)), raw)  # now all known


def test_many_values_are_coded_without_being_remembered() -> None:
    """Past ``KNOWN_KEYS`` distinct values a chunk is still coded right, the slow way."""
    coder = KeyCoder()
    raw: list[str | None] = [f"client-{i % (KNOWN_KEYS + 5)}" for i in range(3 * KNOWN_KEYS)]
    for _ in range(2):
        _assert_keys(coder.code(pl.Series(raw, dtype=pl.String)), raw)


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2**32 - 1), st.sampled_from([2, 3, 200, 300, 70_000]), st.integers(0, 400))
def test_split_rows_matches_a_scan_per_code(seed: int, top: int, n: int) -> None:
    """Rows per code equal ``numpy.flatnonzero(codes == c)`` for every code that occurs,
    in code order, whatever the width of the codes (one byte, two, or int64)."""
    codes = np.random.default_rng(seed).integers(0, top, n)
    want = [(c, np.flatnonzero(codes == c).tolist()) for c in range(top) if (codes == c).any()]
    got = [(c, part.tolist()) for c, part in split_rows(codes)]
    assert got == want
