"""KEY=VALUE logs (logfmt: ``ts=... level=info took=12ms``) give their time without
--time-field when one time key (ts, time, timestamp, @timestamp) holds a readable time
in most lines, as NDJSON's @timestamp does.

References: ``datetime.fromisoformat`` (ISO 8601 / RFC 3339) and
``datetime.fromtimestamp`` for the times, ``numpy.quantile`` for the values.
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from ogive.cli import main

START = dt.datetime(2026, 3, 4, 10, 0, 0, tzinfo=dt.UTC)


def _scan(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, dict[str, Any], str]:
    code = main(["scan", *argv, "--json"])
    out, err = capsys.readouterr()
    return code, json.loads(out) if out.strip() else {}, err


def _z(t: dt.datetime) -> str:
    return t.isoformat().replace("+00:00", "Z")


def _logfmt(path: Path, n: int, stamp: Any, seed: int = 1) -> tuple[list[dt.datetime], np.ndarray]:
    rng = np.random.default_rng(seed)
    ms = np.round(rng.lognormal(2.5, 0.7, n), 3)
    when = [START + dt.timedelta(milliseconds=250 * i) for i in range(n)]
    path.write_text(
        "".join(f"{stamp(t)} level=info msg=done took={m}ms\n" for t, m in zip(when, ms, strict=True))
    )
    return when, ms


@pytest.mark.parametrize(
    ("name", "stamp"),
    [
        ("rfc3339", lambda t: f"ts={t.isoformat(timespec='milliseconds').replace('+00:00', 'Z')}"),
        ("quoted with a space", lambda t: f'time="{t:%Y-%m-%d %H:%M:%S.%f}"'),
        ("epoch seconds", lambda t: f"timestamp={t.timestamp():.3f}"),
    ],
)
def test_the_time_key_gives_the_time(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], name: str, stamp: Any
) -> None:
    when, ms = _logfmt(tmp_path / "app.log", 400, stamp)
    code, doc, err = _scan(capsys, str(tmp_path / "app.log"))
    assert code == 0, err
    s = doc["sketches"]["all"]
    assert s["n"] == ms.size and not s["skipped"]
    np.testing.assert_allclose(s["p90"], np.quantile(ms, 0.9), rtol=1e-9)
    assert dt.datetime.fromisoformat(s["time_first"]) == when[0]
    assert dt.datetime.fromisoformat(s["time_last"]) == when[-1]


def test_split_at_needs_no_time_field(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    when, ms = _logfmt(tmp_path / "app.log", 600, lambda t: f"ts={_z(t)}", seed=2)
    cut = START + dt.timedelta(seconds=75)
    code, doc, err = _scan(capsys, str(tmp_path / "app.log"), "--split-at", _z(cut))
    assert code == 0, err
    before = np.array([m for t, m in zip(when, ms, strict=True) if t < cut])
    after = np.array([m for t, m in zip(when, ms, strict=True) if t >= cut])
    assert doc["sketches"]["before"]["n"] == before.size == 300
    assert doc["sketches"]["after"]["n"] == after.size
    np.testing.assert_allclose(doc["sketches"]["after"]["p50"], np.quantile(after, 0.5), rtol=1e-9)


def test_a_duration_named_time_is_no_moment(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """``time=12ms`` is how long, not when: neither the value (took= is) nor the time."""
    path = tmp_path / "app.log"
    path.write_text("".join(f"level=info time={i}ms took={i + 1}ms\n" for i in range(50)))
    code, doc, err = _scan(capsys, str(path))
    assert code == 0, err
    s = doc["sketches"]["all"]
    assert s["n"] == 50 and s["p50"] == np.quantile(np.arange(1, 51), 0.5)
    assert s.get("time_first") is None


def test_a_key_in_few_lines_or_two_keys_give_no_time(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """Under 80 % of lines, or two keys that both hold times: no guess, and no row is
    skipped for a time it was never asked for; --time-field chooses."""
    few = tmp_path / "few.log"
    few.write_text("".join(f"{'ts=2026-03-04T10:00:00Z ' if i % 2 else ''}took={i}ms\n" for i in range(40)))
    code, doc, err = _scan(capsys, str(few))
    assert code == 0, err
    assert doc["sketches"]["all"]["n"] == 40 and doc["sketches"]["all"].get("time_first") is None
    two = tmp_path / "two.log"
    two.write_text(
        "".join(
            f"ts=2026-03-04T10:00:{i:02d}Z time=2026-03-04T11:00:{i:02d}Z took={i}ms\n" for i in range(40)
        )
    )
    code, doc, err = _scan(capsys, str(two))
    assert code == 0, err
    assert doc["sketches"]["all"].get("time_first") is None
    code, doc, err = _scan(capsys, str(two), "--time-field", "time")
    assert code == 0, err
    assert doc["sketches"]["all"]["time_first"] == "2026-03-04T11:00:00Z"
