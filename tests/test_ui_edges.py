"""The workspace at its edges (issue 21, and issue 12's "the workspace never dies"), through the pilot.

Key bursts to every dialog, a failed open that keeps its prompt, an export that asks before
replacing, ctrl+c, and failures inside the scan, fit and compare workers: after each, the
app must still be running and answer keys.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest
from textual.pilot import Pilot

from ogive.read.options import ScanOptions
from ogive.sketch import Sketch
from ogive.ui import OgiveApp
from ogive.ui.ask_path import Confirm
from ogive.ui.help_overlay import KeyHelp, MessageLog
from ogive.ui.open_prompt import OpenPrompt
from ogive.ui.screen_text import screen_text
from ogive.ui.status_line import MORE, fit_lines
from ui_pilot import NO_BOOTSTRAP_N, pair_file, until_idle, until_shown

FAST = ("lognormal", "gamma")
os.environ.setdefault("NO_COLOR", "1")


@pytest.fixture()
def pair(tmp_path: Path) -> Path:
    return pair_file(tmp_path, 7, 3.2)


@pytest.fixture()
def log(tmp_path: Path) -> Path:
    path = tmp_path / "svc.log"
    values = np.random.default_rng(3).lognormal(3.0, 0.4, NO_BOOTSTRAP_N)
    path.write_text("".join(f"GET /x dur={v:.3f}\n" for v in values))
    return path


LOG_OPTIONS = ScanOptions(format="text", pattern=r"dur=(\S+)", unit="ms")


_quiet = until_idle


async def _alive(app: OgiveApp, pilot: Pilot[int]) -> None:
    """Running, on the workspace screen, and answering a key (v changes the picture)."""
    assert app.is_running and app.return_code is None
    assert len(app.screen_stack) == 1, app.screen_stack
    kind = app.ws.kind
    await pilot.press("v")
    await pilot.pause(0.1)
    assert app.ws.kind != kind


# ---------------------------------------------------------------------- key bursts
@pytest.mark.parametrize(
    "burst", ["enter", "enter,enter", "enter,enter,enter", "escape,enter", "enter,escape"]
)
async def test_bursts_in_the_write_dialog(pair: Path, tmp_path: Path, burst: str) -> None:
    """Issue 21: two enters in one read killed the app (ScreenStackError: Can't pop screen)."""
    app = OgiveApp([str(pair)], families=FAST, save_dir=tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        await pilot.press("w", *burst.split(","))
        await pilot.pause(0.3)
        await _alive(app, pilot)
        if burst.startswith("enter"):
            assert (tmp_path / "workspace.ogive").exists()


@pytest.mark.parametrize("burst", ["enter,enter", "enter,enter,y,y", "enter,enter,enter,n"])
async def test_bursts_in_the_export_dialog(pair: Path, tmp_path: Path, burst: str) -> None:
    app = OgiveApp([str(pair)], families=FAST, save_dir=tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        for _ in range(2):  # the second export meets the first one's files: a question
            await pilot.press("e", *burst.split(","))
            await pilot.pause(0.3)
            if isinstance(app.screen, Confirm):
                await pilot.press("n")
                await pilot.pause(0.1)
        await _alive(app, pilot)
        assert (tmp_path / "ogive-report.md").exists()


async def test_bursts_in_the_open_dialog(pair: Path, log: Path, tmp_path: Path) -> None:
    app = OgiveApp([str(pair)], families=FAST, save_dir=tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        await pilot.press("o", "o")  # a doubled o opens one prompt
        await pilot.pause(0.2)
        assert isinstance(app.screen, OpenPrompt) and len(app.screen_stack) == 2
        prompt = app.screen
        prompt.query_one("#open-path").value = str(log)  # type: ignore[attr-defined]
        prompt.query_one("#open-pattern").value = r"dur=(\S+)"  # type: ignore[attr-defined]
        await pilot.press("enter", "enter", "enter")
        await _quiet(app, pilot)
        assert len(app.ws.jobs) == 1  # opened once, not three times
        await _alive(app, pilot)
        await pilot.press("o", "escape", "escape", "enter")
        await pilot.pause(0.2)
        await _alive(app, pilot)


async def test_bursts_in_the_overlays(pair: Path) -> None:
    app = OgiveApp([str(pair)], families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        for keys, screen in ((("question_mark",), KeyHelp), (("exclamation_mark",), MessageLog)):
            await pilot.press(*keys, *keys)  # open, close
            await pilot.press(*keys)
            await pilot.pause(0.2)
            assert isinstance(app.screen, screen)
            await pilot.press("escape", "escape", "escape")
            await pilot.pause(0.2)
            await _alive(app, pilot)


# ---------------------------------------------------------------------- open, export
async def test_a_failed_open_keeps_the_prompt_and_the_path(pair: Path, tmp_path: Path) -> None:
    app = OgiveApp([str(pair)], families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        await pilot.press("o")
        await pilot.pause(0.2)
        missing = str(tmp_path / "no-such.log")
        app.screen.query_one("#open-path").value = missing  # type: ignore[attr-defined]
        await pilot.press("enter")
        await pilot.pause(0.5)
        assert isinstance(app.screen, OpenPrompt)
        assert app.screen.path == missing
        assert "no such file" in screen_text(app)
        await pilot.press("escape")
        await pilot.pause(0.1)
        await _alive(app, pilot)


async def test_export_asks_before_replacing(pair: Path, tmp_path: Path) -> None:
    app = OgiveApp([str(pair)], families=FAST, save_dir=tmp_path)
    report = tmp_path / "ogive-report.md"
    report.write_text("kept\n")
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        await pilot.press("e", "enter")
        await pilot.pause(0.3)
        assert isinstance(app.screen, Confirm)
        assert "ogive-report.md" in app.screen.question and "Replace?" in screen_text(app)
        await pilot.press("n")
        await pilot.pause(0.2)
        assert report.read_text() == "kept\n"
        assert "nothing written" in screen_text(app)
        await pilot.press("e", "enter")
        await pilot.pause(0.3)
        await pilot.press("y")
        await pilot.pause(0.3)
        assert report.read_text().startswith("# ogive workspace report")
        await _alive(app, pilot)


# ---------------------------------------------------------------------- ctrl+c and quitting
async def test_ctrl_c_stops_scans_first_then_quits_with_130(log: Path) -> None:
    app = OgiveApp([str(log)], LOG_OPTIONS, families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("ctrl+c")
        await pilot.pause(0.2)
        assert all(j.cancel.is_set() or j.done for j in app.ws.jobs)  # a fast scan may be done already
        assert "ctrl+c again" in screen_text(app).replace("\n", " ")
        assert app.is_running
        await pilot.press("ctrl+c")
        await pilot.pause(0.2)
    assert app.return_code == 130


async def test_q_quits_with_0(pair: Path) -> None:
    app = OgiveApp([str(pair)], families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        await pilot.press("q")
        await pilot.pause(0.1)
    assert app.return_code == 0


# ---------------------------------------------------------------------- the workspace never dies
def _boom(*_args: object, **_kwargs: object) -> object:
    raise OverflowError("int too large to convert to float")


async def test_a_scan_that_raises_marks_its_rows(log: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    import ogive.read

    monkeypatch.setattr(ogive.read, "scan", _boom)
    app = OgiveApp([str(log)], LOG_OPTIONS, families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        text = screen_text(app)
        assert "unexpected OverflowError" in text
        assert "Traceback" not in text
        await _alive(app, pilot)


async def test_a_scan_worker_that_raises_outside_the_reader(
    log: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from ogive.ui import workers

    monkeypatch.setattr(workers, "run_scan", _boom)
    app = OgiveApp([str(log)], LOG_OPTIONS, families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        assert "unexpected OverflowError" in screen_text(app)
        assert all(j.done for j in app.ws.jobs)
        await _alive(app, pilot)


async def test_a_tick_that_cannot_be_taken_fails_its_scan_only(
    log: Path, pair: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from ogive.ui.workspace import Workspace

    monkeypatch.setattr(Workspace, "take_scan", _boom)
    app = OgiveApp([str(pair), str(log)], LOG_OPTIONS, families=FAST, per_source={str(pair): ScanOptions()})
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        assert "OverflowError" in " ".join(m for _, m in app.messages)
        await _alive(app, pilot)


async def test_a_scan_failing_after_rows_arrived_marks_them(log: Path) -> None:
    """Rows a scan filled before it failed stay, marked ! with the reason."""
    app = OgiveApp([], families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        app.open(str(log), LOG_OPTIONS)
        await _quiet(app, pilot)
        job = app.ws.jobs[0]
        from ogive.ui import workers
        from ogive.ui.messages import ScanEnded

        app.post_message(ScanEnded(job, workers.failure("the scan", OverflowError("x"))))
        await pilot.pause(0.3)
        row = next(iter(app.ws.dists.values()))
        assert row.state == "failed" and "OverflowError" in row.note
        shelf_line = next(ln for ln in screen_text(app).splitlines() if row.name in ln and "ms" in ln)
        assert "!" in shelf_line
        await _alive(app, pilot)


@pytest.mark.parametrize("where", ["ogive.fit.models.fit_sketch", "ogive.fit.compare.compare_sketches"])
async def test_fit_and_compare_that_raise(pair: Path, monkeypatch: pytest.MonkeyPatch, where: str) -> None:
    monkeypatch.setattr(where, _boom)
    app = OgiveApp([str(pair)], families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        said = " ".join(m for _, m in app.messages)
        assert "failed" in said and "int too large" in said
        await _alive(app, pilot)


async def test_a_pane_that_cannot_draw(pair: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from ogive.ui.ladder_panel import LadderPanel

    monkeypatch.setattr(LadderPanel, "show", _boom)
    app = OgiveApp([str(pair)], families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        assert "the ladder could not be drawn" in " ".join(m for _, m in app.messages)
        await _alive(app, pilot)


# ---------------------------------------------------------------------- the status line
def test_status_text_is_cut_at_a_word_and_points_to_the_messages() -> None:
    long = "checkout-before.log: scan done (value: the dur= pairs, the only ones that hold durations " * 3
    out = fit_lines(long, "picture: Q-Q", 78, 2)
    assert out.endswith(MORE + " · picture: Q-Q")
    assert long.startswith(out[: out.index(MORE)])
    assert out[: out.index(MORE)].split()[-1] in [w.rstrip(",;:") for w in long.split()]  # whole word
    assert fit_lines("scan done", "picture: P-P", 78, 2) == "scan done · picture: P-P"


async def test_choosing_a_picture_keeps_the_scan_progress(log: Path) -> None:
    app = OgiveApp([str(log)], LOG_OPTIONS, families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        assert any("svc.log: scan done" in m for _, m in app.messages)
        before = screen_text(app).splitlines()[-2].strip()
        await pilot.press("v")
        await pilot.pause(0.2)
        status = screen_text(app).splitlines()[-2]
        assert "picture: detrended Q-Q" in status
        assert status.strip().startswith(before.split("…")[0].strip()[:30])  # the event stays


# ---------------------------------------------------------------------- the reference for one source
class _Model:
    def __init__(self, label: str, low: float, high: float, ok: bool = True) -> None:
        self.label, self.ok, self._q = label, ok, (low, high)

    def ppf(self, q: object) -> np.ndarray:
        return np.array(self._q)


def test_a_lone_subject_gets_a_model_that_spans_its_data() -> None:
    """Issue 21: the top-ranked heavy-tailed model stretched the Q-Q axis from 10 ns to 10 s."""
    from types import SimpleNamespace

    from ogive.ui.workspace import reference_model

    s = Sketch("ms")
    s.add(np.random.default_rng(1).lognormal(3.0, 0.5, 20_000))
    lo, hi = (float(v) for v in np.quantile(s.quantile(np.array([0.001, 0.999])), [0, 1]))
    wild = _Model("Pareto", 1e-5, 1e4)  # p0.1 at 10 ns, p99.9 at 10 s for data in ms
    stuck = _Model("gamma", lo, hi, ok=False)
    fine = _Model("lognormal", lo * 1.2, hi * 0.8)
    report = SimpleNamespace(models=(wild, stuck, fine))
    assert reference_model(report, s) is fine  # type: ignore[arg-type]
    assert reference_model(SimpleNamespace(models=(wild,)), s) is wild  # type: ignore[arg-type]
    assert reference_model(SimpleNamespace(models=()), s) is None  # type: ignore[arg-type]


async def test_the_reference_of_a_lone_scan_is_chosen_once_complete(log: Path) -> None:
    app = OgiveApp([str(log)], LOG_OPTIONS, families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        ref = app.ws.reference
        assert ref is not None and ref.kind == "model"
        assert any(m.startswith(f"reference: model {ref.name}") for _, m in app.messages)
        assert f"model {ref.name}" in screen_text(app).splitlines()[0]


# ---------------------------------------------------------------------- the open prompt's preview
@pytest.mark.parametrize("content", [b"", b'{"format":', b"0123456789"])
async def test_preview_and_open_agree_on_a_damaged_sketch(tmp_path: Path, content: bytes) -> None:
    """Issue 21: the preview refused an empty .ogive while enter scanned it as a log."""
    path = tmp_path / "cut.ogive"
    path.write_bytes(content)
    app = OgiveApp([], families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("o")
        await pilot.pause(0.2)
        app.screen.query_one("#open-path").value = str(path)  # type: ignore[attr-defined]
        # the preview's debounce and its worker
        previewed = await until_shown(app, pilot, "named as a saved sketch but is")
        assert "named as a saved sketch but is" in previewed
        await pilot.press("enter")
        await pilot.pause(0.3)
        assert isinstance(app.screen, OpenPrompt)  # refused, the prompt stays
        assert not app.ws.dists and not app.ws.jobs
        said = " ".join(screen_text(app).split())
        assert "named as a saved sketch but is" in said
        assert ("empty" in said) == (content == b"")


async def test_the_preview_keeps_the_values_line_in_sight(tmp_path: Path) -> None:
    path = tmp_path / "wide.log"
    path.write_text("".join(f"{'x' * 300} dur={i + 1}.5\n" for i in range(200)))
    app = OgiveApp([], families=FAST)
    async with app.run_test(size=(60, 15)) as pilot:  # the smallest window squeezes the preview
        await pilot.press("o")
        await pilot.pause(0.2)
        app.screen.query_one("#open-path").value = str(path)  # type: ignore[attr-defined]
        app.screen.query_one("#open-pattern").value = r"dur=(\S+)"  # type: ignore[attr-defined]
        assert "200 values from 200 rows" in await until_shown(app, pilot, "200 values from 200 rows")
        await pilot.pause(0.2)  # and it stays in sight
        assert "200 values from 200 rows" in " ".join(screen_text(app).split())


async def test_escape_sequences_in_group_names_are_shown_not_obeyed(tmp_path: Path) -> None:
    """Issue 12: terminal escapes in group keys are printed neutralised (ECMA-48: ESC 0x1b, BEL 0x07)."""
    path = tmp_path / "esc.csv"
    # Each group just above the bootstrap's size: the fit the panes wait for skips p-values.
    rows = range(3 * NO_BOOTSTRAP_N)
    path.write_text("host,v\n" + "".join(f"\x1b]0;title\x07h{i % 3},{i + 1}\n" for i in rows))
    app = OgiveApp([str(path)], ScanOptions(format="csv", column="v", by="host"), families=FAST)
    async with app.run_test(size=(80, 24)) as pilot:
        await _quiet(app, pilot)
        for pane in ("g", "c", "f"):
            await pilot.press(pane)
            await _quiet(app, pilot)
            text = screen_text(app)
            assert not any(ch in text for ch in "\x1b\x07"), pane
        assert "\\x1b]0;title\\x07h" in screen_text(app).split("╮")[0] + screen_text(app)
        await _alive(app, pilot)


async def test_a_crash_of_the_app_itself_is_a_non_zero_status(
    pair: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Issue 21: a crash exited 0. The app's own failure (here: a key's action raising) gives 1."""
    monkeypatch.setattr(OgiveApp, "action_cycle_axes", _boom)
    app = OgiveApp([str(pair)], families=FAST)
    with pytest.raises(OverflowError):
        async with app.run_test(size=(80, 24)) as pilot:
            await _quiet(app, pilot)
            await pilot.press("l")
            await pilot.pause(0.3)
    assert app.return_code == 1
