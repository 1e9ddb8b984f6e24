"""The workspace: scan, fit and compare distributions from the keyboard.

The application only arranges work and shows results. What is on screen is a
:class:`.workspace.Workspace` (plain data, with the role rules); background threads run
:mod:`.workers` (the CLI's own ``scan``, ``follow``, ``fit_sketch``, ``compare_sketches``)
and talk to the screen only through messages (``post_message`` is thread-safe), so keys
are answered while a multi-GB file streams; :mod:`.schedule` says when to fit and compare;
the panes draw the workspace through ``ogive.render``.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

from textual import on, work
from textual.app import App, ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Container, VerticalScroll
from textual.screen import Screen
from textual.widgets import Footer, Static

from ..errors import OgiveError
from ..read.follow import FollowProgress, recent_name
from ..read.options import ScanOptions, ScanProgress
from ..sketch import Binned, Sketch, SketchSet
from ..store import save_sketches
from . import report, workers
from .ask_path import AskPath
from .fit_panel import ModelRanking
from .help_overlay import KeyHelp
from .keys import key_groups
from .ladder_panel import LadderPanel
from .messages import ScanEnded, ScanTick
from .open_prompt import OpenPrompt, OpenRequest
from .plot_panel import PlotPanel
from .schedule import Scheduler
from .shelf import DistributionShelf
from .sources import open_source, without_windows
from .state import ScanJob
from .status_line import FeedStatus, headline
from .timeline_panel import TimelinePanel
from .timeline_study import study_change
from .workspace import AXES, KIND_NAMES, KINDS, LINEUP_WORDS, LINEUPS, Workspace

if TYPE_CHECKING:
    from ..fit.compare import Comparison
    from ..fit.models import FitReport
    from ..fit.timeline import Timeline

PANES = ("picture", "models", "ladder", "timeline")


class OgiveApp(App[int]):
    """Distributions on the left or top; the picture, the model ranking and the ladder beside them.

    | Key | Action |
    | :- | :- |
    | o | Open a log or a .ogive sketch (prompt with completion and preview). |
    | g | Show the picture pane. |
    | f | Show the model-ranking pane. |
    | c | Show the comparison-ladder pane (up/down/page keys scroll it). |
    | t | Show the Timeline pane (quantiles over time, change points). |
    | v | Next picture: Q-Q → detrended → P-P → CDF → shift. |
    | V | Previous picture. |
    | l | Value axes: auto → log → linear. |
    | m | Picture: the best models side by side → on one axis → back (highlighted model marked). |
    | 1 | (Distributions) make the highlighted row the subject. |
    | 2 | (Distributions) make it the reference; (Models) make the highlighted model the reference. |
    | tab | Move between the lists. |
    | w | Write all finished sketches (followed ones as they stand) to a .ogive file. |
    | e | Export a report of the screen (Markdown and JSON). |
    | x | Stop every running scan (what was read stays, marked partial). |
    | s | Stop following the growing file (what was read stays, ready). |
    | ? | Show every key. |
    | q / ctrl+q | Quit. |
    """

    CSS_PATH = "ogive.tcss"
    ENABLE_COMMAND_PALETTE = False
    TITLE = "ogive"
    HORIZONTAL_BREAKPOINTS = [(0, "-narrow"), (130, "-wide")]  # noqa: RUF012 -- textual's own ClassVar
    VERTICAL_BREAKPOINTS = [(0, "-short"), (36, "-tall")]  # noqa: RUF012

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("o", "open", "Open"),
        Binding("g", "pane('picture')", "Picture"),
        Binding("f", "pane('models')", "Models"),
        Binding("c", "pane('ladder')", "Ladder"),
        Binding("t", "pane('timeline')", "Timeline", show=False),  # the footer must fit 80 columns
        Binding("v", "cycle_kind(1)", "View"),
        Binding("V", "cycle_kind(-1)", "Prev view", show=False),
        Binding("l", "cycle_axes", "Axes", show=False),  # in the key overlay; the footer must fit 80 columns
        Binding("m", "cycle_lineup", "Line-up", show=False),
        Binding("w", "save", "Write", show=False),
        Binding("e", "export", "Export", show=False),
        Binding("x", "stop_scans", "Stop", show=False),
        Binding("s", "stop_follow", "Stop following", show=False),
        Binding("question_mark", "help", "Keys"),
        Binding("q", "quit", "Quit"),
        Binding("ctrl+q", "quit", "Quit", show=False),
    ]

    def __init__(
        self,
        sources: Sequence[str] = (),
        options: ScanOptions | None = None,
        *,
        subject: str | None = None,
        reference: str | None = None,
        save_dir: str | Path = ".",
        per_source: dict[str, ScanOptions] | None = None,
        families: Sequence[str] | None = None,
        follow: bool = False,
        recent: str | None = None,
        clock: Callable[[], float] = time.time,
        cluster: str | None = None,
    ) -> None:
        super().__init__()
        self.ws = Workspace(wanted_subject=subject, wanted_reference=reference)
        """What is on screen, as data (the report and the tests read it too)."""
        self.initial_sources = list(sources)
        self.options = options or ScanOptions()
        self.per_source = dict(per_source or {})
        """Reading options for particular sources (the demo's logs differ in layout)."""
        self.families = list(families) if families else None
        """Families to fit (None: the fit package's default list, as ``ogive fit``)."""
        self.follow = follow
        """Logs named on the command line are followed as they grow instead of read once."""
        self.recent = recent
        """``--recent`` span for followed logs: a window sketch of its own beside the all-time one."""
        self.clock = clock
        """Wall clock of the recent window's arrival times (a test moves it by hand)."""
        self.cluster = cluster
        """``--cluster``: logs are read on this Dask cluster (as ``ogive scan --cluster``)."""
        self.save_dir = Path(save_dir)
        self.pane = "picture"
        self.schedule = Scheduler()
        self._dirty = False

    # ------------------------------------------------------------------ layout
    def compose(self) -> ComposeResult:
        yield Static("", id="headline")
        with Container(id="body"):
            yield DistributionShelf(id="shelf")
            yield PlotPanel(id="picture", classes="pane -current")
            yield ModelRanking(id="models", classes="pane")
            with VerticalScroll(id="ladder", classes="pane"):
                yield LadderPanel(id="ladder-text")
            yield TimelinePanel(id="timeline", classes="pane")
        yield FeedStatus(id="status")
        yield Footer()

    @property
    def workspace_screen(self) -> Screen[Any]:
        """The workspace screen: widgets are looked up there even while a dialog is on top."""
        return self.screen_stack[0] if self.screen_stack else self.screen

    def on_mount(self) -> None:
        ws = self.workspace_screen
        ws.query_one("#shelf").border_title = "Distributions"
        ws.query_one("#models").border_title = "Models (fit to subject)"
        ws.query_one("#ladder").border_title = "Quantile ladder"
        self.set_interval(workers.REFRESH_S, self._refresh_if_dirty)
        self.refresh_all()
        for source in self.initial_sources:
            self.open(source, self.per_source.get(source, self.options), follow=self.follow)
        ws.query_one(DistributionShelf).focus()

    # ------------------------------------------------------------------ opening and scanning
    def open(self, source: str, options: ScanOptions, *, follow: bool = False) -> None:
        """A .ogive file loads at once; a log is scanned (or followed) in the background."""
        order, recent = self.ws.next_order(), self.recent
        got = open_source(source, options, order=order, follow=follow, recent=recent, cluster=self.cluster)
        if got.rows:
            self.ws.add_rows(got.rows)
            self.request_analysis()
        if got.windows and self.ws.take_timeline_input(source, got.windows, live=False):
            self.request_timeline()
        if got.job is not None:
            self.ws.jobs.append(got.job)
            self.scan_worker(got.job)
        if got.message:
            self.say(got.message)
        self.refresh_all()

    @work(thread=True, exclusive=False, group="scan")
    def scan_worker(self, job: ScanJob) -> None:
        """Runs :func:`.workers.run_scan`; copies of the sketches reach the screen ~2×/s."""
        from textual.worker import get_current_worker

        worker = get_current_worker()

        def cancelled() -> bool:
            return job.cancel.is_set() or worker.is_cancelled

        def tick(p: ScanProgress, sketches: dict[str, Sketch | Binned]) -> None:
            self.post_message(ScanTick(job, p, sketches))

        end = workers.run_scan(job, tick=tick, cancelled=cancelled, clock=self.clock)
        self.post_message(ScanEnded(job, end))

    def on_scan_tick(self, msg: ScanTick) -> None:
        job, p = msg.job, msg.progress
        job.bytes_read, job.bytes_total = p.bytes_read, p.bytes_total
        job.rows, job.values, job.elapsed_s = p.rows, p.values, p.elapsed_s
        if isinstance(p, FollowProgress):
            job.rotations = p.rotations
            if p.caught_up and not job.caught_up:
                job.restart_rate()  # the backlog's read rate is not what arrives now
            job.caught_up = p.caught_up
            job.mark(p.elapsed_s, p.values)
        if not self._gone:
            self.workspace_screen.query_one(FeedStatus).show_jobs(self.ws.jobs)  # the tick's own figures
        if job.cancel.is_set():
            return
        self._take(job, msg.sketches, state="following" if job.follow else "scanning", note="")

    def on_scan_ended(self, msg: ScanEnded) -> None:
        job, end = msg.job, msg.end
        job.done = True
        job.bytes_read, job.elapsed_s = end.bytes_read or job.bytes_read, end.elapsed_s or job.elapsed_s
        job.rotations = end.rotations or job.rotations
        name = Path(job.source).name
        note = f" ({end.note})" if end.note else ""
        if end.failed:
            self.say(f"{name}: {end.note}")
        elif job.follow:
            # Stopping is how a follow ends: what was read is a whole answer, not a partial one.
            self._take(job, end.sketches, state="ready", note=end.note)
            self.say(f"{name}: stopped following after {job.values:,} values{note}")
        else:
            state = "partial" if job.cancel.is_set() or "partial" in end.note else "ready"
            self._take(job, end.sketches, state=state, note=end.note)
            self.say(f"{name}: scan {'stopped' if state == 'partial' else 'done'}{note}")
        self.request_analysis()
        self.refresh_all()

    def _take(self, job: ScanJob, sketches: dict[str, Sketch | Binned], *, state: str, note: str) -> None:
        window = recent_name(job.recent) if job.recent is not None else None
        rows = len(self.ws.dists)
        kept = without_windows(sketches)
        if len(kept) < len(sketches) and self.ws.take_timeline_input(job.source, sketches, live=job.follow):
            self.request_timeline()
        self.ws.take_scan(job, kept, state=state, note=note, window=window)
        self.request_analysis()
        if len(self.ws.dists) != rows:
            self.refresh_all()  # new rows (and perhaps new roles) show at once
        else:
            self._dirty = True  # the next refresh, at most REFRESH_S away

    # ------------------------------------------------------------------ roles
    @on(DistributionShelf.Picked)
    def _picked_dist(self, msg: DistributionShelf.Picked) -> None:
        if msg.role == "subject":
            self.ws.set_subject(msg.name)
            self.request_analysis(force_fit=True)
        else:
            refused = self.ws.set_reference_sketch(msg.name)
            if refused:
                self.say(refused)
                return
            self.request_analysis()
        self.refresh_all()

    @on(ModelRanking.Picked)
    def _picked_model(self, msg: ModelRanking.Picked) -> None:
        if self.ws.set_reference_model(msg.index):
            self.refresh_all()

    @on(ModelRanking.RowHighlighted, "#models")
    def _highlighted_model(self, msg: ModelRanking.RowHighlighted) -> None:
        if self.ws.model_row != msg.cursor_row:
            self.ws.model_row = msg.cursor_row
            if self.ws.lineup:
                self.workspace_screen.query_one(PlotPanel).redraw()  # the marked panel follows

    # ------------------------------------------------------------------ analysis
    def request_analysis(self, *, force_fit: bool = False) -> None:
        plan = self.schedule.plan(self.ws, time.monotonic(), force_fit=force_fit)
        if plan.fit:
            self._start_fit()
        if plan.compare:
            self._start_compare()

    def _start_fit(self) -> None:
        subj = self.ws.subject_dist
        if subj is None or not self.schedule.fit.claim():
            return
        self.schedule.fit_started_at(time.monotonic())
        self.ws.fit_n = subj.sketch.count
        self.fit_worker(subj.sketch, self.ws.generation, subj.name)

    @work(thread=True, exclusive=True, group="fit")
    def fit_worker(self, sketch: Sketch | Binned, generation: int, name: str) -> None:
        """``fit_sketch`` off the screen's thread (scipy takes seconds to load)."""
        result, note = workers.run_fit(sketch, self.families, name)
        self.call_from_thread(self._fit_done, result, note, generation)

    def _fit_done(self, result: FitReport | None, note: str, generation: int) -> None:
        again = self.schedule.fit_ended_at(time.monotonic())
        if self.ws.take_fit(result, note, generation):
            self.refresh_all()
        if again:
            self._start_fit()

    def _start_compare(self) -> None:
        key = self.ws.compare_key()
        if key is None or not self.schedule.compare.claim():
            return
        subj, ref = self.ws.dists[key[0]], self.ws.dists[key[1]]
        self.compare_worker(ref.sketch, subj.sketch, key)

    @work(thread=True, exclusive=True, group="compare")
    def compare_worker(
        self, reference: Sketch | Binned, subject: Sketch | Binned, key: tuple[str, str]
    ) -> None:
        result, note = workers.run_compare(reference, subject, (key[1], key[0]))
        self.call_from_thread(self._compare_done, result, note, key)

    def _compare_done(self, result: Comparison | None, note: str, key: tuple[str, str]) -> None:
        again = self.schedule.compare.release()
        if self.ws.take_comparison(result, note, key):
            if self.ws.following:
                # A follow brings a new comparison every tick: drawn with the next tick's
                # refresh (one redraw per tick, not two; the screen is most of the cost).
                self._dirty = True
            else:
                self.refresh_all()
        if again:
            self._start_compare()

    # ------------------------------------------------------------------ the timeline
    def request_timeline(self) -> None:
        if self.schedule.plan_timeline(self.ws, time.monotonic()) and self.schedule.timeline.claim():
            self.timeline_worker(dict(self.ws.timeline_input))

    @work(thread=True, exclusive=True, group="timeline")
    def timeline_worker(self, sketches: dict[str, Sketch]) -> None:
        """``ogive timeline``'s analysis off the screen's thread (the change search takes a while)."""
        result, note = workers.run_timeline(sketches)
        self.call_from_thread(self._timeline_done, result, note)

    def _timeline_done(self, result: Timeline | None, note: str) -> None:
        again = self.schedule.timeline_ended_at(time.monotonic())
        self.ws.take_timeline(result, note)
        if not self._gone:
            self.workspace_screen.query_one(TimelinePanel).show(self.ws)
        if again:
            self.request_timeline()

    @on(TimelinePanel.Chosen)
    def _study_change(self, msg: TimelinePanel.Chosen) -> None:
        study = study_change(self.ws, msg.index)
        if study.job is not None:
            self.ws.jobs.append(study.job)
            self.scan_worker(study.job)
        if study.rows:
            self.ws.add_rows(study.rows)
        self.ws.study(*study.roles)
        self.say(study.message)
        self.request_analysis(force_fit=True)
        self.action_pane("ladder")
        self.refresh_all()

    # ------------------------------------------------------------------ drawing
    @property
    def _gone(self) -> bool:
        """True once the workspace screen is gone (quitting): late worker results are dropped."""
        screen = self.workspace_screen
        return not screen.is_attached or not screen.query(FeedStatus)

    def _refresh_if_dirty(self) -> None:
        if self._gone:
            return
        self.workspace_screen.query_one(FeedStatus).show_jobs(self.ws.jobs)
        if self._dirty:
            self._dirty = False
            self.refresh_all()

    def refresh_all(self) -> None:
        if self._gone:
            return
        ws, screen = self.ws, self.workspace_screen
        head = screen.query_one("#headline", Static)
        ref = ws.reference
        head.update(headline(ws.subject, ref.label if ref else None, max(head.size.width, 40)))
        screen.query_one(DistributionShelf).show(ws)
        screen.query_one(PlotPanel).show(ws)
        screen.query_one(ModelRanking).show(ws, fitting=self.schedule.fit.busy)
        screen.query_one(LadderPanel).show(ws)
        screen.query_one(TimelinePanel).show(ws)
        screen.query_one(FeedStatus).show_jobs(ws.jobs)

    # ------------------------------------------------------------------ actions
    def action_pane(self, pane: str) -> None:
        self.pane = pane
        screen = self.workspace_screen
        for name in PANES:
            screen.query_one(f"#{name}").set_class(name == pane, "-current")
        # Wide screens show every pane; the timeline takes the picture's place when asked for.
        screen.query_one("#picture").set_class(pane == "timeline", "-covered")
        target = {"models": "#models", "ladder": "#ladder", "timeline": "#timeline"}.get(pane, "#shelf")
        screen.query_one(target).focus()

    def action_cycle_kind(self, step: int) -> None:
        self.ws.kind = KINDS[(KINDS.index(self.ws.kind) + step) % len(KINDS)]
        if self.pane != "picture":
            self.action_pane("picture")
        self.workspace_screen.query_one(PlotPanel).redraw()
        self.say(f"picture: {KIND_NAMES[self.ws.kind]}")

    def action_cycle_lineup(self) -> None:
        self.ws.lineup = LINEUPS[(LINEUPS.index(self.ws.lineup) + 1) % len(LINEUPS)]
        panel = self.workspace_screen.query_one(PlotPanel)
        if self.ws.lineup and not panel.region.area:
            self.action_pane("picture")  # only one pane below the rows: show the line-up
        panel.redraw()
        self.say(f"picture: {LINEUP_WORDS[self.ws.lineup]}")

    def action_cycle_axes(self) -> None:
        self.ws.axes = AXES[(AXES.index(self.ws.axes) + 1) % len(AXES)]
        self.workspace_screen.query_one(PlotPanel).redraw()
        self.say(f"value axes: {self.ws.axes}")

    def action_open(self) -> None:
        def opened(req: OpenRequest | None) -> None:
            if req is not None:
                self.open(req.path, req.options)

        start = str(self.save_dir) + "/" if str(self.save_dir) != "." else ""
        self.push_screen(OpenPrompt(start, self.options), opened)

    def action_save(self) -> None:
        def chosen(path: str | None) -> None:
            if path:
                self.save_to(path)

        self.push_screen(
            AskPath("Write sketches to (.ogive)", str(self.save_dir / "workspace.ogive")), chosen
        )

    def save_to(self, path: str) -> None:
        # A followed sketch is written as it stands now: the file goes on growing, so
        # there is no "finished" to wait for (the CLI's scan --follow -o does the same).
        ready, busy = self.ws.finished()
        if not ready:
            self.say("nothing to write yet: no finished sketches.")
            return
        try:
            save_sketches(path, SketchSet(dict(ready)))
        except OgiveError as exc:
            self.say(str(exc))
            return
        extra = f"; still scanning, not written: {', '.join(busy)}" if busy else ""
        self.say(f"wrote {len(ready)} sketch(es) to {path}{extra}")

    def action_export(self) -> None:
        def chosen(path: str | None) -> None:
            if path:
                self.export_to(path)

        title = "Export report to (.md; a .json is written beside it)"
        self.push_screen(AskPath(title, str(self.save_dir / "ogive-report.md")), chosen)

    def export_to(self, path: str) -> None:
        try:
            md, js = report.write(self.ws, self.workspace_screen.query_one(PlotPanel).lines, path)
        except OgiveError as exc:
            self.say(str(exc))
            return
        self.say(f"exported {md} and {js}")

    def action_stop_scans(self) -> None:
        running = [j for j in self.ws.jobs if not j.done]
        for j in running:
            j.cancel.set()
        self.say(f"stopping {len(running)} scan(s)…" if running else "no scan is running.")

    def action_stop_follow(self) -> None:
        following = [j for j in self.ws.jobs if j.follow and not j.done]
        for j in following:
            j.cancel.set()
        names = ", ".join(Path(j.source).name for j in following)
        self.say(f"stopping: {names} (what was read stays)…" if following else "nothing is being followed.")

    def action_help(self) -> None:
        self.push_screen(KeyHelp(key_groups(type(self))))

    async def action_quit(self) -> None:
        for j in self.ws.jobs:
            j.cancel.set()
        self.exit(0)

    def say(self, text: str) -> None:
        if not self._gone:
            self.workspace_screen.query_one(FeedStatus).message = text
