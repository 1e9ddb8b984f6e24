"""``show -q mean``, ``show`` of a set gathered from two scans, and ``merge --as``.

Means are checked against numpy.mean of the values written; line counts against the
lines written to each file.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from ogive.cli import main
from ogive.store import load_sketches


@pytest.fixture()
def two_logs(tmp_path: Path) -> tuple[Path, Path, np.ndarray, np.ndarray]:
    rng = np.random.default_rng(3)
    a, b = rng.lognormal(2.0, 0.5, 3000), rng.lognormal(2.2, 0.5, 5000)
    pa, pb = tmp_path / "web-1.log", tmp_path / "web-2.log"
    pa.write_text("".join(f"req dur={v:.4f}ms\n" for v in a))
    pb.write_text("".join(f"req dur={v:.4f}ms\n" for v in b))
    for p in (pa, pb):
        assert (
            main(["scan", str(p), "--pattern", r"dur=(\S+)", "--quiet", "-o", str(p.with_suffix(".ogive"))])
            == 0
        )
    return pa.with_suffix(".ogive"), pb.with_suffix(".ogive"), np.round(a, 4), np.round(b, 4)


def test_show_mean(
    two_logs: tuple[Path, Path, np.ndarray, np.ndarray], capsys: pytest.CaptureFixture[str]
) -> None:
    sa, _, a, _ = two_logs
    capsys.readouterr()
    assert main(["show", str(sa), "-q", "p50,mean", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    # The sketch keeps the exact sum: the mean matches numpy.mean to float rounding.
    assert doc["sketches"]["all"]["mean"] == pytest.approx(float(np.mean(a)), rel=1e-12)
    assert main(["show", str(sa), "-q", "p50,mean"]) == 0
    header, row = capsys.readouterr().out.splitlines()
    assert header.split() == ["sketch", "n", "p50", "mean"]
    assert f"{np.mean(a):.2f} ms" in row or f"{np.mean(a):.3g} ms" in row


def test_merge_as_gathers_hosts_side_by_side_and_show_counts_every_file(
    two_logs: tuple[Path, Path, np.ndarray, np.ndarray], tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    sa, sb, a, b = two_logs
    out = tmp_path / "hosts.ogive"
    args = [
        "merge",
        str(sa),
        str(sb),
        "--as",
        f"{sa}=web-1",
        "--as",
        f"{sb}:all=web-2",
        "-o",
        str(out),
        "--quiet",
    ]
    assert main(args) == 0
    sset = load_sketches(out)
    assert sset.names() == ["web-1", "web-2"]
    assert (sset["web-1"].count, sset["web-2"].count) == (a.size, b.size)
    capsys.readouterr()
    assert main(["show", str(out)]) == 0
    text = capsys.readouterr().out
    # Two scans of 3,000 and 5,000 lines: the set read 8,000, not the larger of the two.
    assert "lines read: 8,000" in text


def test_merge_as_refuses_unknown_names_in_one_line(
    two_logs: tuple[Path, Path, np.ndarray, np.ndarray], tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    sa, sb, _, _ = two_logs
    out = str(tmp_path / "x.ogive")
    for bad, says in (
        (f"{sa}:nope=x", "has no sketch named 'nope'"),
        ("other.ogive=x", "is not one of the files being merged"),
        (f"{sa}", "is not of the form FILE=NAME"),
    ):
        assert main(["merge", str(sa), str(sb), "--as", bad, "-o", out]) == 3
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and says in err[0]
