"""Change points from window sketches: synthetic days whose truth is known (seeded).

Truth and streams: ``tests/timeline_streams.py``. A change must be found within one
window of its true moment, with what moved named (body, tail); a steady day must show
no change at a rate at or below the stated false-alarm rate (a fast subset here; the
200-day study is ``benchmarks/timeline_bench.py --false-alarms``).
"""

from __future__ import annotations

import numpy as np
import pytest

from ogive.fit.changes import find_changes, permutations_for
from ogive.fit.splits import GRID_QS, split_profile
from ogive.fit.timeline import Timeline, build_timeline, read_windows
from timeline_streams import TRUTH, day, sketch_set


def _timeline(kind: str, seed: int, per_window: int = 2000) -> Timeline:
    """About 7 requests a second: a p99-only change then brings ~24 slow requests a window."""
    return build_timeline(read_windows(sketch_set(day(kind, seed, per_window=per_window))), table="none")


@pytest.mark.parametrize(("kind", "what"), [("tail", "tail"), ("body", "body")])
def test_a_step_is_found_within_a_window_and_named(kind: str, what: str) -> None:
    changes = _timeline(kind, seed=11).streams[0].changes
    assert len(changes) == 1
    c = changes[0]
    assert not c.gradual and abs(c.change.first - 156) <= 1
    assert c.change.low <= 156 <= c.change.high  # the interval covers the truth
    assert c.kind == what
    moved = set(c.moved)
    if what == "tail":
        # Truth: p99 and p99.9 triple, nothing up to p98.5 moves.
        assert {"p99", "p99.9"} <= moved and not moved & {"p50", "p75", "p90"}
        p99 = c.move("p99")
        assert p99 is not None and 2.5 < p99.after / p99.before < 3.5
    else:
        # Truth: the fast path (94 % of requests, p50 to p90) is 25 % slower; the slow path is not.
        assert {"p50", "p75"} <= moved and "p99.9" not in moved
        p50 = c.move("p50")
        assert p50 is not None and 1.15 < p50.after / p50.before < 1.3


def test_two_changes_both_found_in_order() -> None:
    changes = _timeline("two", seed=12).streams[0].changes
    found = [c.change.first for c in changes]
    assert len(found) == 2 and all(abs(f - t) <= 1 for f, (t, _) in zip(found, TRUTH["two"], strict=True))
    assert [c.kind for c in changes] == ["body", "tail"]


def test_a_rollout_is_a_span_from_start_to_end() -> None:
    changes = _timeline("rollout", seed=13).streams[0].changes
    assert len(changes) == 1
    c = changes[0]
    assert c.gradual
    # Truth: the share switched rises from 0 at window 156 (13:00) to 1 at 164 (13:40).
    assert abs(c.change.start - 156) <= 1 and abs(c.change.end - 164) <= 1
    assert all(0 < s < 1 for s in c.change.shares)
    # The gate splits where the rollout ended, so "after" is the new version alone.
    assert c.split_us == c.end_us or abs(c.split_us - c.end_us) <= 300e6


def _counts(kind: str, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Each window counted at the pooled quantiles, from the raw values (what exact
    window sketches give): the search alone, as the timeline runs it."""
    values = day(kind, seed, per_window=300)
    grid = np.unique(np.quantile(np.concatenate(values), GRID_QS))
    counts = np.array([np.searchsorted(np.sort(v), grid, side="right") for v in values], dtype=float)
    return counts, np.array([v.size for v in values], dtype=float)


@pytest.mark.parametrize("kind", ["none", "wobble"])
def test_steady_days_rarely_show_a_change(kind: str) -> None:
    """20 seeded days at a 5 % false-alarm rate: 1 expected; 5 or more has probability
    0.016 under the binomial (scipy.stats.binom.sf(4, 20, 0.05)), so a higher count means
    the calibration is off (the 200-day study, through the sketches, is
    ``benchmarks/timeline_bench.py --false-alarms 200``)."""
    alarms = sum(bool(find_changes(*_counts(kind, 100 + s), seed=s).changes) for s in range(20))
    assert alarms <= 4


def test_permutation_test_is_exact_at_its_level() -> None:
    """Under exchangeable windows the permutation p-value is uniform on its grid, so the
    share of runs called a change is at most alpha: 300 small pure-noise runs at alpha
    0.1 (expected at most 30; 45 or more has probability below 0.01 by the binomial)."""
    rng = np.random.default_rng(5)
    grid_q = np.array(GRID_QS)
    calls = 0
    for _ in range(300):
        n = rng.poisson(60, 30).astype(float)
        # Counts at a grid from uniform values: binomial increments of a multinomial.
        p = np.diff(np.concatenate(([0.0], grid_q, [1.0])))
        inc = np.array([rng.multinomial(int(k), p) for k in n])
        counts = np.cumsum(inc, axis=1)[:, :-1].astype(float)
        found = find_changes(counts, n, alpha=0.1, permutations=19, seed=int(rng.integers(1 << 30)))
        calls += bool(found.changes)
    assert calls < 45


def test_split_profile_matches_the_formula_by_hand() -> None:
    """D at one split against the definition written out (standardised CDF gap, max over the grid)."""
    rng = np.random.default_rng(2)
    counts = np.sort(rng.integers(0, 50, (8, 4)), axis=1).astype(float)
    sizes = np.full(8, 60.0)
    prof = split_profile(counts, sizes)
    k = 4
    nb, na = sizes[:k].sum(), sizes[k:].sum()
    fb, fa = counts[:k].sum(0) / nb, counts[k:].sum(0) / na
    f = counts.sum(0) / sizes.sum()
    z = np.abs(fb - fa) / np.sqrt(f * (1 - f) * (1 / nb + 1 / na))
    ok = np.minimum(f, 1 - f) * min(nb, na) >= 10  # MIN_TAIL_COUNT
    np.testing.assert_allclose(prof[k], z[ok].max(), rtol=1e-12)


def test_search_is_seeded_and_refuses_impossible_levels() -> None:
    counts, sizes = _counts("tail", 3)
    assert find_changes(counts, sizes, seed=4).to_dict() == find_changes(counts, sizes, seed=4).to_dict()
    with pytest.raises(ValueError, match="cannot decide"):
        find_changes(np.zeros((10, 3)), np.ones(10), alpha=0.01, permutations=20)
    assert permutations_for(0.05) == 99 and permutations_for(0.01) == 499
