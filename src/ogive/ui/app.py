"""The workspace: scan, fit and compare distributions from the keyboard.

The application only arranges work and shows results. What is on screen is a
:class:`.workspace.Workspace` (plain data, with the role rules); background threads run
:mod:`.workers` (the CLI's own ``scan``, ``follow``, ``fit_sketch``, ``compare_sketches``)
and talk to the screen only through messages (``post_message`` is thread-safe), so keys
are answered while a multi-GB file streams; :mod:`.schedule` says when to fit and compare;
the panes draw the workspace through ``ogive.render``.
"""

from __future__ import annotations

import asyncio
import os
import signal
import sys
import threading
import time
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import ClassVar

from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Container, VerticalScroll
from textual.driver import Driver
from textual.filter import Monochrome, NoColor
from textual.message import Message
from textual.screen import Screen
from textual.widgets import Footer, Static

from ..read.follow import FollowProgress, recent_name
from ..read.options import ScanOptions, ScanProgress
from ..sketch import Binned, Sketch
from . import terminal, workers
from .actions import ActionsMixin
from .analysis import AnalysisMixin
from .fit_panel import ModelRanking
from .ladder_panel import LadderPanel
from .messages import ScanEnded, ScanTick
from .plot_panel import PlotPanel
from .schedule import Scheduler
from .shelf import DistributionShelf
from .sources import open_source, without_windows
from .state import ScanJob
from .status_line import FeedStatus
from .timeline_panel import TimelinePanel
from .timeline_study import study_change
from .workspace import Workspace

MIN_WIDTH, MIN_HEIGHT = 60, 15
"""The smallest window the workspace draws in (a picture needs 40×12 cells, plus the lines around it)."""
COMPACT_BELOW = 23
"""Fewer lines than this: one pane at a time, the list (d) or a pane (g f c t), without the key bar."""


def on_time_driver() -> type[Driver] | None:
    """Our driver where textual would use its Linux one (any POSIX terminal), else textual's choice."""
    if os.name != "posix":
        return None
    from .driver import OnTimeEscapeDriver

    return OnTimeEscapeDriver


class WorkspaceScreen(Screen[None]):
    """The default screen; it tells the app when the window changes size (the app's own resize
    handler stops the event before it reaches ours)."""

    class Resized(Message):
        """The window has a new size."""

    def on_resize(self) -> None:
        self.post_message(self.Resized())


class OgiveApp(ActionsMixin, AnalysisMixin):
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
    | d | Show the Distributions list (in a window under 23 lines it takes the panes' place). |
    | ! | Show every message said in the status line, whole. |
    | ? | Show every key. |
    | ctrl+c | Stop every running scan; a second ctrl+c within 3 s quits (status 130). |
    | ctrl+z | Suspend to the shell (fg brings the workspace back, redrawn). |
    | q / ctrl+q | Quit (status 0). |
    """

    CSS_PATH = "ogive.tcss"
    ENABLE_COMMAND_PALETTE = False
    TITLE = "ogive"
    HORIZONTAL_BREAKPOINTS = [(0, "-narrow"), (130, "-wide")]  # noqa: RUF012 -- textual's own ClassVar
    VERTICAL_BREAKPOINTS = [(0, "-compact"), (COMPACT_BELOW, "-short"), (36, "-tall")]  # noqa: RUF012

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
        Binding("exclamation_mark", "messages", "Messages", show=False),
        Binding("d", "pane('list')", "List", show=False),
        Binding("ctrl+c", "interrupt", "Interrupt", show=False, priority=True),
        Binding("ctrl+z", "suspend_process", "Suspend", show=False),
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
        ascii_only: bool | None = None,
    ) -> None:
        colourless = terminal.no_color()  # read before textual's App takes NO_COLOR out of the environment
        terminal.set_escape_delay()
        super().__init__(driver_class=on_time_driver())
        if colourless or self.no_color:
            # textual turns colours into greys (256-colour codes); NO_COLOR asks for none at all.
            self._filters = [f for f in self._filters if not isinstance(f, Monochrome | NoColor)]
            self._filters.append(NoColor())
        self._filters.append(terminal.ControlFilter())  # no control character reaches the terminal
        self.ascii_only = terminal.wants_ascii() if ascii_only is None else ascii_only
        """ASCII canvas and plain borders (``view --ascii``, or a terminal/locale without Unicode)."""
        self.ws = Workspace(wanted_subject=subject, wanted_reference=reference, ascii_only=self.ascii_only)
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
        self.messages = []

    # ------------------------------------------------------------------ layout
    def compose(self) -> ComposeResult:
        yield Static("", id="too-small")
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

    def run_for_status(self) -> int:
        """Run the workspace; the process's exit status: 0 after a quit, 130 after ctrl+c twice
        (or SIGINT), 128+N after signal N, 1 when the app itself failed (never 0 then)."""
        # Our own loop: asyncio.run (textual's default) waits for every thread worker before it
        # returns, and a fit cannot be interrupted (scipy holds its thread for seconds): q would
        # leave the terminal restored but the process alive until the fit ended.
        loop = asyncio.new_event_loop()
        asyncio.set_event_loop(loop)
        try:
            self.run(loop=loop)
        finally:
            loop.close()
        status = self.return_code if self.return_code is not None else 1
        busy = [t for t in threading.enumerate() if t is not threading.main_thread() and not t.daemon]
        if busy:
            # Python would also wait for them at exit; the terminal is already given back: end now.
            sys.stdout.flush()
            sys.stderr.flush()
            os._exit(status)
        return status

    def on_mount(self) -> None:
        ws = self.workspace_screen
        self.set_class(self.ascii_only, "-ascii")
        ws.query_one(FeedStatus).ascii_only = self.ascii_only
        self.set_class(self.no_color, "-nocolor")
        self._catch_signals()
        self.app_resume_signal.subscribe(self, self._resumed)
        ws.query_one("#shelf").border_title = "Distributions"
        ws.query_one("#models").border_title = "Models (fit to subject)"
        ws.query_one("#ladder").border_title = "Quantile ladder"
        self.set_interval(workers.REFRESH_S, self._refresh_if_dirty)
        self.refresh_all()
        for source in self.initial_sources:
            self.open(source, self.per_source.get(source, self.options), follow=self.follow)
        ws.query_one(DistributionShelf).focus()

    # ------------------------------------------------------------------ opening and scanning
    def open(self, source: str, options: ScanOptions, *, follow: bool = False) -> str:
        """A .ogive file loads at once; a log is scanned (or followed) in the background.

        Returns why nothing could be opened ('' when rows or a scan came of it), so the
        Open prompt can stay open with the reason.
        """
        order, recent = self.ws.next_order(), self.recent
        try:
            got = open_source(
                source, options, order=order, follow=follow, recent=recent, cluster=self.cluster
            )
        except Exception as exc:  # whatever opening a name raises, the workspace stays
            self.say(f"cannot open {source}: {type(exc).__name__}: {exc}")
            return self.messages[-1][1]
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
        return got.message if not got.rows and got.job is None else ""

    @work(thread=True, exclusive=False, group="scan", exit_on_error=False)
    def scan_worker(self, job: ScanJob) -> None:
        """Runs :func:`.workers.run_scan`; copies of the sketches reach the screen ~2×/s."""
        from textual.worker import get_current_worker

        worker = get_current_worker()

        def cancelled() -> bool:
            return job.cancel.is_set() or worker.is_cancelled

        def tick(p: ScanProgress, sketches: dict[str, Sketch | Binned]) -> None:
            self.post_message(ScanTick(job, p, sketches))

        try:
            end = workers.run_scan(job, tick=tick, cancelled=cancelled, clock=self.clock)
        except Exception as exc:  # run_scan catches its own; this is the last net
            end = workers.failure("the scan", exc)
        self.post_message(ScanEnded(job, end))

    def on_scan_tick(self, msg: ScanTick) -> None:
        try:
            self._tick(msg)
        except Exception as exc:  # a tick that cannot be taken ends that scan, not the workspace
            msg.job.cancel.set()
            self.say(f"{Path(msg.job.source).name}: {workers.failure('the scan', exc).note}")

    def _tick(self, msg: ScanTick) -> None:
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
        try:
            self._ended(msg)
        except Exception as exc:  # its rows stay, marked; the workspace goes on
            note = workers.failure("taking the scan's result", exc).note
            msg.job.done = True
            self.ws.fail_job(msg.job, note)
            self.say(f"{Path(msg.job.source).name}: {note}")
            self.refresh_all()

    def _ended(self, msg: ScanEnded) -> None:
        job, end = msg.job, msg.end
        job.done = True
        job.bytes_read, job.elapsed_s = end.bytes_read or job.bytes_read, end.elapsed_s or job.elapsed_s
        job.rotations = end.rotations or job.rotations
        name = Path(job.source).name
        note = f" ({end.note})" if end.note else ""
        if end.failed:
            self.ws.fail_job(job, end.note)  # its rows so far stay, marked !
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

    # ------------------------------------------------------------------ signals and resuming
    def _catch_signals(self) -> None:
        """SIGTERM, SIGHUP (the SSH link dropping) and SIGINT end the app through its own exit,
        so the terminal is given back (alternate screen left, cursor shown, mouse reporting off)
        and the status says which signal it was. Not under a test's headless pilot."""
        if self.is_headless:
            return
        loop = asyncio.get_running_loop()
        for name, status in terminal.SIGNAL_STATUS.items():
            loop.add_signal_handler(getattr(signal, name), self.leave, status)

    def get_default_screen(self) -> Screen[None]:
        return WorkspaceScreen(id="_default")

    def on_workspace_screen_resized(self) -> None:
        """Below the smallest size, one sentence saying how large the window must be."""
        width, height = self.size
        small = width < MIN_WIDTH or height < MIN_HEIGHT
        self.set_class(small, "-too-small")
        status = self.workspace_screen.query_one(FeedStatus)
        status.lines = 1 if height < COMPACT_BELOW else 2
        self.call_after_refresh(self.refresh_all)  # the list's height follows the layout
        if small:
            self.workspace_screen.query_one("#too-small", Static).update(
                f"Make the window at least {MIN_WIDTH}×{MIN_HEIGHT} (it is {width}×{height}); "
                "ogive redraws as soon as it is. q quits."
            )

    def _resumed(self, _signal: object = None) -> None:
        """Back from ctrl+z (``fg``): the terminal was given to the shell; draw everything again."""
        self.refresh(repaint=True, layout=True)
        self.screen.refresh(repaint=True, layout=True)
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
