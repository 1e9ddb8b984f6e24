"""Logs whose records name their time give it without --time-field: KEY=VALUE logs
(logfmt: ``ts=... level=info took=12ms``) and NDJSON from common loggers and container
runtimes (``"time"``, ``"ts"``), when one such key holds a moment of this century in most
records, as NDJSON's ECS ``@timestamp`` always did.

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


@pytest.mark.parametrize("unit", ["ms", ""])
def test_a_duration_named_time_is_no_moment(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], unit: str
) -> None:
    """``time=12ms`` is how long, not when; ``time=12`` would read as 12 s after 1970,
    no moment of this century: neither is the time (nor the value: took= is)."""
    path = tmp_path / "app.log"
    path.write_text("".join(f"level=info time={i}{unit} took={i + 1}ms\n" for i in range(50)))
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


def _ndjson(path: Path, docs: list[dict[str, Any]]) -> Path:
    path.write_text("".join(json.dumps(d) + "\n" for d in docs))
    return path


@pytest.mark.parametrize(
    ("name", "stamp", "field"),
    [
        ("epoch ms (pino)", lambda t: {"time": int(t.timestamp() * 1000)}, "responseTime"),
        ("epoch s, fraction (zap)", lambda t: {"ts": t.timestamp()}, "latency"),
        ("RFC 3339 (bunyan, logrus)", lambda t: {"time": _z(t)}, "latency"),
    ],
)
def test_json_loggers_time_keys(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], name: str, stamp: Any, field: str
) -> None:
    rng = np.random.default_rng(3)
    ms = np.round(rng.lognormal(2.0, 0.6, 300), 2)
    when = [START + dt.timedelta(milliseconds=500 * i) for i in range(300)]
    docs = [{"level": 30, **stamp(t), field: float(m), "msg": "done"} for t, m in zip(when, ms, strict=True)]
    code, doc, err = _scan(capsys, str(_ndjson(tmp_path / "app.ndjson", docs)), "--field", field)
    assert code == 0, err
    s = doc["sketches"]["all"]
    assert s["n"] == 300 and not s["skipped"]
    np.testing.assert_allclose(s["p99"], np.quantile(ms, 0.99), rtol=1e-9)
    assert dt.datetime.fromisoformat(s["time_first"]) == when[0]
    assert dt.datetime.fromisoformat(s["time_last"]) == when[-1]


def test_a_container_runtime_log_gives_its_time(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """A container runtime's JSON log: the printed line in ``log``, RFC 3339 with
    nanoseconds in ``time`` (read to the microsecond)."""
    docs = [
        {
            "log": f"GET /x dur={10 + i}ms\n",
            "stream": "stdout",
            "time": f"2026-03-04T10:00:{i:02d}.123456789Z",
        }
        for i in range(40)
    ]
    code, doc, err = _scan(capsys, str(_ndjson(tmp_path / "c.log", docs)))
    assert code == 0, err
    s = doc["sketches"]["all"]
    assert s["n"] == 40 and s["p50"] == np.quantile(np.arange(10, 50), 0.5)
    assert s["time_first"] == "2026-03-04T10:00:00.123456Z"
    assert s["time_last"] == "2026-03-04T10:00:39.123456Z"


def test_json_keys_that_are_no_moment_or_two_keys(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """``"time": 12.5`` (how long a request took) is no moment; asked for as the value it
    is the value. Two keys holding moments: no guess."""
    durations = _ndjson(tmp_path / "d.ndjson", [{"path": "/a", "time": 12.5 + i} for i in range(30)])
    code, doc, err = _scan(capsys, str(durations), "--field", "time")
    assert code == 0, err
    s = doc["sketches"]["all"]
    assert s["n"] == 30 and s.get("time_first") is None
    two = _ndjson(
        tmp_path / "two.ndjson",
        [{"ts": 1_772_618_400 + i, "time": _z(START), "ms": i} for i in range(30)],
    )
    code, doc, err = _scan(capsys, str(two), "--field", "ms")
    assert code == 0, err
    assert doc["sketches"]["all"].get("time_first") is None
