"""Ctrl-C (SIGINT) and SIGTERM in every phase of a scan: reading, finishing the sketches,
writing the file (issue 12). The first signal keeps what was read; it ends the scan within
a second even while a source gives bytes without a newline or a FIFO's writer is idle.

Each run is a real subprocess receiving a real signal. For the phases after reading,
the child sends the signal to itself from inside that phase (a wrapper around the
function running then), so the phase is hit every time rather than by timing luck.
Outside reference for the counts: the rows the test itself wrote.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from ogive.store import load_sketches

ENV = {**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parents[1] / "src")}
SIGNALS = [signal.SIGINT, signal.SIGTERM]
ROWS = 30_000


def _child(code: str, *argv: str) -> subprocess.Popen[str]:
    return subprocess.Popen(
        [sys.executable, "-c", code, *argv],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=ENV,
        start_new_session=True,  # the signal goes to the child alone, as to a job of a shell
    )


RUN = "import sys; from ogive.cli import main; sys.exit(main(sys.argv[1:]))"


@pytest.mark.parametrize("sig", SIGNALS, ids=["SIGINT", "SIGTERM"])
def test_reading_an_idle_fifo_ends_within_a_second_keeping_the_rows(tmp_path: Path, sig: int) -> None:
    fifo = tmp_path / "in.fifo"
    os.mkfifo(fifo)
    out = tmp_path / "out.ogive"
    p = _child(RUN, "scan", str(fifo), "--column", "1", "--no-header", "-o", str(out), "--quiet")
    with open(fifo, "w") as writer:  # the writer stays open and idle: no end of input
        writer.write("".join(f"{i}\n" for i in range(1, 1001)))
        writer.flush()
        time.sleep(1.5)
        start = time.monotonic()
        p.send_signal(sig)
        code = p.wait(timeout=10)
        took = time.monotonic() - start
    assert code == 130, p.stderr.read() if p.stderr else ""
    assert took < 1.0, took
    s = load_sketches(out)["all"]
    assert s.count == 1000  # every row written before the signal (the test wrote 1..1000)
    assert s.provenance.partial is not None and "interrupted" in s.provenance.partial


@pytest.mark.parametrize("sig", SIGNALS, ids=["SIGINT", "SIGTERM"])
def test_reading_bytes_without_a_newline_ends_within_a_second(tmp_path: Path, sig: int) -> None:
    if not os.path.exists("/dev/zero"):
        pytest.skip("needs /dev/zero")
    out = tmp_path / "zero.ogive"
    p = _child(RUN, "scan", "/dev/zero", "--pattern", r"x(\d+)", "-o", str(out), "--quiet")
    time.sleep(1.5)
    start = time.monotonic()
    p.send_signal(sig)
    code = p.wait(timeout=10)
    assert time.monotonic() - start < 1.0
    assert code == 130
    s = load_sketches(out)["all"]
    assert s.count == 0 and s.provenance.partial is not None


SELF_SIGNAL = """
import importlib, os, sys
from ogive.cli import main
owner = getattr(importlib.import_module("{module}"), "{attr}")
real = getattr(owner, "{name}")
count = int(os.environ.get("SIGNALS", "1"))
def wrapped(*a, **k):
    for _ in range(count):
        os.kill(os.getpid(), {sig})
    return real(*a, **k)
setattr(owner, "{name}", wrapped)
sys.exit(main(sys.argv[1:]))
"""


@pytest.fixture(scope="module")
def source(tmp_path_factory: pytest.TempPathFactory) -> Path:
    f = tmp_path_factory.mktemp("sig") / "lat.csv"
    f.write_text("host,latency_ms\n" + "".join(f"web-{i % 7},{1 + (i * 7919) % 900}\n" for i in range(ROWS)))
    return f


@pytest.mark.parametrize("sig", SIGNALS, ids=["SIGINT", "SIGTERM"])
@pytest.mark.parametrize(
    ("module", "attr", "name"),
    [("ogive.read.build", "Builder", "finish"), ("ogive.outputs", "os", "fsync")],
    ids=["finishing", "writing"],
)
def test_signal_after_reading_keeps_the_whole_sketch(
    tmp_path: Path, source: Path, sig: int, module: str, attr: str, name: str
) -> None:
    code = SELF_SIGNAL.format(module=module, attr=attr, name=name, sig=int(sig))
    out = tmp_path / "all.ogive"
    p = _child(code, "scan", str(source), "--column", "latency_ms", "--by", "host", "-o", str(out), "--quiet")
    _, err = p.communicate(timeout=60)
    assert p.returncode == 130, err
    assert "Traceback" not in err and "internal error" not in err
    sset = load_sketches(out)
    # Every row was read before the signal: all of them are in the sketches, which are whole.
    assert sum(s.count for s in sset.sketches.values()) == ROWS
    assert all(s.provenance.partial is None for s in sset.sketches.values())


@pytest.mark.parametrize("sig", SIGNALS, ids=["SIGINT", "SIGTERM"])
def test_second_signal_while_writing_abandons_cleanly(tmp_path: Path, source: Path, sig: int) -> None:
    code = SELF_SIGNAL.format(module="ogive.outputs", attr="os", name="fsync", sig=int(sig))
    out = tmp_path / "all.ogive"
    p = subprocess.run(
        [
            sys.executable,
            "-c",
            code,
            "scan",
            str(source),
            "--column",
            "latency_ms",
            "-o",
            str(out),
            "--quiet",
        ],
        capture_output=True,
        text=True,
        env={**ENV, "SIGNALS": "2"},
        timeout=60,
    )
    assert p.returncode == 130, p.stderr
    assert "Traceback" not in p.stderr
    assert list(tmp_path.iterdir()) == []  # neither the file nor a temporary one
