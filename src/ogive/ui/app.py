"""The workspace: scan, fit and compare distributions from the keyboard.

The application only arranges work and shows results. Scans run in thread workers
that call the same :func:`ogive.read.scan` as ``ogive scan``; fits and comparisons run
in their own workers through the functions ``ogive fit`` and ``ogive compare`` call.
Workers talk to the screen only through messages (``post_message`` is thread-safe) so
keys are handled while a multi-GB file streams.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any, ClassVar

from textual import on, work
from textual.app import App, ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Container, VerticalScroll
from textual.message import Message
from textual.screen import Screen
from textual.widgets import Footer, Static

from ..errors import OgiveError
from ..read.options import ScanOptions, ScanProgress
from ..sketch import Sketch, SketchSet
from ..store import save_sketches, source_stem
from . import fmt, report
from .ask_path import AskPath
from .capabilities import Unavailable, compare_function, fit_function, scan_function
from .fit_panel import ModelRanking, ranked_models
from .help_overlay import KeyHelp
from .ladder_panel import LadderPanel
from .open_prompt import OpenPrompt, OpenRequest
from .plot_panel import KIND_NAMES, KINDS, PlotPanel
from .shelf import DistributionShelf
from .state import Distribution, ReferenceChoice, ScanJob
from .status_line import FeedStatus

REFRESH_S = 0.5
"""Screen refresh while data streams: about twice a second."""
FOLLOW_POLL_S = 0.1
"""How often a followed file is asked for new lines when it has none."""
IDLE_TICK_S = 2.0
"""A follow with nothing new still refreshes the screen this often."""
FOLLOW_FIT_S = 30.0
"""A followed subject is refitted at most this often after the last fit ended, and never
sooner than FOLLOW_FIT_DUTY times that fit's own length: a fit of every family takes
seconds to tens of seconds of a core, and the ranking of models moves slowly next to
the quantiles. So following keeps the fit to a fifth of one core at most."""
FOLLOW_FIT_DUTY = 4.0
PANES = ("picture", "models", "ladder")
AXES = ("auto", "log", "linear")
"""'auto' lets the renderer choose (log when every value is positive, as latencies are)."""


def snapshot(sketch: Sketch) -> Sketch:
    """An independent copy, so the screen and the fit never read a sketch a scan is still filling."""
    out = Sketch(
        sketch.unit, compression=sketch.compression, tail_size=sketch.tail_size, scale=sketch.digest.scale
    )
    out.merge(sketch)
    return out


class ScanTick(Message):
    def __init__(self, job: ScanJob, progress: ScanProgress, sketches: dict[str, Sketch]) -> None:
        super().__init__()
        self.job, self.progress, self.sketches = job, progress, sketches


class ScanEnded(Message):
    def __init__(self, job: ScanJob, sketches: dict[str, Sketch], note: str, failed: bool) -> None:
        super().__init__()
        self.job, self.sketches, self.note, self.failed = job, sketches, note, failed


class OgiveApp(App[int]):
    """Distributions on the left or top; the picture, the model ranking and the ladder beside them.

    | Key | Action |
    | :- | :- |
    | o | Open a log or a .ogive sketch (prompt with completion and preview). |
    | g | Show the picture pane. |
    | f | Show the model-ranking pane. |
    | c | Show the comparison-ladder pane (up/down/page keys scroll it). |
    | v | Next picture: Q-Q → detrended → P-P → CDF → shift. |
    | V | Previous picture. |
    | l | Value axes: auto → log → linear. |
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
        Binding("g", "pane('picture')", "Picture", show=False),
        Binding("f", "pane('models')", "Models"),
        Binding("c", "pane('ladder')", "Ladder"),
        Binding("v", "cycle_kind(1)", "View"),
        Binding("V", "cycle_kind(-1)", "Prev view", show=False),
        Binding("l", "toggle_log", "Axes", show=False),  # in the key overlay; the footer must fit 80 columns
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
    ) -> None:
        super().__init__()
        self.initial_sources = list(sources)
        self.follow = follow
        """Logs named on the command line are followed as they grow instead of read once."""
        self.recent = recent
        """``--recent`` span for followed logs: a window sketch of its own beside the all-time one."""
        self.clock = clock
        """Wall clock of the recent window's arrival times (a test moves it by hand)."""
        self._fit_at = 0.0
        self._fit_n = 0
        """Values in the subject when the fit on screen was started (it may have grown since)."""
        """When the last fit started (monotonic seconds)."""
        self._fit_free_at = 0.0
        """When a followed subject may be refitted next (FOLLOW_FIT_S, FOLLOW_FIT_DUTY)."""
        self.options = options or ScanOptions()
        self.families = list(families) if families else None
        """Families to fit (None: the fit package's default list, as ``ogive fit``)."""
        self.per_source = dict(per_source or {})
        """Reading options for particular sources (the demo's logs differ in layout)."""
        self.wanted_subject = subject
        self.wanted_reference = reference
        self.save_dir = Path(save_dir)
        self.dists: dict[str, Distribution] = {}
        self.jobs: list[ScanJob] = []
        self.subject: str | None = None
        self.reference: ReferenceChoice | None = None
        self.fit_report: Any = None
        self.fit_note: str = ""
        self.comparison: Any = None
        self.compare_note: str = ""
        self.pane = "picture"
        self._dirty = False
        self._generation = 0
        self._fit_busy = False
        self._fit_pending = False
        self._compare_busy = False
        self._compare_pending = False
        self._seq = 0
        self._auto_model = False
        """The reference is the best model only because the subject was alone."""

    # ------------------------------------------------------------------ layout
    def compose(self) -> ComposeResult:
        yield Static("", id="headline")
        with Container(id="body"):
            yield DistributionShelf(id="shelf")
            yield PlotPanel(id="picture", classes="pane -current")
            yield ModelRanking(id="models", classes="pane")
            with VerticalScroll(id="ladder", classes="pane"):
                yield LadderPanel(id="ladder-text")
        yield FeedStatus(id="status")
        yield Footer()

    @property
    def _ws(self) -> Screen[Any]:
        """The workspace screen: widgets are looked up there even while a dialog is on top."""
        return self.screen_stack[0] if self.screen_stack else self.screen

    def on_mount(self) -> None:
        self._ws.query_one("#shelf").border_title = "Distributions"
        self._ws.query_one("#models").border_title = "Models (fit to subject)"
        self._ws.query_one("#ladder").border_title = "Quantile ladder"
        self.set_interval(REFRESH_S, self._refresh_if_dirty)
        self.refresh_all()
        for source in self.initial_sources:
            self.open_source(source, self.per_source.get(source, self.options))
        self._ws.query_one(DistributionShelf).focus()

    # ------------------------------------------------------------------ opening
    def open_source(self, source: str, options: ScanOptions) -> None:
        """A .ogive file loads at once; anything else is scanned in the background."""
        from ..store import load_sketches, sketch_ref

        ref = sketch_ref(source)
        if ref is not None:
            file, group = ref.path, ref.group
            try:
                sset = load_sketches(file)
            except OgiveError as exc:
                self.say(str(exc))
                return
            if group is not None and group not in sset.sketches:
                self.say(f"{file} has no sketch named {group!r}.")
                return
            stem = source_stem(file)
            seq = self._next_seq()
            for i, name in enumerate([group] if group is not None else sset.names()):
                label = stem if len(sset.sketches) == 1 else f"{stem}:{name}"
                self.add_distribution(Distribution(label, sset[name], file, seq=(seq, i)))
            self.say(f"loaded {file}")
            return
        if self.follow and source in self.initial_sources:
            self.follow_source(source, options)
            return
        if not Path(source).exists() and source != "-":
            self.say(f"cannot open {source}: no such file.")
            return
        job = ScanJob(source, options, seq=self._next_seq())
        self.jobs.append(job)
        self.scan_worker(job)
        self.refresh_all()

    def follow_source(self, source: str, options: ScanOptions) -> None:
        """Keep reading a growing log (it may not exist yet: the follow waits for it)."""
        job = ScanJob(source, options, seq=self._next_seq(), follow=True, recent=self.recent)
        self.jobs.append(job)
        self.follow_worker(job)
        self.refresh_all()

    def _next_seq(self) -> int:
        self._seq += 1
        return self._seq

    def add_distribution(self, dist: Distribution) -> None:
        self.dists[dist.name] = dist
        self._auto_roles()
        self.request_analysis()
        self.refresh_all()

    def _unique(self, base: str, job: ScanJob) -> str:
        """Names stay stable across a scan's ticks and distinct across files with the same stem."""
        taken = {n for n, d in self.dists.items() if d.job is not job}
        name, k = base, 2
        while name in taken:
            name, k = f"{base}#{k}", k + 1
        return name

    def _name_for(self, job: ScanJob, group: str, groups: int) -> str:
        stem = source_stem(job.source)
        if group not in job.names:
            # A follow with a recent window always has two rows, even before 'all' has values.
            alone = groups == 1 and job.recent is None
            job.names[group] = self._unique(stem if alone else f"{stem}:{group}", job)
        return job.names[group]

    # ------------------------------------------------------------------ scanning
    @work(thread=True, exclusive=False, group="scan")
    def scan_worker(self, job: ScanJob) -> None:
        """Runs :func:`ogive.read.scan`; copies of the sketches reach the screen ~2×/s."""
        from textual.worker import get_current_worker

        worker = get_current_worker()
        last = 0.0

        def cancelled() -> bool:
            return job.cancel.is_set() or worker.is_cancelled

        def progress(p: ScanProgress) -> None:
            nonlocal last
            now = time.monotonic()
            if now - last < REFRESH_S:
                return
            last = now
            copies = {name: snapshot(s) for name, s in p.sketches.sketches.items()}
            self.post_message(ScanTick(job, p, copies))

        try:
            scan = scan_function()  # imported here, not on the screen's thread
            result = scan([job.source], job.options, progress=progress, cancel=cancelled)
        except (OgiveError, Unavailable) as exc:
            self.post_message(ScanEnded(job, {}, str(exc), failed=True))
            return
        notes = list(result.warnings)
        if result.partial:
            notes.insert(0, f"partial: {result.partial}")
        job.bytes_read = result.bytes_read
        job.elapsed_s = result.elapsed_s
        self.post_message(ScanEnded(job, dict(result.sketches.sketches), "; ".join(notes), failed=False))

    @work(thread=True, exclusive=False, group="scan")
    def follow_worker(self, job: ScanJob) -> None:
        """Runs :func:`ogive.read.follow.follow` (what ``scan --follow`` runs) until stopped;
        copies of the sketches reach the screen ~2x/s while lines arrive."""
        from textual.worker import get_current_worker

        from ..read.follow import follow, recent_window

        worker = get_current_worker()

        def cancelled() -> bool:
            return job.cancel.is_set() or worker.is_cancelled

        window_name = None
        last: tuple[object, ...] = ()

        def progress(p: ScanProgress) -> None:
            nonlocal last
            # A quiet log sends the same figures every tick: redrawing them would cost a
            # third of a core for nothing. Skip until values, the window, rotations or the
            # catching-up change, or IDLE_TICK_S passed (so the rate can fall to 0/s).
            window = p.sketches.sketches.get(window_name or "")
            now = (
                p.rows,
                p.values,
                window.count if window is not None else -1,
                getattr(p, "rotations", 0),
                getattr(p, "caught_up", False),
                int(p.elapsed_s // IDLE_TICK_S),
            )
            if now == last:
                return
            last = now
            copies = {
                name: s if name == window_name else snapshot(s) for name, s in p.sketches.sketches.items()
            }
            self.post_message(ScanTick(job, p, copies))

        try:
            window = recent_window(job.recent, job.options, clock=self.clock) if job.recent else None
            window_name = window.name if window is not None else None
            result, rotations = follow(
                job.source,
                job.options,
                cancel=cancelled,
                on_update=progress,
                poll_s=FOLLOW_POLL_S,
                update_s=REFRESH_S,
                recent=window,
            )
        except (OgiveError, ValueError) as exc:
            self.post_message(ScanEnded(job, {}, str(exc), failed=True))
            return
        notes = list(result.warnings)
        if rotations:
            notes.append(f"the file was rotated or truncated {rotations} time(s) while followed")
        job.bytes_read, job.elapsed_s, job.rotations = result.bytes_read, result.elapsed_s, rotations
        self.post_message(ScanEnded(job, dict(result.sketches.sketches), "; ".join(notes), failed=False))

    def on_scan_tick(self, msg: ScanTick) -> None:
        job, p = msg.job, msg.progress
        job.bytes_read, job.bytes_total = p.bytes_read, p.bytes_total
        job.rows, job.values, job.elapsed_s = p.rows, p.values, p.elapsed_s
        if job.follow:
            job.rotations = getattr(p, "rotations", job.rotations)
            was = job.caught_up
            job.caught_up = getattr(p, "caught_up", job.caught_up)
            if job.caught_up and not was:
                job.restart_rate()
            job.mark(p.elapsed_s, p.values)
        if job.cancel.is_set():
            return
        self._take(job, msg.sketches, state="following" if job.follow else "scanning", note="")

    def on_scan_ended(self, msg: ScanEnded) -> None:
        job = msg.job
        job.done = True
        if msg.failed:
            self.say(f"{Path(job.source).name}: {msg.note}")
        elif job.follow:
            # Stopping is how a follow ends: what was read is a whole answer, not a partial one.
            self._take(job, msg.sketches, state="ready", note=msg.note)
            self.say(
                f"{Path(job.source).name}: stopped following after {job.values:,} values"
                + (f" ({msg.note})" if msg.note else "")
            )
        else:
            state = "partial" if job.cancel.is_set() or "partial" in msg.note else "ready"
            self._take(job, msg.sketches, state=state, note=msg.note)
            self.say(
                f"{Path(job.source).name}: scan {'stopped' if state == 'partial' else 'done'}"
                + (f" ({msg.note})" if msg.note else "")
            )
        self.request_analysis()
        self.refresh_all()

    def _take(self, job: ScanJob, sketches: dict[str, Sketch], *, state: str, note: str) -> None:
        window = None
        if job.recent is not None:
            from ..read.follow import recent_name

            window = recent_name(job.recent)
        for group, sketch in sketches.items():
            name = self._name_for(job, group, len(sketches))
            # The recent window's row goes last, so it is the subject held against all-time.
            order = (job.seq, 1 << 30 if group == window else list(job.names).index(group))
            self.dists[name] = Distribution(
                name, sketch, job.source, state=state, note=note, job=job, seq=order
            )
        self.dists = dict(sorted(self.dists.items(), key=lambda item: item[1].seq))
        self._auto_roles()
        self.request_analysis()
        self._dirty = True

    # ------------------------------------------------------------------ roles
    def _auto_roles(self) -> None:
        """Honour the roles asked for on the command line; otherwise the last file is the subject
        and the first the reference (``ogive view before after`` reads naturally)."""
        names = list(self.dists)
        if self._auto_model and len(names) > 1:
            # a model was chosen only because nothing else was loaded; a sketch now is
            self.reference, self._auto_model = None, False
        if self.subject is None or self.subject not in self.dists:
            if self.wanted_subject in self.dists:
                self.subject = self.wanted_subject
            elif self.wanted_subject is None and names:
                self.subject = names[-1]
        if (
            self.subject is not None
            and self.wanted_subject is None
            and len(names) == 2
            and self.reference is None
        ):
            self.subject = names[-1]
        if self.reference is None:
            if self.wanted_reference in self.dists and self.wanted_reference != self.subject:
                self.reference = ReferenceChoice("sketch", self.wanted_reference)
            elif self.wanted_reference is None:
                others = [n for n in names if n != self.subject]
                if others:
                    self.reference = ReferenceChoice("sketch", others[0])

    def set_subject(self, name: str) -> None:
        if self.reference is not None and self.reference.kind == "sketch" and self.reference.name == name:
            self.reference = ReferenceChoice("sketch", self.subject) if self.subject else None
        if self.reference is not None and self.reference.kind == "model":
            self.reference = None  # a model belongs to the subject it was fitted to
        self.subject = name
        self._generation += 1
        self.fit_report = None
        self.comparison = None
        self.request_analysis(force_fit=True)
        self.refresh_all()

    def set_reference_sketch(self, name: str) -> None:
        if name == self.subject:
            self.say("the reference must differ from the subject; pick another row, or press 1 first.")
            return
        self.reference = ReferenceChoice("sketch", name)
        self._auto_model = False
        self.comparison = None
        self.request_analysis()
        self.refresh_all()

    @on(DistributionShelf.Picked)
    def _picked_dist(self, msg: DistributionShelf.Picked) -> None:
        if msg.role == "subject":
            self.set_subject(msg.name)
        else:
            self.set_reference_sketch(msg.name)

    @on(ModelRanking.Picked)
    def _picked_model(self, msg: ModelRanking.Picked) -> None:
        models = ranked_models(self.fit_report)
        if 0 <= msg.index < len(models):
            m = models[msg.index]
            self.reference = ReferenceChoice("model", str(getattr(m, "label", m)), m)
            self._auto_model = False
            self.comparison = None
            self.refresh_all()

    # ------------------------------------------------------------------ analysis
    def request_analysis(self, *, force_fit: bool = False) -> None:
        subj = self.dists.get(self.subject or "")
        if subj is not None and subj.sketch.count == 0 and subj.state == "following":
            self.comparison = None  # a recent window that emptied: no stale ladder beside it
        if subj is None or subj.sketch.count == 0:
            return
        if force_fit or subj.state not in ("scanning", "following"):
            self._start_fit()
        elif subj.state == "following":
            if not self._fit_busy and time.monotonic() >= self._fit_free_at:
                self._start_fit()
        else:
            self.fit_note = "" if self.fit_report is not None else "the fit runs when the subject's scan ends"
        self._start_compare()

    def _start_fit(self) -> None:
        if self._fit_busy:
            self._fit_pending = True
            return
        subj = self.dists.get(self.subject or "")
        if subj is None:
            return
        self._fit_busy, self._fit_pending = True, False
        self._fit_at = time.monotonic()
        self._fit_n = subj.sketch.count
        self.fit_worker(subj.sketch, self._generation, subj.name)

    @work(thread=True, exclusive=True, group="fit")
    def fit_worker(self, sketch: Sketch, generation: int, name: str) -> None:
        """Imports and runs ``fit_sketch`` off the screen's thread (scipy takes seconds to load)."""
        try:
            fit = fit_function()
            result, note = fit(sketch, self.families), ""
        except Unavailable as exc:
            result, note = None, str(exc)
        except Exception as exc:  # the fit package reports its own problems; show them, keep going
            result, note = None, f"fitting {name} failed: {exc}"
        self.call_from_thread(self._fit_done, result, note, generation)

    def _fit_done(self, result: Any, note: str, generation: int) -> None:
        self._fit_busy = False
        now = time.monotonic()
        self._fit_free_at = now + max(FOLLOW_FIT_S, FOLLOW_FIT_DUTY * (now - self._fit_at))
        if generation == self._generation:
            self.fit_report, self.fit_note = result, note
            if self.reference is not None and self.reference.kind == "model" and result is not None:
                # keep the same family as reference, now refitted on more data
                for m in ranked_models(result):
                    if str(getattr(m, "label", m)) == self.reference.name:
                        self.reference = ReferenceChoice("model", self.reference.name, m)
            alone = len(self.dists) == 1 and all(j.done for j in self.jobs)
            if self.reference is None and result is not None and alone:
                best = ranked_models(result)[:1]
                if best:
                    self._auto_model = True
                    self.reference = ReferenceChoice(
                        "model", str(getattr(best[0], "label", best[0])), best[0]
                    )
            self.refresh_all()
        if self._fit_pending:
            self._start_fit()

    def _start_compare(self) -> None:
        ref = self.reference
        subj = self.dists.get(self.subject or "")
        if ref is None or ref.kind != "sketch" or subj is None:
            return
        other = self.dists.get(ref.name)
        if other is None or other.sketch.count == 0:
            return
        if self._compare_busy:
            self._compare_pending = True
            return
        self._compare_busy, self._compare_pending = True, False
        self.compare_worker(other, subj, (self.subject, ref.name))

    @work(thread=True, exclusive=True, group="compare")
    def compare_worker(self, ref: Distribution, subj: Distribution, key: tuple[Any, ...]) -> None:
        try:
            compare = compare_function()
            result, note = compare(ref.sketch, subj.sketch, labels=(ref.name, subj.name)), ""
        except Unavailable as exc:
            result, note = None, str(exc)
        except Exception as exc:  # shown in the ladder pane, never swallowed
            result, note = None, f"comparison failed: {exc}"
        self.call_from_thread(self._compare_done, result, note, key)

    def _compare_done(self, result: Any, note: str, key: tuple[Any, ...]) -> None:
        self._compare_busy = False
        ref = self.reference
        if ref is not None and key == (self.subject, ref.name):
            self.comparison, self.compare_note = result, note
            if any(j.follow and not j.done for j in self.jobs):
                # A follow brings a new comparison every tick: drawn with the next tick's
                # refresh (one redraw per tick, not two; the screen is most of the cost).
                self._dirty = True
            else:
                self.refresh_all()
        if self._compare_pending:
            self._start_compare()

    # ------------------------------------------------------------------ drawing
    @property
    def _gone(self) -> bool:
        """True once the workspace screen is gone (quitting): late worker results are dropped."""
        return not self._ws.is_attached or not self._ws.query(FeedStatus)

    def _refresh_if_dirty(self) -> None:
        if self._gone:
            return
        self._ws.query_one(FeedStatus).show_jobs(self.jobs)
        if self._dirty:
            self._dirty = False
            self.refresh_all()

    def refresh_all(self) -> None:
        if self._gone:
            return
        subj = self.dists.get(self.subject or "")
        ref = self.reference
        ref_dist = self.dists.get(ref.name) if ref is not None and ref.kind == "sketch" else None
        head = f"subject: {self.subject or '—'} · reference: {ref.label if ref else '—'}"
        self._ws.query_one("#headline", Static).update(head)
        self._ws.query_one(DistributionShelf).show(
            list(self.dists.values()),
            self.subject,
            ref.name if ref is not None and ref.kind == "sketch" else None,
        )
        plot = self._ws.query_one(PlotPanel)
        plot.waiting = any(not j.done for j in self.jobs)
        plot.following = any(j.follow and not j.done for j in self.jobs)
        plot.set_inputs(subj, ref, ref_dist, self.comparison)
        self._show_models()
        self._show_ladder(subj, ref)
        self._ws.query_one(FeedStatus).show_jobs(self.jobs)

    def _show_models(self) -> None:
        table = self._ws.query_one(ModelRanking)
        if self.fit_report is not None:
            chosen = self.reference.name if self.reference and self.reference.kind == "model" else None
            table.show(self.fit_report, chosen)
            subj = self.dists.get(self.subject or "")
            when = f" at n={fmt.count(self._fit_n)}" if subj is not None and subj.state == "following" else ""
            table.border_subtitle = f"fitted to {self.subject}{when}"
        else:
            table.clear(columns=True)
            table.border_subtitle = "" if self.fit_note else "fitting…" if self._fit_busy else "no subject"
            if self.fit_note:
                table.add_column("no fit on screen")
                table.add_row(self.fit_note)
            elif self._fit_busy:
                table.add_column("model ranking")
                table.add_row(f"fitting {self.subject}… (every family; this takes a few seconds)")

    def _show_ladder(self, subj: Distribution | None, ref: ReferenceChoice | None) -> None:
        ladder = self._ws.query_one(LadderPanel)
        if subj is None or ref is None:
            ladder.explain("No comparison", "Pick a subject (1) and a reference sketch (2) in Distributions.")
        elif ref.kind != "sketch":
            ladder.explain("No comparison", "The ladder compares two sketches; the reference is a model.")
        elif self.comparison is not None:
            ladder.show(self.comparison, ref.name, subj.name)
        elif self.compare_note:
            ladder.explain("Comparison not available", self.compare_note)
        else:
            ladder.explain("Comparing…", "waiting for both sketches to have values")

    # ------------------------------------------------------------------ actions
    def action_pane(self, pane: str) -> None:
        self.pane = pane
        for name in PANES:
            self._ws.query_one(f"#{name}").set_class(name == pane, "-current")
        if pane == "models":
            self._ws.query_one(ModelRanking).focus()
        elif pane == "ladder":
            self._ws.query_one("#ladder").focus()
        elif pane == "picture":
            self._ws.query_one(DistributionShelf).focus()

    def action_cycle_kind(self, step: int) -> None:
        plot = self._ws.query_one(PlotPanel)
        plot.kind = KINDS[(KINDS.index(plot.kind) + step) % len(KINDS)]
        if self.pane != "picture":
            self.action_pane("picture")
        self.say(f"picture: {KIND_NAMES[plot.kind]}")

    def action_toggle_log(self) -> None:
        plot = self._ws.query_one(PlotPanel)
        plot.axes = AXES[(AXES.index(plot.axes) + 1) % len(AXES)]
        self.say(f"value axes: {plot.axes}")

    def action_open(self) -> None:
        def opened(req: OpenRequest | None) -> None:
            if req is not None:
                self.open_source(req.path, req.options)

        self.push_screen(
            OpenPrompt(str(self.save_dir) + "/" if str(self.save_dir) != "." else "", self.options), opened
        )

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
        ready = {n: d.sketch for n, d in self.dists.items() if d.state != "scanning"}
        busy = [n for n, d in self.dists.items() if d.state == "scanning"]
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

        self.push_screen(
            AskPath(
                "Export report to (.md; a .json is written beside it)", str(self.save_dir / "ogive-report.md")
            ),
            chosen,
        )

    def export_to(self, path: str) -> None:
        try:
            md, js = report.write(self, path)
        except OgiveError as exc:
            self.say(str(exc))
            return
        self.say(f"exported {md} and {js}")

    def action_stop_scans(self) -> None:
        running = [j for j in self.jobs if not j.done]
        for j in running:
            j.cancel.set()
        self.say(f"stopping {len(running)} scan(s)…" if running else "no scan is running.")

    def action_stop_follow(self) -> None:
        following = [j for j in self.jobs if j.follow and not j.done]
        for j in following:
            j.cancel.set()
        self.say(
            f"stopping: {', '.join(Path(j.source).name for j in following)} (what was read stays)…"
            if following
            else "nothing is being followed."
        )

    def action_help(self) -> None:
        self.push_screen(KeyHelp(key_groups()))

    async def action_quit(self) -> None:
        for j in self.jobs:
            j.cancel.set()
        self.exit(0)

    def say(self, text: str) -> None:
        if not self._gone:
            self._ws.query_one(FeedStatus).message = text


def key_groups() -> list[tuple[str, list[tuple[str, str]]]]:
    """Every key, taken from the BINDINGS tables so the overlay cannot drift from them."""
    from .ask_path import AskPath as _Ask
    from .open_prompt import OpenPrompt as _Open
    from .path_input import PathInput

    def table(cls: type, title: str) -> tuple[str, list[tuple[str, str]]]:
        rows: list[tuple[str, str]] = []
        doc = cls.__doc__ or ""
        for line in doc.splitlines():
            line = line.strip()
            if line.startswith("|") and not line.startswith("| Key") and not line.startswith("| :-"):
                cells = [c.strip() for c in line.strip("|").split("|")]
                if len(cells) >= 2:
                    rows.append((cells[0], cells[1]))
        return title, rows

    return [
        table(OgiveApp, "Everywhere"),
        table(DistributionShelf, "Distributions"),
        table(ModelRanking, "Models"),
        table(_Open, "Open prompt"),
        table(PathInput, "Path fields"),
        table(_Ask, "Write / export prompt"),
    ]
