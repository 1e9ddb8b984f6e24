"""`ogive plot` end to end on saved sketches: sizes honoured, errors in one line."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from ogive.cli import main
from ogive.errors import EXIT_ERROR
from ogive.sketch import Sketch, SketchSet
from ogive.store import save_sketches


@pytest.fixture(scope="module")
def runs(tmp_path_factory: pytest.TempPathFactory) -> Path:
    # Invented scenario: a release that leaves the body alone and slows 2 % of requests.
    rng = np.random.default_rng(42)
    before, after = Sketch("ms"), Sketch("ms")
    before.add(rng.lognormal(np.log(80), 0.5, 40_000))
    after.add(np.concatenate((rng.lognormal(np.log(80), 0.5, 39_200), rng.lognormal(np.log(600), 0.3, 800))))
    path = tmp_path_factory.mktemp("plot") / "runs.ogive"
    save_sketches(path, SketchSet({"before": before, "after": after}))
    return path


@pytest.mark.parametrize("kind", ["qq", "detrended", "pp", "cdf", "shift"])
@pytest.mark.parametrize("extra", [[], ["--ascii"], ["--linear", "--no-band"]])
def test_plot_kinds_fit_the_requested_size(
    runs: Path,
    kind: str,
    extra: list[str],
    capsys: pytest.CaptureFixture[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    monkeypatch.setenv("NO_COLOR", "1")
    code = main(
        ["plot", f"{runs}:before", f"{runs}:after", "--kind", kind, "--width", "72", "--height", "20", *extra]
    )
    out = capsys.readouterr().out
    assert code == 0
    lines = out.rstrip("\n").split("\n")
    assert len(lines) == 20
    assert all(len(line) <= 72 for line in lines)
    assert "\x1b[" not in out
    if "--ascii" in extra:
        assert out.isascii()


def test_slower_tail_shows_above_the_line(runs: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # after (B) read against before (A): the slowed 2 % puts p99 of B far above A's p99.
    assert main(["plot", f"{runs}:before", f"{runs}:after", "--width", "80", "--height", "24"]) == 0
    out = capsys.readouterr().out
    assert "after" in out.split("\n")[0] and "before" in out
    rows = out.split("\n")
    p99_row = next(i for i, line in enumerate(rows) if "p99 " in line or line.rstrip().endswith("p99"))
    p50_row = next(i for i, line in enumerate(rows) if "p50" in line)
    assert p99_row < p50_row


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["{a}"], "nothing to plot A against"),
        (["{a}", "{b}", "--model", "gamma"], "either a second distribution B or --model"),
        (["{a}", "{b}", "--width", "30"], "at least 40×12"),
        (["{a}", "{b}", "--confidence", "1.5"], "--confidence must lie strictly between 0 and 1"),
        (["{runs}", "{b}"], "holds 2 sketches"),
    ],
)
def test_bad_requests_are_one_line_errors(
    runs: Path, args: list[str], message: str, capsys: pytest.CaptureFixture[str]
) -> None:
    spec = {"a": f"{runs}:before", "b": f"{runs}:after", "runs": str(runs)}
    assert main(["plot", *(x.format(**spec) for x in args)]) == EXIT_ERROR
    err = capsys.readouterr().err
    assert message in err and err.count("\n") == 1 and "Traceback" not in err


def test_json_gives_the_numbers_behind_each_plot(runs: Path, capsys: pytest.CaptureFixture[str]) -> None:
    import json

    for kind, key in (("qq", "subject"), ("detrended", "deviation"), ("pp", "subject_p"), ("shift", "delta")):
        assert main(["plot", f"{runs}:before", f"{runs}:after", "--kind", kind, "--json"]) == 0
        data = json.loads(capsys.readouterr().out)
        assert data["kind"] == kind and key in data


def test_model_reference_uses_the_fit_package(runs: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """``--model`` plots against ``fit_sketch``'s model of that family, drawn as the workspace draws it."""
    from ogive import render
    from ogive.fit.curves import plot_inputs
    from ogive.fit.models import fit_sketch
    from ogive.store import load_sketches

    sketch = load_sketches(runs)["before"]
    model = fit_sketch(sketch, ["lognormal"], bootstrap=0).best
    assert model is not None
    for kind in ("qq", "detrended", "pp", "cdf"):
        args = [
            "plot",
            f"{runs}:before",
            "--model",
            "lognormal",
            "--kind",
            kind,
            "--width",
            "60",
            "--height",
            "16",
        ]
        assert main(args) == 0
        lines = capsys.readouterr().out.rstrip("\n").split("\n")
        data = plot_inputs(kind, sketch, model, subject_label="before", reference_label=model.label)
        assert lines == list(render.draw(kind, data, width=60, height=16)), kind
        assert len(lines) == 16 and max(map(len, lines)) <= 60
        assert "lognormal" in "\n".join(lines)
    assert main(["plot", f"{runs}:before", "--model", "lognormal", "--kind", "shift"]) == EXIT_ERROR
    assert "compares two distributions" in capsys.readouterr().err


def test_detrended_along_value(runs: Path, capsys: pytest.CaptureFixture[str]) -> None:
    args = ["plot", f"{runs}:before", f"{runs}:after", "--kind", "detrended", "--along", "value"]
    assert main([*args, "--width", "70", "--height", "18"]) == 0
    lines = capsys.readouterr().out.rstrip("\n").split("\n")
    assert len(lines) == 18 and "100ms" in lines[-1] and "p50" not in lines[-1]
