"""Fitting from a sketch, checked against scipy.stats on the raw values.

Outside references: scipy.stats distributions (densities, CDFs, ``fit`` on raw data,
``fit`` on ``CensoredData.interval_censored``), ``kstest``, ``cramervonmises``,
``goodness_of_fit``. No open dataset suitable for a fit check is installed (scipy's
``scipy.datasets`` needs a download; numpy, polars, textual and rich carry none), so
none is used.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats

from ogive.cli import main
from ogive.fit import families as F
from ogive.fit import fit_sketch
from ogive.fit.estimate import log_likelihood, maximise, quantile_matching
from ogive.fit.grouped import GroupedData, grouped_from_sketch, summarise
from ogive.fit.qq import pairs_from_model
from ogive.fit.scores import distances, exact_sample
from ogive.sketch import Sketch
from ogive.store import save_sketches

PROBS = np.array([0.5, 0.99, 0.999])

# family name -> (scipy distribution drawn from, scipy.stats.<dist>.fit keyword arguments)
CASES = {
    "normal": (stats.norm(100, 15), {}),
    "lognormal": (stats.lognorm(0.6, scale=20), {"floc": 0}),
    "gamma": (stats.gamma(2.5, scale=8), {"floc": 0}),
    "weibull": (stats.weibull_min(1.4, scale=30), {"floc": 0}),
    "exponential": (stats.expon(scale=12), {"floc": 0}),
    "loglogistic": (stats.fisk(4.0, scale=20), {"floc": 0}),
    "invgauss": (stats.invgauss(0.4, scale=30), {"floc": 0}),
    "lomax": (stats.lomax(3.0, scale=20), {"floc": 0}),
}
SCIPY = {
    "normal": stats.norm,
    "lognormal": stats.lognorm,
    "gamma": stats.gamma,
    "weibull": stats.weibull_min,
    "exponential": stats.expon,
    "loglogistic": stats.fisk,
    "invgauss": stats.invgauss,
    "lomax": stats.lomax,
}


def sketch_of(x: np.ndarray, unit: str = "ms") -> Sketch:
    s = Sketch(unit)
    s.add(x)
    return s


@pytest.mark.parametrize("name", list(CASES))
def test_closed_forms_match_scipy(name: str) -> None:
    """Our fast densities/CDFs against scipy.stats at the same parameters."""
    dist, _ = CASES[name]
    rng = np.random.default_rng(7)
    x = np.sort(dist.rvs(500, random_state=rng))
    s = summarise(GroupedData.from_edges(x, np.empty(0), np.empty(0), x.size))
    fam = F.get(name, float(x[0]))
    theta = quantile_matching(fam, s)[0]
    frozen = fam.freeze(theta)
    lc, ls = fam.logcdf_pair(x, theta)
    # 1e-8: both sides are double-precision closed forms of the same functions.
    np.testing.assert_allclose(fam.logpdf(x, theta), frozen.logpdf(x), rtol=1e-8, atol=1e-10)
    np.testing.assert_allclose(np.exp(lc), frozen.cdf(x), rtol=1e-8, atol=1e-12)
    np.testing.assert_allclose(np.exp(ls), frozen.sf(x), rtol=1e-8, atol=1e-12)


@pytest.mark.parametrize("name", list(CASES))
def test_quantiles_agree_with_raw_data_mle(name: str) -> None:
    """Issue 3: fitted quantiles at p50/p99/p99.9 within 1% of scipy's raw-data MLE."""
    dist, kw = CASES[name]
    rng = np.random.default_rng(11)
    x = dist.rvs(100_000, random_state=rng)
    report = fit_sketch(sketch_of(x), [name], bootstrap=0)
    ours = report.models[0].ppf(PROBS)
    ref = SCIPY[name](*SCIPY[name].fit(x, **kw))
    np.testing.assert_allclose(ours, ref.ppf(PROBS), rtol=0.01)


def test_mle_agreement_at_a_million() -> None:
    """The same check at n = 10^6 for the two families latency work leans on most."""
    rng = np.random.default_rng(12)
    for name in ("lognormal", "gamma"):
        dist, kw = CASES[name]
        x = dist.rvs(1_000_000, random_state=rng)
        ours = fit_sketch(sketch_of(x), [name], bootstrap=0).models[0].ppf(PROBS)
        ref = SCIPY[name](*SCIPY[name].fit(x, **kw))
        np.testing.assert_allclose(ours, ref.ppf(PROBS), rtol=0.01)


SHIFTED_CASES = {
    "lognormal3": (stats.lognorm, (0.5,), 5.0, 20.0),
    "gamma3": (stats.gamma, (3.0,), 5.0, 6.0),
    "weibull3": (stats.weibull_min, (1.6,), 5.0, 20.0),
}


@pytest.mark.parametrize("name", list(SHIFTED_CASES))
def test_shifted_families_agree_with_raw_data_mle(name: str) -> None:
    """Three-parameter fits vs scipy's raw-data MLE with a free location.

    scipy's own optimiser is started at the true parameters (three-parameter MLE is
    sensitive to its start); ours starts from the sketch alone.
    """
    dist, shape, loc, scale = SHIFTED_CASES[name]
    x = dist(*shape, loc=loc, scale=scale).rvs(100_000, random_state=np.random.default_rng(21))
    ours = fit_sketch(sketch_of(x), [name], bootstrap=0).models[0]
    ref = dist(*dist.fit(x, *shape, loc=loc, scale=scale))
    np.testing.assert_allclose(ours.ppf(PROBS), ref.ppf(PROBS), rtol=0.01)
    assert ours.params["location"] < x.min()


def test_gpd_agrees_with_scipy_fit_on_raw_excesses() -> None:
    x = stats.lomax(3.0, scale=20).rvs(400_000, random_state=np.random.default_rng(22))
    (tail,) = fit_sketch(sketch_of(x), ["gpd"]).tail_models
    u = tail.params["threshold"]
    ref = stats.genpareto(*stats.genpareto.fit(x[x > u] - u, floc=0))
    ours = stats.genpareto(tail.params["shape"], scale=tail.params["scale"])
    # Same excesses, binned vs raw: 1% on the excess quantiles up to the 99.9th.
    np.testing.assert_allclose(ours.ppf(PROBS), ref.ppf(PROBS), rtol=0.01)


@pytest.mark.parametrize("name", ["lognormal", "gamma", "weibull"])
def test_grouped_mle_matches_scipy_interval_censored_fit(name: str) -> None:
    """Same bins, same exact points: our optimum vs scipy's CensoredData fit."""
    dist, kw = CASES[name]
    rng = np.random.default_rng(5)
    x = dist.rvs(20_000, random_state=rng)
    g = grouped_from_sketch(sketch_of(x), bins=60)
    counts = np.round(g.counts).astype(int)  # scipy takes one row per value
    data = GroupedData(g.points, g.lows, g.highs, counts.astype(float), int(g.points.size + counts.sum()))
    lo = np.repeat(g.lows, counts)
    hi = np.repeat(g.highs, counts)
    cd = stats.CensoredData(uncensored=g.points, interval=np.column_stack((lo, hi)))
    ref = SCIPY[name](*SCIPY[name].fit(cd, **kw))
    fam = F.get(name, float(g.points.min()))
    est = maximise(fam, data, quantile_matching(fam, summarise(data)))
    ours = fam.freeze(est.theta)
    # 2e-3: scipy's Nelder-Mead stops at xtol 1e-4 in raw parameters; ours at L-BFGS-B's.
    np.testing.assert_allclose(ours.ppf(PROBS), ref.ppf(PROBS), rtol=2e-3)
    # And ours is at least as good a maximum of the same likelihood (up to 1e-6 of n).
    ref_theta = quantile_matching(fam, summarise(data))[0]
    assert est.loglik >= log_likelihood(fam, data, ref_theta) - 1e-6 * data.n


def test_statistics_match_scipy_on_exact_sample() -> None:
    """n = 2000 is held exactly: KS, W² and A² equal scipy's raw-data values."""
    rng = np.random.default_rng(3)
    x = stats.gamma(3.0, scale=5).rvs(2000, random_state=rng)
    model = stats.lognorm(0.55, scale=13.0)  # a fixed, slightly wrong model
    fam = F.get("lognormal", float(x.min()))
    theta = np.array([math.log(13.0), math.log(0.55)])
    xs = np.sort(x)
    lc, ls = fam.logcdf_pair(xs, theta)
    d = distances(lc, ls, exact_sample(xs))
    assert d.ks == pytest.approx(stats.kstest(x, model.cdf).statistic, rel=1e-9)
    assert d.cvm == pytest.approx(stats.cramervonmises(x, model.cdf).statistic, rel=1e-9)
    known = {"s": 0.55, "loc": 0.0, "scale": 13.0}
    ad = stats.goodness_of_fit(stats.lognorm, x, known_params=known, statistic="ad", n_mc_samples=9, rng=rng)
    assert d.ad == pytest.approx(ad.statistic, rel=1e-9)


def test_statistics_from_a_large_sketch_track_raw_data() -> None:
    """n = 10^6 through the t-digest: statistics close to scipy's on the raw values.

    Checked for a poor model (lognormal on shifted data) and a good one (lognormal3).
    A² on the raw data by the computing formula of D'Agostino & Stephens (1986, eq. 4.2),
    with scipy's logcdf/logsf.
    """
    rng = np.random.default_rng(4)
    x = np.sort(stats.lognorm(0.6, scale=20).rvs(1_000_000, random_state=rng) + 3)
    n = x.size
    i = np.arange(1, n + 1)
    sk = sketch_of(x)
    for name in ("lognormal", "lognormal3"):
        c = fit_sketch(sk, [name], bootstrap=0).models[0]
        dist = c.model.dist
        ks = stats.kstest(x, dist.cdf).statistic
        cvm = stats.cramervonmises(x, dist.cdf).statistic
        ad = -n - np.sum((2 * i - 1) / n * (dist.logcdf(x) + dist.logsf(x[::-1])))
        # KS: the sketch's rank error (bound ~0.002 of n; ~1e-5 seen) plus slicing (1/20000).
        assert abs(c.scores.ks - ks) < 1e-3
        # W² and A²: 5% covers the digest's rank error integrated over the body.
        assert c.scores.cvm == pytest.approx(cvm, rel=0.05)
        assert c.scores.ad == pytest.approx(ad, rel=0.05)


def test_bootstrap_p_value_agrees_with_scipy_goodness_of_fit() -> None:
    rng = np.random.default_rng(9)
    x = stats.norm(50, 5).rvs(300, random_state=rng)
    report = fit_sketch(sketch_of(x), ["normal"], bootstrap=250, seed=1)
    ours = report.models[0].scores.p_values
    assert ours is not None
    ref = stats.goodness_of_fit(stats.norm, x, statistic="ad", n_mc_samples=250, rng=rng)
    # Two Monte Carlo estimates of one p-value, 250 draws each: sd <= 0.032 apiece,
    # so 0.15 is about 3.4 combined standard deviations.
    assert abs(ours["ad"] - ref.pvalue) < 0.15
    # The observed statistic itself: same data, same MLE (normal: closed form in scipy).
    assert report.models[0].scores.ad == pytest.approx(ref.statistic, rel=0.01)


def test_large_sketch_gets_no_p_values_and_says_why() -> None:
    x = stats.lognorm(0.5, scale=10).rvs(20_000, random_state=np.random.default_rng(1))
    report = fit_sketch(sketch_of(x), ["lognormal", "gamma"])
    assert all(c.scores.p_values is None for c in report.models)
    assert any("every goodness-of-fit test rejects" in n for n in report.notes)


def test_ranking_prefers_the_true_family_and_positive_beats_normal() -> None:
    rng = np.random.default_rng(2)
    x = stats.lognorm(0.8, scale=20).rvs(200_000, random_state=rng)
    report = fit_sketch(sketch_of(x), ["normal", "lognormal", "gamma", "weibull"])
    assert report.models[0].family == "lognormal"
    assert report.models[-1].family == "normal"
    assert report.rank_key == "bic" and "BIC" in report.rank_reason  # chosen by auto, and says so
    by_tail = fit_sketch(sketch_of(x), ["normal", "lognormal", "gamma", "weibull"], rank_by="tail")
    assert by_tail.rank_key == "tail" and by_tail.rank_reason == ""
    assert by_tail.models[0].family == "lognormal"


def test_mixture_ranks_first_on_fast_and_slow_paths() -> None:
    rng = np.random.default_rng(8)
    fast = np.exp(rng.normal(math.log(5), 0.25, 160_000))
    slow = np.exp(rng.normal(math.log(60), 0.4, 40_000))
    report = fit_sketch(sketch_of(np.concatenate((fast, slow))), ["lognormal", "gamma", "lognormal-mix"])
    best = report.models[0]
    assert best.family == "lognormal-mix"
    p = best.params
    # Truth: 80% at median 5, 20% at median 60; 2% covers sampling and the sketch.
    assert p["weight_fast"] == pytest.approx(0.8, abs=0.02)
    assert p["median_fast"] == pytest.approx(5.0, rel=0.02)
    assert p["median_slow"] == pytest.approx(60.0, rel=0.02)


def test_zeros_get_a_point_mass_and_shifted_families_a_floor_below_them() -> None:
    # Exact zeros among continuous values: positive families fit the positive values
    # (as scipy's fit on them does) plus a point mass at 0; nothing is out of support.
    # More cases (lattice zeros, negatives) in test_fit_data.py.
    rng = np.random.default_rng(6)
    pos = stats.gamma(2.0, scale=10).rvs(50_000, random_state=rng)
    x = np.concatenate((np.zeros(300), pos))
    report = fit_sketch(sketch_of(x), ["gamma", "lognormal", "gamma3", "normal"])
    assert not report.not_fitted and report.out_of_support == 0 and report.zero_count == 300
    gamma = next(c for c in report.models if c.family == "gamma")
    shape, _, scale = stats.gamma.fit(pos, floc=0)
    assert gamma.params["shape"] == pytest.approx(shape, rel=0.01)
    assert gamma.params["scale"] == pytest.approx(scale, rel=0.01)
    assert gamma.model.zero_share == pytest.approx(300 / x.size)
    shifted = next(c for c in report.models if c.family == "gamma3")
    assert shifted.params["location"] < 0
    assert "location shift" in shifted.model.support


def test_gpd_tail_of_a_lomax_matches_the_textbook_excess_law() -> None:
    """Excesses of Lomax(c, s) over u are GPD(xi = 1/c, sigma = (s + u) / c) (Coles 2001, ch. 4)."""
    rng = np.random.default_rng(10)
    c, s = 3.0, 20.0
    x = stats.lomax(c, scale=s).rvs(400_000, random_state=rng)
    report = fit_sketch(sketch_of(x), ["gpd"])
    (tail,) = report.tail_models
    u = tail.params["threshold"]
    assert tail.model.tail_only
    # 20000 excesses: shape se about 0.01, scale se about 1%; 5 se margins.
    assert tail.params["shape"] == pytest.approx(1 / c, abs=0.05)
    assert tail.params["scale"] == pytest.approx((s + u) / c, rel=0.06)
    assert "tail only" in tail.model.support


def test_qq_pairs_from_a_fitted_model() -> None:
    x = stats.weibull_min(1.5, scale=10).rvs(50_000, random_state=np.random.default_rng(13))
    sk = sketch_of(x)
    cand = fit_sketch(sk, ["weibull"]).models[0]
    pairs = pairs_from_model(sk, cand, reference_label=cand.label)
    assert pairs.reference.shape == pairs.subject.shape
    np.testing.assert_allclose(cand.cdf(cand.ppf(pairs.probs)), pairs.probs, rtol=1e-9)


def test_bad_arguments_are_sentences() -> None:
    sk = sketch_of(np.arange(1.0, 100.0))
    with pytest.raises(ValueError, match="unknown family 'cauchy'"):
        fit_sketch(sk, ["cauchy"])
    with pytest.raises(ValueError, match="unknown rank key"):
        fit_sketch(sk, rank_by="p")
    with pytest.raises(ValueError, match="at least 3 values"):
        fit_sketch(Sketch("ms"))


def test_command_on_a_saved_sketch(tmp_path, capsys) -> None:  # type: ignore[no-untyped-def]
    from ogive.sketch import SketchSet

    x = stats.gamma(2.0, scale=10).rvs(30_000, random_state=np.random.default_rng(14))
    path = tmp_path / "run.ogive"
    save_sketches(path, SketchSet({"all": sketch_of(x)}))
    assert main(["fit", str(path), "--families", "gamma,lognormal,gpd", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["models"][0]["family"] == "gamma"
    assert doc["tail_models"][0]["tail_only"] is True
    assert main(["fit", str(path), "--families", "gamma"]) == 0
    text = capsys.readouterr().out
    assert "ranked by bic (chosen by auto)" in text and "p99.99" in text
    assert main(["fit", str(path), "--families", "nope"]) == 3
    assert "unknown family 'nope'" in capsys.readouterr().err


def test_degenerate_inputs_give_sentences_or_reported_refusals() -> None:
    with pytest.raises(ValueError, match="all 50 values equal 5"):
        fit_sketch(sketch_of(np.full(50, 5.0)))
    report = fit_sketch(sketch_of(np.array([1.0, 2.0, 3.0])), bootstrap=5)
    assert report.models  # some families fit three values; the rest say why not
    assert all(r.reason.endswith(".") for r in report.not_fitted)
    json.dumps(report.to_dict(), allow_nan=False)
