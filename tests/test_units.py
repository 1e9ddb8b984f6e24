"""Sketches in different duration units meet in compare, gate, merge and plot; unrelated units are refused.

References: numpy.quantile on the raw values (default linear method), with the unit
change done on the raw values (1 s = 1000 ms, SI). A sketch is exact up to 2048
values and t-digest-estimated beyond; the tolerances below say which applies.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from ogive.cli import main
from ogive.sketch import Sketch, SketchSet
from ogive.sketch.units import duration_factor, in_unit
from ogive.store import load_sketches, save_sketches

QS = np.array([0.01, 0.1, 0.5, 0.9, 0.99, 0.999])


def _sketch(values: np.ndarray, unit: str) -> Sketch:
    s = Sketch(unit)
    s.add(values)
    return s


@pytest.fixture()
def raw() -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(21)
    return rng.lognormal(3.0, 0.6, 30_000), rng.lognormal(3.2, 0.6, 30_000)  # both in ms


def test_in_unit_answers_as_the_source_times_the_factor(raw: tuple[np.ndarray, np.ndarray]) -> None:
    a, _ = raw
    ms = _sketch(a, "ms")
    s = in_unit(ms, "s")
    assert s.unit == "s" and s.count == ms.count
    # Multiplying by 1/1000 keeps every rank: the same answers, scaled, to float rounding.
    np.testing.assert_allclose(s.quantile(QS), ms.quantile(QS) / 1000, rtol=1e-12)
    # The bound comes from the centroids' ranges, which are kept rounded outwards as the
    # file holds them (sketch/rounding.py): scaled, they round again, by at most 1/64 of
    # a centroid's width, so the bound is the same to a few per cent (measured 1.5 %).
    assert s.rank_error_bound() == pytest.approx(ms.rank_error_bound(), rel=0.05)
    assert s.rank_error_bound() >= ms.rank_error_bound()
    assert s.min == pytest.approx(a.min() / 1000) and s.max == pytest.approx(a.max() / 1000)
    # Against numpy on the raw values in seconds; 1 % is far above t-digest error at n=30k.
    np.testing.assert_allclose(s.quantile(QS), np.quantile(a / 1000, QS), rtol=0.01)
    assert duration_factor("ms", "bytes") is None
    with pytest.raises(ValueError, match="only durations"):
        in_unit(ms, "bytes")


def _save(path: Path, name: str, sketch: Sketch) -> str:
    save_sketches(path, SketchSet({name: sketch}))
    return str(path)


def test_compare_and_plot_read_b_in_the_unit_of_a(
    raw: tuple[np.ndarray, np.ndarray], tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    a, b = raw
    base = _save(tmp_path / "before.ogive", "before", _sketch(a, "ms"))
    in_s = _save(tmp_path / "after.ogive", "after", _sketch(b / 1000, "s"))
    in_ms = _save(tmp_path / "after-ms.ogive", "after", _sketch(b, "ms"))
    assert main(["compare", base, in_s, "--json"]) == 0
    mixed = json.loads(capsys.readouterr().out)
    assert main(["compare", base, in_ms, "--json"]) == 0
    same = json.loads(capsys.readouterr().out)
    assert mixed["unit"] == "ms"
    for r_mixed, r_same in zip(mixed["ladder"], same["ladder"], strict=True):
        assert r_mixed["verdict"] == r_same["verdict"]
        assert r_mixed["b"]["estimate"] == pytest.approx(r_same["b"]["estimate"], rel=1e-9)
    assert main(["plot", base, in_s, "--width", "60", "--height", "16"]) == 0
    drawn = capsys.readouterr().out
    assert main(["plot", base, in_ms, "--width", "60", "--height", "16"]) == 0
    assert drawn == capsys.readouterr().out


def test_gate_limit_in_ms_on_a_candidate_in_seconds(
    raw: tuple[np.ndarray, np.ndarray], tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    a, b = raw
    base = _save(tmp_path / "base.ogive", "base", _sketch(a, "ms"))
    cand = _save(tmp_path / "cand.ogive", "cand", _sketch(b / 1000, "s"))
    # exp(3.2) - exp(3.0) = 4.45 ms between the medians (lognormal median = exp(mu)): +2 ms is exceeded.
    assert main(["gate", base, cand, "--limit", "p50=+2ms", "--json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    assert doc["unit"] == "ms"
    assert doc["checks"][0]["b"]["estimate"] == pytest.approx(float(np.quantile(b, 0.5)), rel=0.01)


def test_unrelated_units_are_refused_in_one_sentence(
    raw: tuple[np.ndarray, np.ndarray], tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    a, b = raw
    ms = _save(tmp_path / "ms.ogive", "all", _sketch(a, "ms"))  # one name: merge would add them
    size = _save(tmp_path / "size.ogive", "all", _sketch(b * 100, "bytes"))
    for argv in (
        ["compare", ms, size],
        ["gate", ms, size, "--limit", "p99=+5%"],
        ["plot", ms, size, "--width", "60", "--height", "16"],
        ["merge", ms, size, "-o", str(tmp_path / "x.ogive")],
    ):
        capsys.readouterr()
        assert main(argv) == 3, argv
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and ("different things" in err[0] or "unit 'ms' but" in err[0]), err


def test_merge_converts_durations_and_never_adds_raw_numbers(
    raw: tuple[np.ndarray, np.ndarray], tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    a, b = raw
    first = _save(tmp_path / "web-1.ogive", "all", _sketch(a, "ms"))
    second = _save(tmp_path / "web-2.ogive", "all", _sketch(b / 1000, "s"))
    for extra in ([], ["--force"]):
        out = tmp_path / f"fleet{len(extra)}.ogive"
        assert main(["merge", first, second, "-o", str(out), "--quiet", *extra]) == 0
        merged = load_sketches(out)["all"]
        assert merged.unit == "ms" and merged.count == a.size + b.size
        # numpy on the concatenated raw values in ms; 1 % covers the merged digest's error.
        np.testing.assert_allclose(merged.quantile(QS), np.quantile(np.concatenate((a, b)), QS), rtol=0.01)
    capsys.readouterr()
