"""The workspace's analysis: when to fit and compare, the worker threads that do it, and their results.

Each worker calls the CLI's own function through :mod:`.workers` (which turns any
exception into a note) and hands the result back with ``call_from_thread``; the workers
are started with ``exit_on_error=False``, so even a failure outside those functions is a
message in the status line, never the end of the workspace.
"""

from __future__ import annotations

import time
from typing import TYPE_CHECKING

from textual import on, work

from . import workers
from .base import WorkspaceBase
from .fit_panel import ModelRanking
from .plot_panel import PlotPanel
from .timeline_panel import TimelinePanel

if TYPE_CHECKING:
    from ..fit.compare import Comparison
    from ..fit.models import FitReport
    from ..fit.timeline import Timeline
    from ..sketch import Binned, Sketch


class AnalysisMixin(WorkspaceBase):
    """Fit the subject, compare it with its reference, build the timeline — off the screen's thread."""

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
        self.schedule.fit_started_at(time.monotonic(), self.ws)
        self.ws.fit_n = subj.sketch.count
        self.fit_worker(subj.sketch, self.ws.generation, subj.name)

    @work(thread=True, exclusive=True, group="fit", exit_on_error=False)
    def fit_worker(self, sketch: Sketch | Binned, generation: int, name: str) -> None:
        """``fit_sketch`` off the screen's thread (scipy takes seconds to load)."""
        result, note = workers.run_fit(sketch, self.families, name)
        self.call_from_thread(self._fit_done, result, note, generation)

    def _fit_done(self, result: FitReport | None, note: str, generation: int) -> None:
        again = self.schedule.fit_ended_at(time.monotonic())
        was_auto = self.ws.auto_model
        if self.ws.take_fit(result, note, generation):
            if note:
                self.say(note)
            ref = self.ws.reference
            if self.ws.auto_model and not was_auto and ref is not None and result is not None:
                first = result.best
                why = f"the best by {result.rank_key.upper()}"
                if first is not None and first.label != ref.name:
                    why += f" whose quantiles stay near the data's ({first.label} ranks first, far wider)"
                self.say(f"reference: model {ref.name}, {why}; 2 in Models picks another.")
            self.refresh_all()
        if again:
            self._start_fit()

    def _start_compare(self) -> None:
        key = self.ws.compare_key()
        if key is None or not self.schedule.compare.claim():
            return
        subj, ref = self.ws.dists[key[0]], self.ws.dists[key[1]]
        self.compare_worker(ref.sketch, subj.sketch, key)

    @work(thread=True, exclusive=True, group="compare", exit_on_error=False)
    def compare_worker(
        self, reference: Sketch | Binned, subject: Sketch | Binned, key: tuple[str, str]
    ) -> None:
        result, note = workers.run_compare(reference, subject, (key[1], key[0]))
        self.call_from_thread(self._compare_done, result, note, key)

    def _compare_done(self, result: Comparison | None, note: str, key: tuple[str, str]) -> None:
        again = self.schedule.compare.release()
        if self.ws.take_comparison(result, note, key):
            if note:
                self.say(note)
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

    @work(thread=True, exclusive=True, group="timeline", exit_on_error=False)
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

    # ------------------------------------------------------------------ models
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
