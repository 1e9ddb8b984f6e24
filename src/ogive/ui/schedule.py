"""When the workspace fits and compares: one of each at a time, and a followed subject not too often.

A fit of every family takes seconds to tens of seconds of a core, and the ranking of
models moves slowly next to the quantiles; a comparison takes a fraction of a second.
So a request that comes while one runs is remembered and run once afterwards (never
queued twice), a subject still being scanned is fitted when its scan ends, and a
followed subject is refitted at most every FOLLOW_FIT_S, and never sooner than
FOLLOW_FIT_DUTY times the last fit's own length (a fifth of one core at most). A subject
whose values have not changed since its last fit is not fitted again unless asked (a
scan's end asked twice, and the same seconds-long fit ran twice).
No textual here: the app asks :meth:`Scheduler.plan` and starts what it says.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .workspace import Workspace

FOLLOW_FIT_S = 30.0
FOLLOW_FIT_DUTY = 4.0
TIMELINE_LIVE_S = 5.0
"""A followed timeline is rebuilt at most this often (and never twice at once)."""


@dataclass
class OneAtATime:
    """A job kind that runs alone; a request while it runs is remembered, once."""

    busy: bool = False
    pending: bool = False

    def claim(self) -> bool:
        """True when the job may start now; otherwise it is marked to run again afterwards."""
        if self.busy:
            self.pending = True
            return False
        self.busy, self.pending = True, False
        return True

    def release(self) -> bool:
        """The job ended; True when it was asked for again meanwhile."""
        self.busy = False
        return self.pending


def fit_key(ws: Workspace) -> tuple[object, ...] | None:
    """The subject as a fit sees it: which one (the generation changes with it), and its
    values' count, total and range, which change whenever its values do."""
    subj = ws.subject_dist
    if subj is None:
        return None
    s = subj.sketch
    return (ws.generation, subj.name, s.count, s.total, s.min, s.max)


@dataclass(frozen=True)
class Plan:
    fit: bool = False
    compare: bool = False


@dataclass
class Scheduler:
    fit: OneAtATime = field(default_factory=OneAtATime)
    compare: OneAtATime = field(default_factory=OneAtATime)
    timeline: OneAtATime = field(default_factory=OneAtATime)
    fit_started: float = 0.0
    fit_free_at: float = 0.0
    """When a followed subject may be refitted next."""
    timeline_free_at: float = 0.0
    """When a followed timeline may be rebuilt next."""
    fitted: tuple[object, ...] | None = None
    """What the last fit started was of (:func:`fit_key`): the same again needs no fit."""

    def plan_timeline(self, ws: Workspace, now: float) -> bool:
        """True when the timeline should be (re)built now from the windows at hand."""
        if not ws.timeline_input:
            return False
        return not ws.timeline_live or now >= self.timeline_free_at

    def timeline_ended_at(self, now: float) -> bool:
        """Record the end of a build; True when another was asked for meanwhile."""
        self.timeline_free_at = now + TIMELINE_LIVE_S
        return self.timeline.release()

    def plan(self, ws: Workspace, now: float, *, force_fit: bool = False) -> Plan:
        """What to start for the workspace as it is; updates its notes (never its results)."""
        subj = ws.subject_dist
        if subj is not None and subj.sketch.count == 0 and subj.state == "following":
            ws.comparison = None  # a recent window that emptied: no stale ladder beside it
        if subj is None or subj.sketch.count == 0:
            return Plan()
        fit = False
        if not force_fit and fit_key(ws) == self.fitted:
            fit = False  # that fit is running or done; its result (or note) stands
        elif force_fit or subj.state not in ("scanning", "following"):
            fit = True
        elif subj.state == "following":
            fit = not self.fit.busy and now >= self.fit_free_at
        elif ws.fit is None:
            ws.fit_note = "the fit runs when the subject's scan ends"
        return Plan(fit=fit, compare=ws.compare_key() is not None)

    def fit_started_at(self, now: float, ws: Workspace) -> None:
        self.fit_started = now
        self.fitted = fit_key(ws)

    def fit_ended_at(self, now: float) -> bool:
        """Record the end of a fit; True when another was asked for meanwhile."""
        self.fit_free_at = now + max(FOLLOW_FIT_S, FOLLOW_FIT_DUTY * (now - self.fit_started))
        return self.fit.release()
