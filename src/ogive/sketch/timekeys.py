"""Names of time-window sketches: ``[GROUP@]START/DURATION`` in ISO 8601 (no I/O).

A timeline keeps one sketch per time window beside the whole, in one sketch set. The
window is written into each sketch's name as an ISO 8601 time interval in its
*start/duration* form (ISO 8601-1:2019, 5.5.4.2, e.g. ``2026-03-04T13:00:00Z/PT5M``),
so a saved set says by itself which windows it holds and how wide they are: no side
table, no change to the file format, and ``ogive show set.ogive:2026-03-04T13:00:00Z/PT5M``
names one window like any other sketch. With ``--by`` the group comes first,
``host=ck-web-01@2026-03-04T13:00:00Z/PT5M``; the whole is ``all`` (or the group's own
name). The reader writes these names and the timeline reads them back, both through
this module.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass

WHOLE = "all"
"""Name of the sketch of every window together (without ``--by``)."""

_EPOCH = dt.datetime(1970, 1, 1, tzinfo=dt.UTC)
_START = r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(?:\.\d{1,6})?Z"
_DURATION = r"P(?:\d+D)?(?:T(?:\d+H)?(?:\d+M)?(?:\d+(?:\.\d{1,6})?S)?)?"
_KEY = re.compile(rf"^(?:(?P<group>.*)@)?(?P<start>{_START})/(?P<dur>{_DURATION})$")
_DUR_PARTS = re.compile(r"^P(?:(\d+)D)?(?:T(?:(\d+)H)?(?:(\d+)M)?(?:(\d+(?:\.\d+)?)S)?)?$")


def start_text(start_us: float) -> str:
    """Epoch microseconds as ``2026-03-04T13:00:00Z`` (a fraction only when there is one)."""
    try:
        moment = _EPOCH + dt.timedelta(microseconds=round(start_us))
    except OverflowError:  # the end of a window late in year 9999 (times are read up to 9999-12-31)
        moment = (dt.datetime.max if start_us > 0 else dt.datetime.min).replace(tzinfo=dt.UTC)
    return moment.isoformat().replace("+00:00", "Z")


def duration_text(width_us: float) -> str:
    """A window width as an ISO 8601 duration: 300 s -> ``PT5M``, 1 day -> ``P1D``, 90 s -> ``PT1M30S``."""
    us = round(width_us)
    if us <= 0:
        raise ValueError(f"a window width must be positive, got {width_us!r} µs.")
    days, rest = divmod(us, 86_400_000_000)
    hours, rest = divmod(rest, 3_600_000_000)
    minutes, rest = divmod(rest, 60_000_000)
    seconds = rest / 1e6
    out = "P" + (f"{days}D" if days else "")
    clock = (f"{hours}H" if hours else "") + (f"{minutes}M" if minutes else "")
    if rest:
        clock += (f"{seconds:.6f}".rstrip("0").rstrip(".")) + "S"
    return out + ("T" + clock if clock else "")


def parse_duration(text: str) -> float | None:
    """``PT5M`` -> 300e6 microseconds; None when the text is not such a duration."""
    m = _DUR_PARTS.match(text)
    if m is None or text in ("P", "PT") or text.endswith("T"):
        return None
    d, h, mi, s = (float(x) if x else 0.0 for x in m.groups())
    us = round(((d * 24 + h) * 60 + mi) * 60e6 + s * 1e6)
    return float(us) if us > 0 else None


def window_key(start_us: float, width_us: float, group: str | None = None) -> str:
    """The sketch name of one window (of one group)."""
    key = f"{start_text(start_us)}/{duration_text(width_us)}"
    return f"{group}@{key}" if group else key


@dataclass(frozen=True)
class WindowKey:
    """A parsed window name."""

    group: str | None
    """The ``--by`` group (``host=ck-web-01``), or None for the whole stream."""
    start_us: float
    """Window start, epoch microseconds (UTC)."""
    width_us: float

    @property
    def end_us(self) -> float:
        return self.start_us + self.width_us


def parse_key(name: str) -> WindowKey | None:
    """The window a sketch name stands for, or None when the name is not a window's."""
    m = _KEY.match(name)
    if m is None:
        return None
    width = parse_duration(m["dur"])
    if width is None:
        return None
    text = m["start"][:-1]
    try:
        moment = dt.datetime.fromisoformat(text).replace(tzinfo=dt.UTC)
    except ValueError:
        return None
    start = (moment - _EPOCH) // dt.timedelta(microseconds=1)
    return WindowKey(m["group"], float(start), width)
