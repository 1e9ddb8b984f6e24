"""Access logs that go on after the combined format: the Kubernetes ingress controller's
(ingress-nginx) default line, and lines whose extra fields no rule can tell apart.

The ingress-nginx default ``log-format-upstream`` (its documentation, from memory):
``$remote_addr - $remote_user [$time_local] "$request" $status $body_bytes_sent
"$http_referer" "$http_user_agent" $request_length $request_time [$proxy_upstream_name]
[$proxy_alternative_upstream_name] $upstream_addr $upstream_response_length
$upstream_response_time $upstream_status $req_id``; nginx writes ``$request_time`` in
seconds with millisecond resolution and ``-`` for a value it does not have.
References: ``datetime.strptime`` for the time, ``numpy.quantile`` for the values.
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from ogive.cli import main


def _scan(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, dict[str, Any], str]:
    code = main(["scan", *argv, "--json"])
    out, err = capsys.readouterr()
    return code, json.loads(out) if out.strip() else {}, err


def _ingress(path: Path, n: int = 400) -> list[dict[str, Any]]:
    rng = np.random.default_rng(8)
    rows = []
    start = dt.datetime(2026, 3, 4, 10, 0, 0, tzinfo=dt.UTC)
    with path.open("w") as fh:
        for i in range(n):
            t = start + dt.timedelta(seconds=i)
            rt = round(float(rng.lognormal(-4.0, 0.8)), 3)
            upstream = ("default-items-80", "default-cart-80")[i % 2]
            if i % 50 == 7:  # a retry: one address and one time per try
                addr, urt, ust = "10.1.1.1:8080, 10.1.1.2:8080", f"{rt / 2:.3f}, {rt / 2:.3f}", "502, 200"
            elif i % 50 == 9:  # no upstream answered
                addr, urt, ust = "-", "-", "-"
            else:
                addr, urt, ust = f"10.1.1.{i % 4}:8080", f"{max(rt - 0.001, 0):.3f}", "200"
            stamp = t.strftime("%d/%b/%Y:%H:%M:%S +0000")
            fh.write(
                f'10.244.0.{i % 250} - - [{stamp}] "GET /api/items?id={i} HTTP/1.1" 200 612 "-" '
                f'"curl/8.5.0" {int(rng.integers(60, 400))} {rt} [{upstream}] [] {addr} 612 {urt} {ust} '
                f"{int(rng.integers(0, 2**63)):016x}\n"
            )
            rows.append({"t": t, "rt": rt, "upstream": upstream, "urt": urt})
    return rows


def test_request_time_is_the_value_not_the_request_length(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """The number right after the combined fields is the request length in bytes; read as
    the latency it gave p99 397 us for requests of 2-180 ms, with no error."""
    rows = _ingress(tmp_path / "ingress.log")
    code, doc, err = _scan(capsys, str(tmp_path / "ingress.log"))
    assert code == 0, err
    s = doc["sketches"]["all"]
    want = np.array([r["rt"] for r in rows]) * 1000.0  # ms
    assert s["n"] == want.size and not s["skipped"] and s["unit"] == "ms"
    np.testing.assert_allclose([s["p50"], s["p99"]], np.quantile(want, [0.5, 0.99]), rtol=1e-9)
    assert s["time_first"] == "2026-03-04T10:00:00Z"
    assert "request_time of the ingress-nginx log format, in seconds" in err


def test_upstream_fields_retries_and_dashes(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    rows = _ingress(tmp_path / "ingress.log")
    code, doc, err = _scan(capsys, str(tmp_path / "ingress.log"), "--by", "upstream")
    assert code == 0, err
    for name in ("default-items-80", "default-cart-80"):
        want = np.array([r["rt"] for r in rows if r["upstream"] == name]) * 1000.0
        s = doc["sketches"][f"upstream={name}"]
        assert s["n"] == want.size
        np.testing.assert_allclose(s["p90"], np.quantile(want, 0.9), rtol=1e-9)
    code, doc, err = _scan(
        capsys, str(tmp_path / "ingress.log"), "--field", "upstream_response_time", "--input-unit", "s"
    )
    assert code == 0, err
    s = doc["sketches"]["all"]
    plain = [float(r["urt"]) for r in rows if r["urt"] != "-" and "," not in r["urt"]]
    skipped = {k: v["count"] for k, v in s["skipped"].items()}
    assert skipped == {"not_a_number": 8, "missing_field": 8}  # retries (two times), no upstream
    np.testing.assert_allclose(s["p50"], np.quantile(np.array(plain) * 1000.0, 0.5), rtol=1e-9)
    code, _, err = _scan(capsys, str(tmp_path / "ingress.log"), "--field", "latency")
    assert code == 3 and "has no such field (it has: client" in err


def test_fields_after_the_number_are_not_guessed(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """A combined line that goes on past a whole number after the standard fields, in no
    shape ogive knows: one line says so instead of taking it for microseconds. KEY=VALUE
    pairs after it are still fine, and so is a first number with a decimal point (nginx's
    ``$request_time $upstream_response_time``: the first is the request's, in seconds)."""
    odd = tmp_path / "odd.log"
    line = '10.0.0.1 - - [04/Mar/2026:10:00:{s:02d} +0000] "GET / HTTP/1.1" 200 5 "-" "c" {n} 0.0{s} up=a b\n'
    odd.write_text("".join(line.format(s=s, n=100 + s) for s in range(1, 30)))
    code, _, err = _scan(capsys, str(odd))
    assert code == 3 and err.count("\n") == 1 and "which field is the latency cannot be told" in err
    pairs = tmp_path / "pairs.log"
    line = '10.0.0.1 - - [04/Mar/2026:10:00:{s:02d} +0000] "GET / HTTP/1.1" 200 5 "-" "c" 0.0{s} up=a rt=1\n'
    pairs.write_text("".join(line.format(s=s) for s in range(1, 30)))
    code, doc, err = _scan(capsys, str(pairs))
    assert code == 0, err
    assert doc["sketches"]["all"]["n"] == 29
    np.testing.assert_allclose(
        doc["sketches"]["all"]["p50"], np.quantile([float(f"0.0{s}") * 1000 for s in range(1, 30)], 0.5)
    )
    two = tmp_path / "two.log"
    line = '10.0.0.1 - - [04/Mar/2026:10:00:{s:02d} +0000] "GET / HTTP/1.1" 200 5 "-" "c" 0.0{s} 0.00{t}\n'
    two.write_text("".join(line.format(s=s, t=s % 10) for s in range(10, 40)))
    code, doc, err = _scan(capsys, str(two))
    assert code == 0, err
    np.testing.assert_allclose(
        doc["sketches"]["all"]["p90"], np.quantile([float(f"0.0{s}") * 1000 for s in range(10, 40)], 0.9)
    )
