"""Time stamps (read/times.py) against Python's ``datetime`` as the outside reference.

Forms and rules: ISO 8601 / RFC 3339 (section 5.6 grammar, 5.7 leap seconds), the
Common Log Format time (Apache mod_log_config ``%t``), RFC 3164 section 4.1.2 (no year,
no zone), epoch numbers. The "latest year not after now" rule for RFC 3164 is ours (the
RFC leaves the year to the reader); the reference below implements it with datetime.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import polars as pl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ogive.read import times

EPOCH = dt.datetime(1970, 1, 1, tzinfo=dt.UTC)


def us_of(moment: dt.datetime) -> float:
    """Reference: epoch microseconds from datetime arithmetic (exact integers)."""
    return float((moment - EPOCH) // dt.timedelta(microseconds=1))


def read(texts: list[str | None], form: str, **kw: object) -> np.ndarray:
    return times.read_times(pl.Series(texts, dtype=pl.String), form, **kw).us  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("text", "moment"),
    [
        ("2026-03-04T10:00:00Z", dt.datetime(2026, 3, 4, 10, tzinfo=dt.UTC)),
        ("2026-03-04t10:00:00z", dt.datetime(2026, 3, 4, 10, tzinfo=dt.UTC)),
        ("2026-03-04 10:00:00", dt.datetime(2026, 3, 4, 10, tzinfo=dt.UTC)),  # no zone: UTC
        ("2026-03-04T10:00:00.25Z", dt.datetime(2026, 3, 4, 10, 0, 0, 250000, tzinfo=dt.UTC)),
        ("2026-03-04 10:00:00,25", dt.datetime(2026, 3, 4, 10, 0, 0, 250000, tzinfo=dt.UTC)),
        ("2026-03-04T10:00:00.123456789Z", dt.datetime(2026, 3, 4, 10, 0, 0, 123456, tzinfo=dt.UTC)),
        ("2026-03-04T10:00:00+05:30", dt.datetime(2026, 3, 4, 4, 30, tzinfo=dt.UTC)),
        ("2026-03-04T10:00:00-0700", dt.datetime(2026, 3, 4, 17, 0, tzinfo=dt.UTC)),
        ("2026-03-04T10:00:00+01", dt.datetime(2026, 3, 4, 9, 0, tzinfo=dt.UTC)),
        ("2026-03-04T10:00", dt.datetime(2026, 3, 4, 10, 0, tzinfo=dt.UTC)),
        ("2026-03-04", dt.datetime(2026, 3, 4, tzinfo=dt.UTC)),
        ("2024-02-29T00:00:00Z", dt.datetime(2024, 2, 29, tzinfo=dt.UTC)),
        # RFC 3339 5.7: 23:59:60 is a leap second; POSIX time reads it as the next midnight.
        ("2016-12-31T23:59:60Z", dt.datetime(2017, 1, 1, tzinfo=dt.UTC)),
        ("2016-12-31T23:59:60.5Z", dt.datetime(2017, 1, 1, 0, 0, 0, 500000, tzinfo=dt.UTC)),
    ],
)
def test_iso_forms(text: str, moment: dt.datetime) -> None:
    assert times.detect_format(pl.Series([text])) == "iso"
    # Alone (our parser) and behind an ordinary first row (polars' fast path, then ours).
    assert read([text], "iso")[0] == us_of(moment)
    assert read(["2026-03-04T10:00:00Z", text], "iso")[1] == us_of(moment)


@pytest.mark.parametrize(
    "text",
    [
        "2026-02-29T00:00:00Z",  # not a leap year
        "2026-13-01T00:00:00Z",
        "2026-04-31T00:00:00Z",
        "2026-03-04T24:00:00Z",
        "2026-03-04T10:61:00Z",
        "2026-03-04T10:00:61Z",
        "0000-01-01T00:00:00Z",  # year 0: polars raises on it even when not strict
        "2026-03-04T10:00:00+25:00",
        "yesterday",
        "",
    ],
)
def test_impossible_moments_are_nan_never_an_error(text: str) -> None:
    assert np.isnan(read([text], "iso")[0])
    assert np.isnan(read(["2026-03-04T10:00:00Z", text], "iso")[1])


def test_clf() -> None:
    got = read(
        ["[10/Oct/2026:13:55:36 -0700]", "10/oct/2026:13:55:36 +0000", "31/Foo/2026:00:00:00 +0000"], "clf"
    )
    assert got[0] == us_of(dt.datetime(2026, 10, 10, 20, 55, 36, tzinfo=dt.UTC))
    assert got[1] == us_of(dt.datetime(2026, 10, 10, 13, 55, 36, tzinfo=dt.UTC))
    assert np.isnan(got[2])


def _rfc3164_reference(month: int, day: int, hms: tuple[int, int, int], now: dt.datetime) -> dt.datetime:
    """The latest year that does not put the moment more than a day after ``now``."""
    for year in range(now.year, now.year - 8, -1):
        try:
            cand = dt.datetime(year, month, day, *hms, tzinfo=dt.UTC)
        except ValueError:
            continue
        if cand <= now + dt.timedelta(days=1):
            return cand
    raise AssertionError("no year fits")


@pytest.mark.parametrize(
    "now", [dt.datetime(2026, 3, 10, tzinfo=dt.UTC), dt.datetime(2027, 1, 2, 6, tzinfo=dt.UTC)]
)
def test_rfc3164_year_rule(now: dt.datetime) -> None:
    texts = ["Mar  4 13:00:01", "Dec 31 23:59:59", "Feb 29 00:00:00", "Mar 11 00:00:01", "Jan  2 00:00:00"]
    want = [
        _rfc3164_reference(3, 4, (13, 0, 1), now),
        _rfc3164_reference(12, 31, (23, 59, 59), now),
        _rfc3164_reference(2, 29, (0, 0, 0), now),
        _rfc3164_reference(3, 11, (0, 0, 1), now),
        _rfc3164_reference(1, 2, (0, 0, 0), now),
    ]
    col = times.read_times(pl.Series(texts), "rfc3164", now_us=us_of(now))
    assert col.us.tolist() == [us_of(w) for w in want]
    assert set(col.years) == {w.year for w in want}
    assert times.detect_format(pl.Series(texts)) == "rfc3164"


def test_epoch_units_by_magnitude_are_counted() -> None:
    secs = 1772618400
    texts = [str(secs), str(secs * 1000), str(secs * 10**6), str(secs * 10**9), "1e25", "-", None]
    assert times.detect_format(pl.Series(texts)) == "epoch_s"
    col = times.read_times(pl.Series(texts), "epoch_s", by_magnitude=True)
    assert col.us[:4].tolist() == [secs * 1e6] * 4
    assert np.isnan(col.us[4:]).all()  # beyond any epoch unit, not a number, missing
    assert col.other_unit == 3
    # Given (not detected), one unit holds for all and nothing is reinterpreted.
    given_ms = times.read_times(pl.Series(texts[:2]), "epoch_ms")
    assert given_ms.us[1] == secs * 1e6 and given_ms.other_unit == 0


def test_detection_takes_the_usual_epoch_unit_of_the_sample() -> None:
    ms = [str(1772618400000 + i) for i in range(10)]
    assert times.detect_format(pl.Series(["1772618400", *ms])) == "epoch_ms"


def test_out_of_range_epochs_are_nan() -> None:
    # 1e19 ns is year 2286 (fine); 1e21 is beyond every epoch unit; 1e13 s is year 318857.
    got = read(["1e19", "1e21", "-1e21", "nan", "inf"], "epoch_s", by_magnitude=True)
    assert np.isnan(read(["1e13"], "epoch_s")[0])
    assert np.isfinite(got[0]) and np.isnan(got[1:]).all()


@settings(max_examples=200, deadline=None)
@given(
    moment=st.datetimes(min_value=dt.datetime(1, 1, 2), max_value=dt.datetime(9999, 12, 30)),
    offset_min=st.integers(-14 * 60, 14 * 60),
    form=st.sampled_from(["T", " ", "comma", "basic-offset", "naive"]),
)
def test_iso_round_trip(moment: dt.datetime, offset_min: int, form: str) -> None:
    """Any datetime written in an ISO variant reads back as datetime says (microseconds)."""
    zone = dt.timezone(dt.timedelta(minutes=offset_min))
    local = moment.replace(tzinfo=zone)
    text = f"{local.year:04d}" + local.strftime("-%m-%dT%H:%M:%S") + f".{local.microsecond:06d}"
    sign = "-" if offset_min < 0 else "+"
    hh, mm = divmod(abs(offset_min), 60)
    if form == " ":
        text = text.replace("T", " ") + f"{sign}{hh:02d}:{mm:02d}"
    elif form == "comma":
        text = text.replace(".", ",") + f"{sign}{hh:02d}:{mm:02d}"
    elif form == "basic-offset":
        text += f"{sign}{hh:02d}{mm:02d}"
    elif form == "naive":
        local = moment.replace(tzinfo=dt.UTC)
    else:
        text += f"{sign}{hh:02d}:{mm:02d}"
    assert read([text], "iso")[0] == us_of(local)


@settings(max_examples=100, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.datetimes(min_value=dt.datetime(1970, 1, 2), max_value=dt.datetime(2200, 12, 30)),
            st.integers(-14 * 60, 14 * 60),
            st.sampled_from(["Z", "offset", "naive", "fraction Z", "fraction offset", "space"]),
        ),
        min_size=1,
        max_size=30,
    )
)
def test_a_batch_of_mixed_iso_forms_reads_as_datetime_says(rows: list[tuple[dt.datetime, int, str]]) -> None:
    """One batch whose first row fixes polars' format (with or without a fraction, a zone)
    and whose later rows differ: each row still reads as ``datetime`` says."""
    texts, want = [], []
    for moment, offset_min, form in rows:
        zone = (
            dt.UTC
            if form in ("Z", "naive", "fraction Z", "space")
            else dt.timezone(dt.timedelta(minutes=offset_min))
        )
        local = moment.replace(tzinfo=zone, microsecond=moment.microsecond if "fraction" in form else 0)
        text = f"{local.year:04d}" + local.strftime("-%m-%dT%H:%M:%S")
        if "fraction" in form:
            text += f".{local.microsecond:06d}"
        if form == "space":
            text = text.replace("T", " ") + "Z"
        elif "offset" in form:
            sign, (hh, mm) = ("-" if offset_min < 0 else "+"), divmod(abs(offset_min), 60)
            text += f"{sign}{hh:02d}:{mm:02d}"
        elif form != "naive":
            text += "Z"
        texts.append(text)
        want.append(us_of(local))
    assert read(list(texts), "iso").tolist() == want
