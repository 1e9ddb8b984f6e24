"""The workspace as data: the rows, the roles, the current results, and the rules that tie them.

Plain Python, no textual: the app shows this object, the exported report writes it and
the tests assert on it, so what is on screen, what is exported and what is tested are
one thing. Every number in it was made by the functions the CLI calls (a Sketch's
queries, ``fit_sketch``, ``compare_sketches``).

Role rules, in the order they apply:

* the subject and reference asked for on the command line win once their rows exist;
* otherwise the last row is the subject and the first the reference (``ogive view
  before.log after.log`` reads "after against before"), except that a subject named
  ``.../after/X`` is held against ``.../before/X`` when that row exists (a split by time
  and by group pairs each group with itself);
* many groups of one source (``--by``): the largest group that has a ``before`` partner is
  held against it, else the largest against the next largest (never the ``(other)`` bucket);
* a lone subject is held against its best fitted model until a second row arrives;
* a model reference belongs to the subject it was fitted to, and goes when the subject
  changes.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from ..sketch import Binned, Sketch
from ..store import source_stem
from .state import Distribution, ReferenceChoice, ScanJob

if TYPE_CHECKING:
    from ..fit.compare import Comparison
    from ..fit.models import Candidate, FitReport
    from ..fit.objective import Objective, ObjectiveCheck
    from ..fit.timeline import Timeline

KINDS: tuple[str, ...] = ("qq", "detrended", "pp", "cdf", "shift")
"""The pictures, in the order ``v`` steps through them (the kinds of ``ogive plot``)."""
KIND_NAMES: dict[str, str] = {
    "qq": "Q-Q",
    "detrended": "detrended Q-Q",
    "pp": "P-P",
    "cdf": "CDF overlay",
    "shift": "shift function",
}
LINEUPS: tuple[str, ...] = ("", "panels", "one-axis")
"""What ``m`` steps through: the subject against its reference (''), against the best
models side by side ('panels', a line-up), their deviations on one axis ('one-axis')."""
LINEUP_TOP = 3
"""Models in the workspace's line-up, as ``ogive fit --plot`` draws by default."""
AXES: tuple[str, ...] = ("auto", "log", "linear")
"""Value axes: 'auto' lets the renderer choose (log unless a value is negative, as for latencies;
zeros are drawn at the floor and counted)."""
LINEUP_WORDS = {
    "": "the subject against its reference",
    "panels": "the best models side by side",
    "one-axis": "the best models on one axis",
}
"""What the picture pane shows at each step of ``m``, in the status line's words."""

_AFTER = re.compile(r"(^|[:/])after(?=$|[:/])")


def partner(name: str) -> str | None:
    """``day:after/route=/v2`` -> ``day:before/route=/v2``: the row a split-by-time subject pairs with."""
    if not _AFTER.search(name):
        return None
    return _AFTER.sub(lambda m: f"{m.group(1)}before", name, count=1)


SPAN_PROBS = (0.001, 0.999)
"""Where a reference model's quantiles are held against the data's (the picture's axis ends)."""
SPAN_FACTOR = 10.0
"""A model whose p0.1 or p99.9 is more than this factor away from the data's would stretch the
picture's value axis by a decade or more beyond the data (common practice for a readable Q-Q)."""


def reference_model(report: FitReport, sketch: Sketch | Binned) -> Candidate | None:
    """The model a lone subject is held against: the best-ranked one (by the key the data
    supports, ``fit_sketch``'s ``auto``) that converged and whose p0.1 and p99.9 stay within
    :data:`SPAN_FACTOR` of the data's; the best-ranked one when none does.

    Chosen once, when the scan is complete: the app does not call this for a partial scan,
    and a later refit keeps the family (so the reference does not flip as data arrives).
    """
    import numpy as np

    if not report.models:
        return None
    probs = np.array(SPAN_PROBS)
    lo, hi = (float(v) for v in sketch.quantile(probs))
    for cand in report.models:
        if not cand.ok:
            continue
        try:
            m_lo, m_hi = (float(v) for v in cand.ppf(probs))
        except (ValueError, ArithmeticError):
            continue
        if lo > 0 and hi > 0 and m_lo > 0 and m_hi > 0:
            near = max(lo / m_lo, m_lo / lo, hi / m_hi, m_hi / hi) <= SPAN_FACTOR
        else:  # values around or below zero: compare on the data's own spread
            spread = max(hi - lo, 1e-300)
            near = abs(m_lo - lo) <= SPAN_FACTOR * spread and abs(m_hi - hi) <= SPAN_FACTOR * spread
        if near:
            return cand
    return report.models[0]


@dataclass
class Workspace:
    """Everything the workspace shows, as data."""

    wanted_subject: str | None = None
    """``--subject NAME``: applied once a row of that name exists."""
    wanted_reference: str | None = None
    dists: dict[str, Distribution] = field(default_factory=dict)
    """The rows, in the order files were opened (then the groups' order)."""
    jobs: list[ScanJob] = field(default_factory=list)
    subject: str | None = None
    reference: ReferenceChoice | None = None
    fit: FitReport | None = None
    """The model ranking for the subject on screen (None: none yet, see ``fit_note``)."""
    fit_note: str = ""
    fit_n: int = 0
    """Values in the subject when the fit on screen was started (a followed one grows)."""
    generation: int = 0
    """Bumped when the subject changes: a fit started for an older subject is dropped."""
    comparison: Comparison | None = None
    compare_note: str = ""
    kind: str = "qq"
    """The picture: one of :data:`KINDS`."""
    axes: str = "auto"
    """The value axes: one of :data:`AXES`."""
    lineup: str = ""
    """One of :data:`LINEUPS`: the picture is a line-up of the subject's models, or not."""
    model_row: int | None = None
    """The Models pane's highlighted row (the ranked models come first): its panel is marked."""
    auto_model: bool = False
    """The reference is the best model only because the subject was alone."""
    opened: int = 0
    """Sources opened so far (orders the rows)."""
    timeline_source: str | None = None
    """The log (or saved timeline) the Timeline pane shows: the first one opened with windows."""
    timeline_input: dict[str, Sketch | Binned] = field(default_factory=dict)
    """Its window sketches and wholes as they stand (copies, never the scan's own)."""
    timeline_live: bool = False
    """The source is being followed: the timeline is rebuilt as windows arrive."""
    timeline: Timeline | None = None
    timeline_note: str = ""
    timeline_pick: int = 0
    """The change point highlighted in the Timeline pane."""
    study_roles: tuple[str, str] | None = None
    """(subject, reference) to take once both rows exist: a change point chosen for study."""
    objectives: list[Objective] = field(default_factory=list)
    """``view --objective``: read on every row (Distributions) and on the pair in the ladder."""
    objective_memo: dict[tuple[str, str], tuple[int, ObjectiveCheck | None]] = field(default_factory=dict)
    """(n, check) by (row, objective): a row is read again only when it grew."""
    ascii_only: bool = False
    """Draw with ASCII only (a terminal or locale without Unicode, or ``view --ascii``)."""

    # ------------------------------------------------------------------ queries
    def objective_checks(self, name: str) -> list[ObjectiveCheck | None] | None:
        """Each objective read on row ``name`` (None for one whose unit does not fit the row);
        None while the statistics library is not loaded yet (see ``statistics_loaded``)."""
        from ..fit.objective import check_objective, statistics_loaded

        d = self.dists.get(name)
        if d is None or not self.objectives or not statistics_loaded():
            return None
        out: list[ObjectiveCheck | None] = []
        for o in self.objectives:
            n, check = self.objective_memo.get((name, o.text), (-1, None))
            if n != d.sketch.count:
                try:
                    check = check_objective(name, d.sketch, o)
                except ValueError:  # a threshold in ms against a row in bytes: no reading
                    check = None
                self.objective_memo[(name, o.text)] = (d.sketch.count, check)
            out.append(check)
        return out

    def all_objective_checks(self) -> tuple[ObjectiveCheck, ...]:
        """Every row's readings of every objective (the exported report), where there are any."""
        rows = [self.objective_checks(name) or [] for name in self.dists]
        return tuple(c for row in rows for c in row if c is not None)

    @property
    def subject_dist(self) -> Distribution | None:
        return self.dists.get(self.subject or "")

    @property
    def reference_dist(self) -> Distribution | None:
        """The reference's row when the reference is a sketch."""
        ref = self.reference
        return self.dists.get(ref.name) if ref is not None and ref.kind == "sketch" else None

    @property
    def scanning(self) -> bool:
        return any(not j.done for j in self.jobs)

    @property
    def following(self) -> bool:
        return any(j.follow and not j.done for j in self.jobs)

    @property
    def log_axes(self) -> bool | None:
        """What the renderer is asked for: None lets it choose."""
        return {"auto": None, "log": True, "linear": False}[self.axes]

    def lineup_models(self) -> tuple[list[Candidate], int | None]:
        """The best :data:`LINEUP_TOP` models — the last of them giving its place to the
        highlighted model when that one ranks lower, so the line-up keeps its size (and
        its layout) — and the index of the highlighted model's panel (None: none)."""
        ranked = list(self.fit.ranked) if self.fit is not None else []
        row = self.model_row
        if row is None or not 0 <= row < len(ranked):
            return ranked[:LINEUP_TOP], None
        if row >= LINEUP_TOP:
            return [*ranked[: LINEUP_TOP - 1], ranked[row]], LINEUP_TOP - 1
        return ranked[:LINEUP_TOP], row

    def compare_key(self) -> tuple[str, str] | None:
        """(subject, reference) when a comparison of two sketches with values is wanted."""
        subj, ref = self.subject_dist, self.reference_dist
        if subj is None or ref is None or ref.sketch.count == 0 or subj.sketch.count == 0:
            return None
        return subj.name, ref.name

    def finished(self) -> tuple[dict[str, Sketch | Binned], list[str]]:
        """Sketches that may be written now (followed ones as they stand), and the rows still scanning."""
        ready = {n: d.sketch for n, d in self.dists.items() if d.state != "scanning"}
        return ready, [n for n, d in self.dists.items() if d.state == "scanning"]

    # ------------------------------------------------------------------ rows
    def next_order(self) -> int:
        self.opened += 1
        return self.opened

    def add_rows(self, rows: list[Distribution]) -> None:
        for d in rows:
            self.dists[d.name] = d
        self.dists = dict(sorted(self.dists.items(), key=lambda item: item[1].seq))
        wanted = self.study_roles
        if wanted is not None and all(n in self.dists for n in wanted):
            self.study_roles = None
            self.set_subject(wanted[0])
            self.set_reference_sketch(wanted[1])
        self.auto_roles()

    # ------------------------------------------------------------------ the timeline
    def take_timeline_input(self, source: str, sketches: dict[str, Sketch | Binned], *, live: bool) -> bool:
        """Window sketches (and wholes) of a source; False when the pane shows another one."""
        if self.timeline_source not in (None, source):
            return False
        self.timeline_source, self.timeline_input, self.timeline_live = source, sketches, live
        return True

    def take_timeline(self, result: Timeline | None, note: str) -> None:
        self.timeline, self.timeline_note = result, note
        count = len(result.streams[0].changes) if result is not None else 0
        self.timeline_pick = min(self.timeline_pick, max(count - 1, 0))

    def study(self, subject: str, reference: str) -> None:
        """Make ``subject`` the subject and ``reference`` the reference once both rows exist."""
        self.study_roles = (subject, reference)
        self.add_rows([])

    def take_scan(
        self, job: ScanJob, sketches: dict[str, Sketch | Binned], *, state: str, note: str, window: str | None
    ) -> None:
        """The sketches a scan or follow delivered, each in the row it has had since its first tick.

        ``window``: the name of a follow's recent window, whose row goes last so that it
        is the subject, held against all-time.
        """
        rows = []
        for group, sketch in sketches.items():
            name = self._name_for(job, group, len(sketches))
            order = (job.seq, 1 << 30 if group == window else list(job.names).index(group))
            rows.append(Distribution(name, sketch, job.source, state=state, note=note, job=job, seq=order))
        self.add_rows(rows)

    def _name_for(self, job: ScanJob, group: str, groups: int) -> str:
        if group not in job.names:
            # A follow with a recent window always has two rows, even before 'all' has values.
            # A scan that splits (by groups, at a moment) names each row by its sketch even
            # while one alone has values: a log in time order brings 'before' first, and a
            # row named after the whole file kept that name beside 'after' (names are stable).
            # (Time windows are no rows: the timeline takes them, the row is the whole.)
            splits = job.options.by is not None or job.options.split_at is not None
            alone = groups == 1 and job.recent is None and not splits
            stem = source_stem(job.source)
            job.names[group] = self._unique(stem if alone else f"{stem}:{group}", job)
        return job.names[group]

    def _unique(self, base: str, job: ScanJob) -> str:
        """Names stay stable across a scan's ticks and distinct across files with the same stem."""
        taken = {n for n, d in self.dists.items() if d.job is not job}
        name, k = base, 2
        while name in taken:
            name, k = f"{base}#{k}", k + 1
        return name

    def fail_job(self, job: ScanJob, note: str) -> None:
        """A scan failed: the rows it had filled keep what they hold, marked failed with the reason."""
        for d in self.dists.values():
            if d.job is job:
                d.state, d.note = "failed", note

    # ------------------------------------------------------------------ roles
    def auto_roles(self) -> None:
        """Apply the role rules of the module text to the rows as they are now."""
        names = list(self.dists)
        if self.auto_model and len(names) > 1:
            self.reference, self.auto_model = None, False  # a sketch to compare with has arrived
        largest = self._largest_pair() if self.wanted_subject is None else None
        if self.subject is None or self.subject not in self.dists:
            if self.wanted_subject in self.dists:
                self.subject = self.wanted_subject
            elif largest is not None:
                self.subject = largest[0]
                if self.reference is None and self.wanted_reference is None:
                    self.reference = ReferenceChoice("sketch", largest[1])
            elif self.wanted_subject is None and names:
                self.subject = names[-1]
        if (
            self.subject is not None
            and self.wanted_subject is None
            and len(names) == 2
            and self.reference is None
        ):
            self.subject = names[-1]
        if self.reference is not None:
            return
        if self.wanted_reference in self.dists and self.wanted_reference != self.subject:
            self.reference = ReferenceChoice("sketch", self.wanted_reference)
        elif self.wanted_reference is None:
            twin = partner(self.subject or "")
            others = [n for n in names if n != self.subject]
            if twin in self.dists:
                self.reference = ReferenceChoice("sketch", twin)
            elif others:
                self.reference = ReferenceChoice("sketch", others[0])

    def _largest_pair(self) -> tuple[str, str] | None:
        """For many groups of one source (``--by``): the largest group paired with its ``before``
        partner, else with the next largest; an overflow bucket (``(other)``) is never chosen.
        None when the rows are not many groups of one source (then the rules above apply)."""
        rows = list(self.dists.values())
        if len(rows) <= 2 or len({d.origin for d in rows}) != 1:
            return None
        sized = sorted((d for d in rows if "(other)" not in d.name), key=lambda d: -d.sketch.count)
        for d in sized:
            other = partner(d.name)
            if other in self.dists:
                return d.name, other
        return (sized[0].name, sized[1].name) if len(sized) >= 2 else None

    def set_subject(self, name: str) -> None:
        if self.reference is not None and self.reference.kind == "sketch" and self.reference.name == name:
            self.reference = ReferenceChoice("sketch", self.subject) if self.subject else None
        if self.reference is not None and self.reference.kind == "model":
            self.reference = None  # a model belongs to the subject it was fitted to
        self.subject = name
        self.generation += 1
        self.fit = None
        self.comparison = None

    def set_reference_sketch(self, name: str) -> str | None:
        """Make a row the reference; returns why not, when it cannot be."""
        if name == self.subject:
            return "the reference must differ from the subject; pick another row, or press 1 first."
        self.reference = ReferenceChoice("sketch", name)
        self.auto_model = False
        self.comparison = None
        return None

    def set_reference_model(self, index: int) -> bool:
        """Make the fit's ``index``-th ranked model the reference (Q-Q/P-P/CDF against it)."""
        models = self.fit.ranked if self.fit is not None else ()
        if not 0 <= index < len(models):
            return False
        self.reference = ReferenceChoice("model", models[index].label, models[index])
        self.auto_model = False
        self.comparison = None
        return True

    # ------------------------------------------------------------------ results
    def take_fit(self, result: FitReport | None, note: str, generation: int) -> bool:
        """A finished fit; False when it was for an earlier subject (then it is dropped)."""
        if generation != self.generation:
            return False
        self.fit, self.fit_note = result, note
        ref = self.reference
        if ref is not None and ref.kind == "model" and result is not None:
            # keep the same family as reference, now refitted on more data
            for m in result.ranked:
                if m.label == ref.name:
                    self.reference = ReferenceChoice("model", ref.name, m)
        alone = len(self.dists) == 1 and not self.scanning
        subj = self.subject_dist
        if self.reference is None and result is not None and alone and subj is not None:
            chosen = reference_model(result, subj.sketch)
            if chosen is not None:
                self.auto_model = True
                self.reference = ReferenceChoice("model", chosen.label, chosen)
        return True

    def take_comparison(self, result: Comparison | None, note: str, key: tuple[str, str]) -> bool:
        """A finished comparison; False when the roles changed while it ran (then it is dropped)."""
        ref = self.reference
        if ref is None or key != (self.subject, ref.name):
            return False
        self.comparison, self.compare_note = result, note
        return True
