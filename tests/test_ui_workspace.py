"""The workspace model without a screen: role rules, the pairing of split groups, pacing, the headline."""

from __future__ import annotations

import numpy as np

from ogive.sketch import Sketch
from ogive.ui.schedule import FOLLOW_FIT_DUTY, FOLLOW_FIT_S, OneAtATime, Scheduler
from ogive.ui.state import Distribution
from ogive.ui.status_line import headline
from ogive.ui.workspace import Workspace, partner


def _row(name: str, order: int, state: str = "ready") -> Distribution:
    s = Sketch("ms")
    s.add(np.arange(1.0, 101.0))
    return Distribution(name, s, f"{name}.log", state=state, seq=(1, order))


def test_partner_pairs_after_with_before() -> None:
    assert partner("day:after/route=/v2") == "day:before/route=/v2"
    assert partner("after") == "before"
    assert partner("aftermath:all") is None
    assert partner("day:before/route=/after") == "day:before/route=/before"  # only a whole segment


def test_split_groups_pair_before_x_with_after_x() -> None:
    """Regression (issue 15): the default pair was before/route=A against before/route=B."""
    ws = Workspace()
    names = ["day:before/route=A", "day:before/route=B", "day:after/route=A", "day:after/route=B"]
    ws.add_rows([_row(n, i) for i, n in enumerate(names)])
    assert ws.subject == "day:after/route=B"
    assert ws.reference is not None and ws.reference.name == "day:before/route=B"


def test_two_files_last_is_subject_first_is_reference() -> None:
    ws = Workspace()
    ws.add_rows([_row("before", 0)])
    ws.add_rows([_row("after", 1)])
    assert (ws.subject, ws.reference.name if ws.reference else None) == ("after", "before")


def test_roles_asked_for_win_and_the_same_row_is_refused() -> None:
    ws = Workspace(wanted_subject="b", wanted_reference="c")
    ws.add_rows([_row(n, i) for i, n in enumerate("abc")])
    assert (ws.subject, ws.reference.name if ws.reference else None) == ("b", "c")
    assert ws.set_reference_sketch("b") is not None
    ws.set_subject("c")  # the reference becomes the old subject
    assert (ws.subject, ws.reference.name if ws.reference else None) == ("c", "b")


def test_one_at_a_time_remembers_one_request() -> None:
    run = OneAtATime()
    assert run.claim() and not run.claim() and not run.claim()
    assert run.release() is True  # asked again while it ran: run once more
    assert run.claim() and run.release() is False


def test_a_followed_subject_is_refitted_at_its_pace() -> None:
    ws = Workspace()
    ws.add_rows([_row("live", 0, state="following")])
    sched = Scheduler()
    assert sched.plan(ws, 100.0).fit  # nothing fitted yet
    sched.fit.claim()
    sched.fit_started_at(100.0, ws)
    sched.fit_ended_at(110.0)  # a 10 s fit
    ws.dists["live"].sketch.add(np.array([101.0]))  # the followed file grew
    wait = max(FOLLOW_FIT_S, FOLLOW_FIT_DUTY * 10.0)
    assert not sched.plan(ws, 110.0 + wait - 1).fit
    assert sched.plan(ws, 110.0 + wait).fit


def test_values_fitted_once_are_not_fitted_again_unless_asked() -> None:
    """A scan's end asked for a fit twice (its rows taken, then its end told): the second
    request, while the first fit ran, made the same seconds-long fit run again."""
    ws = Workspace()
    ws.add_rows([_row("a", 0), _row("b", 1)])
    sched = Scheduler()
    assert sched.plan(ws, 0.0).fit and sched.fit.claim()
    sched.fit_started_at(0.0, ws)
    assert not sched.plan(ws, 1.0).fit  # the same values, the fit running
    assert not sched.fit.release()  # and no second run was queued behind it
    assert not sched.plan(ws, 2.0).fit  # nor once it is done
    assert sched.plan(ws, 3.0, force_fit=True).fit  # unless asked for
    ws.dists[ws.subject or ""].sketch.add(np.array([7.0]))
    assert sched.plan(ws, 4.0).fit  # new values: a new fit
    ws.set_subject("b" if ws.subject == "a" else "a")
    assert sched.plan(ws, 5.0).fit  # another subject (a new generation)


def test_headline_keeps_the_end_of_both_names() -> None:
    subject, reference = (
        "checkout-day:after/route=/api/shipping/quote",
        "checkout-day:before/route=/api/shipping/quote",
    )
    text = headline(subject, reference, 78)
    assert len(text) <= 78
    s_part, r_part = text.split(" · ")
    assert s_part.endswith("/api/shipping/quote") or s_part.endswith("quote")
    assert r_part.endswith("quote") and "R " in r_part
    assert headline("after", "before", 78) == "subject: after · reference: before"


def _sketch(n: int) -> Sketch:
    s = Sketch("ms")
    s.add(np.arange(1.0, n + 1.0))
    return s


def test_a_split_scan_names_its_first_half_before_the_second_arrives() -> None:
    """A log in time order brings 'before' alone on the first ticks. Named after the whole
    file then, the row kept that name (names are stable across ticks) beside 'after', and
    the reference read as the whole file. Same for groups arriving one by one."""
    from ogive.read import ScanOptions
    from ogive.ui.state import ScanJob

    for options, first, second in (
        (ScanOptions(split_at="2026-11-30T12:00:00Z"), "before", "after"),
        (ScanOptions(by="host"), "host=a", "host=b"),
    ):
        ws = Workspace()
        job = ScanJob("/var/log/web.log", options)
        ws.take_scan(job, {first: _sketch(10)}, state="scanning", note="", window=None)
        ws.take_scan(job, {first: _sketch(20), second: _sketch(5)}, state="ready", note="", window=None)
        assert list(ws.dists) == [f"web:{first}", f"web:{second}"]
    ws = Workspace()  # one sketch and no split: the row is the file
    job = ScanJob("/var/log/web.log", ScanOptions())
    ws.take_scan(job, {"all": _sketch(10)}, state="ready", note="", window=None)
    assert list(ws.dists) == ["web"]
