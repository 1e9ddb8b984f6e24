"""Sketch quantiles and CDF against the raw data.

Outside reference throughout: ``numpy.quantile`` (default ``method="linear"``, Hyndman &
Fan 1996 type 7) and the empirical CDF ``np.searchsorted(sorted, x, side="right") / n``
computed on the same raw values the sketch saw.

Rank error is scored so that ties are judged fairly: an estimate v at q is correct when
the 0-based target position q (n - 1) lies within v's rank interval, i.e. between
``#(x < v) - 1`` and ``#(x <= v)`` (the -1 lets a value strictly between two order
statistics count as the interpolation numpy itself would do). The error is the
distance to that interval over n.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.typing import NDArray

from ogive.sketch import DEFAULT_TAIL, Sketch, quantile_label
from rank_check import rank_error

FloatArray = NDArray[np.float64]
QS = np.array([0.0, 0.001, 0.01, 0.1, 0.25, 0.5, 0.75, 0.9, 0.99, 0.999, 0.9999, 1.0])


def build(x: FloatArray, batch: int = 1 << 16, **kw: object) -> Sketch:
    s = Sketch("ms", **kw)  # type: ignore[arg-type]
    for i in range(0, x.size, batch):
        s.add(x[i : i + batch])
    return s


def make(kind: str, n: int, rng: np.random.Generator) -> FloatArray:
    if kind == "uniform":
        return rng.uniform(-5, 5, n)
    if kind == "normal":
        return rng.normal(100, 15, n)
    if kind == "lognormal":
        return rng.lognormal(3, 1, n)
    if kind == "exponential":
        return rng.exponential(20, n)
    if kind == "pareto":
        return rng.pareto(1.2, n) + 1.0  # heavy tail: infinite variance
    if kind == "bimodal":
        return np.where(rng.random(n) < 0.8, rng.lognormal(0.5, 0.3, n), rng.lognormal(4, 0.5, n))
    if kind == "integer-ms":
        return np.round(rng.lognormal(3, 1, n))
    if kind == "few-values":
        return rng.choice([200.0, 404.0, 500.0, 503.0], size=n, p=[0.9, 0.07, 0.02, 0.01])
    raise ValueError(kind)


KINDS = ["uniform", "normal", "lognormal", "exponential", "pareto", "bimodal", "integer-ms", "few-values"]


# ---------------------------------------------------------------------- exactness
@pytest.mark.parametrize("n", [1, 2, 3, 10, 1000, 2 * DEFAULT_TAIL])
@pytest.mark.parametrize("kind", ["normal", "integer-ms", "few-values"])
def test_small_sketch_is_exact_against_numpy(kind: str, n: int) -> None:
    """n <= 2 * tail_size: every quantile equals numpy.quantile (linear) exactly."""
    x = make(kind, n, np.random.default_rng(n))
    s = build(x, batch=97)
    assert s.exact
    q = np.linspace(0, 1, 1001)
    # Both interpolate between the same two order statistics; 1e-12 covers the
    # different order of the floating-point operations.
    np.testing.assert_allclose(s.quantile(q), np.quantile(x, q), rtol=1e-12, atol=1e-12)
    assert s.rank_error_bound() == 0.0


@pytest.mark.parametrize("kind", KINDS)
def test_extremes_and_tails_are_exact_at_any_size(kind: str) -> None:
    x = make(kind, 300_000, np.random.default_rng(7))
    s = build(x)
    xs = np.sort(x)
    assert s.min == xs[0] and s.max == xs[-1]
    np.testing.assert_array_equal(s.low, xs[:DEFAULT_TAIL])
    np.testing.assert_array_equal(s.high, xs[-DEFAULT_TAIL:])
    # Positions among the DEFAULT_TAIL largest are answered from the buffer: numpy exactly.
    q = 1 - np.array([1, 10, 100, DEFAULT_TAIL - 12]) / x.size
    np.testing.assert_allclose(s.quantile(q), np.quantile(x, q), rtol=1e-12)
    assert s.count == x.size and s.mean == pytest.approx(x.mean(), rel=1e-9)


def test_constant_and_single_repeated_value() -> None:
    for n in (1, 5, 5000, 200_000):
        s = build(np.full(n, 42.0))
        assert np.all(s.quantile(QS) == 42.0)
        assert s.cdf(41.999) == 0.0 and s.cdf(42.0) == 1.0
        assert s.rank_error_bound() == 0.0


def test_empty_sketch() -> None:
    s = Sketch("ms")
    assert s.count == 0 and np.isnan(s.min) and np.isnan(s.max) and np.isnan(s.mean)
    assert np.all(np.isnan(s.quantile(QS)))
    assert np.isnan(s.cdf(1.0)) and s.rank(1.0) == 0.0
    assert s.rank_error_bound() == 0.0
    assert s.summary()["n"] == 0
    s.add(np.array([]))
    assert s.count == 0


def test_nan_and_inf_are_counted_not_sketched() -> None:
    s = Sketch("ms")
    s.add(np.array([1.0, np.nan, 2.0, np.inf, -np.inf, -3.0, 0.0]))
    assert (s.count, s.nan_count, s.inf_count, s.negative_count, s.zero_count) == (4, 1, 2, 1, 1)
    np.testing.assert_allclose(s.quantile(QS), np.quantile([1.0, 2.0, -3.0, 0.0], QS))


def test_bad_q_is_refused() -> None:
    s = build(np.arange(10.0))
    for bad in (-0.1, 1.5, np.nan):
        with pytest.raises(ValueError, match=r"q must lie in \[0, 1\]"):
            s.quantile(bad)


def test_labels() -> None:
    assert [quantile_label(q) for q in (0.5, 0.9, 0.99, 0.999, 0.9999)] == [
        "p50",
        "p90",
        "p99",
        "p99.9",
        "p99.99",
    ]


# ---------------------------------------------------------------------- accuracy
@pytest.mark.parametrize("kind", KINDS)
def test_large_default_sketch_rank_error(kind: str) -> None:
    """10^6 values, default settings: rank error at p50..p99.99 against numpy.

    The limit 6e-5 is explained, not fitted: within a centroid of w values the data's
    ranks wander from the straight line the sketch draws like a Brownian bridge, of
    size ~sqrt(w) / 2; at the default (k1, compression 2000) the central centroids
    hold pi / 2000 of the data, so at n = 10^6 one standard deviation is 2e-5 of n.
    Ties (integer-ms, few-values) must be exact: pure centroids answer them.
    """
    n = 1_000_000
    x = make(kind, n, np.random.default_rng(11))
    s = build(x)
    qs = np.array([0.5, 0.9, 0.99, 0.999, 0.9999])
    err = rank_error(x, s.quantile(qs), qs)
    if kind in ("integer-ms", "few-values"):
        assert err.max() == 0.0
    else:
        assert err.max() <= 6e-5, err
    assert err.max() <= s.rank_error_bound()


@settings(max_examples=60, deadline=None)
@given(
    kind=st.sampled_from(KINDS),
    n=st.integers(1, 3000),
    seed=st.integers(0, 2**32 - 1),
    compression=st.sampled_from([20.0, 100.0, 500.0]),
    tail=st.sampled_from([1, 8, 64]),
    scale=st.sampled_from(["k1", "k2", "k3"]),
    batch=st.integers(1, 700),
)
def test_property_rank_error_within_bound(
    kind: str, n: int, seed: int, compression: float, tail: int, scale: str, batch: int
) -> None:
    """Small tails and compressions so the digest really interpolates."""
    x = make(kind, n, np.random.default_rng(seed))
    s = build(x, batch=batch, compression=compression, tail_size=tail, scale=scale)
    q = np.linspace(0, 1, 201)
    err = rank_error(x, s.quantile(q), q)
    # One position of slack for the interpolation convention between ranks.
    assert np.all(err <= s.rank_error_bound() + 1.0 / n)
    assert np.all(err <= s.rank_error_at(q) + 1.0 / n)
    assert s.min == x.min() and s.max == x.max()
    est = s.quantile(q)
    assert np.all(np.diff(est) >= 0), "quantile function must be monotone"


@settings(max_examples=40, deadline=None)
@given(
    values=st.lists(st.integers(-50, 50), min_size=1, max_size=2000),
    compression=st.sampled_from([20.0, 200.0]),
    tail=st.sampled_from([1, 4, 32]),
)
def test_property_ties_are_exact(values: list[int], compression: float, tail: int) -> None:
    """Integer data with negatives: every quantile is a value that occurs, at the right rank."""
    x = np.array(values, dtype=np.float64)
    s = build(x, batch=333, compression=compression, tail_size=tail)
    q = np.linspace(0, 1, 101)
    err = rank_error(x, s.quantile(q), q)
    assert np.all(err <= s.rank_error_bound() + 1.0 / x.size)
    if np.unique(x).size * 4 < compression:
        # Few distinct values: each gets its own pure centroid, so answers at the
        # order statistics themselves agree with numpy (which interpolates only
        # between neighbouring distinct values).
        np.testing.assert_array_equal(s.value_at(np.arange(x.size, dtype=float)), np.sort(x))


# ---------------------------------------------------------------------- CDF
@pytest.mark.parametrize("kind", ["lognormal", "integer-ms", "few-values", "uniform"])
def test_cdf_against_empirical_cdf(kind: str) -> None:
    x = make(kind, 200_000, np.random.default_rng(3))
    s = build(x)
    xs = np.sort(x)
    probe = np.unique(np.concatenate((np.quantile(x, np.linspace(0, 1, 401)), xs[:50], xs[-50:])))
    ecdf = np.searchsorted(xs, probe, side="right") / x.size
    err = np.abs(s.cdf(probe) - ecdf)
    assert err.max() <= s.rank_error_bound() + 1.0 / x.size
    if kind in ("integer-ms", "few-values"):
        # Right-continuous at ties: exactly the empirical CDF at each value ...
        np.testing.assert_allclose(s.cdf(probe), ecdf, atol=1e-12)
        # ... and just below it the count of smaller values, up to one value: between
        # two distinct neighbours the rank rises linearly by one (the interpolation
        # numpy.quantile uses), so it approaches the jump from below.
        below = np.searchsorted(xs, probe, side="left") / x.size
        got = s.cdf(np.nextafter(probe, -np.inf))
        assert np.all((got >= below - 1e-12) & (got <= below + 1.0 / x.size + 1e-12))
    assert s.cdf(xs[0] - 1) == 0.0 and s.cdf(xs[-1]) == 1.0


def test_cdf_is_monotone_and_inverts_quantile() -> None:
    x = make("lognormal", 100_000, np.random.default_rng(5))
    s = build(x, compression=200.0, tail_size=16)
    grid = np.linspace(x.min(), x.max(), 5001)
    assert np.all(np.diff(s.cdf(grid)) >= 0)
    q = np.linspace(0.01, 0.99, 99)
    # rank(quantile(q)) returns the position + 1 (count of values <= it) on the
    # interpolated line; 1e-6 of n is float noise in the inverse interpolation.
    np.testing.assert_allclose(s.rank(s.quantile(q)), q * (x.size - 1) + 1, atol=1e-6 * x.size)


def test_summary_fields() -> None:
    x = make("normal", 2 * DEFAULT_TAIL, np.random.default_rng(2))  # exact: n <= 2 * tail_size
    d = build(x).summary()
    assert list(d) == ["n", "unit", "min", "p50", "p90", "p99", "p99.9", "p99.99", "max", "mean"]
    assert d["p50"] == pytest.approx(np.quantile(x, 0.5), rel=1e-12)


def test_caller_may_reuse_its_array_after_add() -> None:
    """A reader refills one buffer per chunk; the sketch must have kept its own copy."""
    rng = np.random.default_rng(13)
    chunks = [rng.lognormal(2, 1, 5000) for _ in range(4)]
    buf = np.empty(5000)
    s = Sketch("ms", compression=100.0, tail_size=8)
    for c in chunks:
        buf[:] = c
        s.add(buf)
    buf[:] = -1.0  # scribble before the digest flushes
    whole = np.concatenate(chunks)
    assert s.min == whole.min()
    q = np.linspace(0, 1, 101)
    assert rank_error(whole, s.quantile(q), q).max() <= s.rank_error_bound() + 1 / whole.size
