"""Every write path checked: a full disk (on write and on fsync), a reader gone away, a
target that is not a regular file (issue 12).

Outside references: Linux's ``/dev/full`` (every write fails with ENOSPC, man 4 full),
a pipe closed by a real ``head``-like subprocess (EPIPE, POSIX write(2)), and FIFOs,
sockets and folders made with the standard library. Each run is a subprocess, as a
user's would be, so the interpreter's own exit flush is part of what is checked.
"""

from __future__ import annotations

import errno
import os
import socket
import subprocess
import sys
from pathlib import Path

import pytest

from ogive.errors import OgiveError
from ogive.outputs import check_target, write_atomic
from ogive.store import load_sketches

ENV = {**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parents[1] / "src")}
HAVE_FULL = os.path.exists("/dev/full")


def ogive(*args: str, stdout: int | None = None, cwd: Path | None = None) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "ogive", *args],
        stdout=stdout if stdout is not None else subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=ENV,
        cwd=cwd,
        timeout=120,
    )


@pytest.fixture(scope="module")
def csv(tmp_path_factory: pytest.TempPathFactory) -> Path:
    f = tmp_path_factory.mktemp("w") / "lat.csv"
    f.write_text("latency_ms\n" + "".join(f"{1 + (i * 7919) % 500}\n" for i in range(20_000)))
    return f


@pytest.fixture(scope="module")
def saved(csv: Path) -> tuple[Path, Path]:
    """Two sketch files of the same data, made once for the module (each run is a process)."""
    a, b = csv.parent / "a.ogive", csv.parent / "b.ogive"
    assert ogive("scan", str(csv), "--column", "latency_ms", "-o", str(a), "--quiet").returncode == 0
    b.write_bytes(a.read_bytes())
    return a, b


def _one_line_error(r: subprocess.CompletedProcess[str]) -> str:
    # Warnings about the input may come first; the failure itself is one line.
    lines = [ln for ln in r.stderr.strip().splitlines() if not ln.startswith("ogive: warning: ")]
    assert r.returncode == 3, (r.returncode, r.stderr)
    assert len(lines) == 1 and lines[0].startswith("ogive: error: "), r.stderr
    assert "internal error" not in r.stderr and "Traceback" not in r.stderr
    return lines[0]


@pytest.mark.skipif(not HAVE_FULL, reason="needs /dev/full (Linux)")
@pytest.mark.parametrize(
    "args",
    [
        ("scan", "{csv}", "--column", "latency_ms", "-o", "-"),
        ("scan", "{csv}", "--column", "latency_ms", "--json"),
        ("scan", "{csv}", "--column", "latency_ms"),
        ("show", "{sketch}"),
        ("show", "{sketch}", "--json"),
        ("merge", "{sketch}", "{sketch2}", "-o", "-"),
        ("generate", "-o", "-", "--rows", "20000"),
    ],
)
def test_full_stdout_is_one_line_and_exit_3(
    csv: Path, saved: tuple[Path, Path], args: tuple[str, ...]
) -> None:
    sketch, sketch2 = saved
    argv = [a.format(csv=csv, sketch=sketch, sketch2=sketch2) for a in args]
    with open("/dev/full", "wb") as full:
        r = ogive(*argv, stdout=full.fileno())
    line = _one_line_error(r)
    assert "No space left" in line


@pytest.mark.parametrize(
    "args",
    [
        ("scan", "{csv}", "--column", "latency_ms", "-o", "-", "--quiet"),
        ("generate", "-o", "-", "--rows", "200000"),
    ],
)
def test_closed_pipe_for_data_is_an_error_not_a_short_file(csv: Path, args: tuple[str, ...]) -> None:
    argv = [a.format(csv=csv) for a in args]
    p = subprocess.Popen(
        [sys.executable, "-m", "ogive", *argv], stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=ENV
    )
    assert p.stdout is not None and p.stderr is not None
    if args[0] == "generate":
        p.stdout.read(10)  # the reader takes a few bytes and goes away (as `head -c 10` does)
    # A sketch fits in a pipe's buffer: the reader must be gone before it is written.
    p.stdout.close()
    err = p.stderr.read().decode()
    code = p.wait(timeout=120)
    assert code == 3, err
    lines = [ln for ln in err.strip().splitlines() if not ln.startswith("ogive: warning: ")]
    assert "closed" in err and len(lines) == 1 and "internal error" not in err


def _fifo(tmp_path: Path) -> str:
    path = tmp_path / "fifo"
    os.mkfifo(path)
    return str(path)


def _socket(tmp_path: Path) -> str:
    path = str(tmp_path / "sock")
    s = socket.socket(socket.AF_UNIX)
    s.bind(path)
    return path


@pytest.mark.parametrize(
    ("make", "kind"),
    [
        (lambda tmp: "/dev/null", "character device"),
        (lambda tmp: "/dev/full", "character device"),
        (_fifo, "FIFO"),
        (_socket, "socket"),
        (lambda tmp: str(tmp), "directory"),
    ],
)
@pytest.mark.parametrize("command", ["scan", "merge", "generate", "timeline"])
def test_special_targets_refused_before_reading(
    csv: Path,
    saved: tuple[Path, Path],
    tmp_path: Path,
    make,
    kind: str,
    command: str,  # type: ignore[no-untyped-def]
) -> None:
    target = make(tmp_path)
    if not os.path.exists(target):
        pytest.skip(f"{target} does not exist here")
    before = os.stat(target)
    if command == "merge":
        argv = ["merge", str(saved[0]), str(saved[1]), "-o", target]
    elif command == "generate":
        argv = ["generate", "-o", target, "--rows", "10"]
    elif command == "timeline":
        argv = ["timeline", str(csv), "--column", "latency_ms", "-o", target]
    else:
        argv = ["scan", str(csv), "--column", "latency_ms", "-o", target]
    line = _one_line_error(ogive(*argv))
    assert kind in line and "not a regular file" in line
    after = os.stat(target)
    assert (after.st_mode, after.st_ino) == (before.st_mode, before.st_ino)  # untouched


def test_workspace_writer_refuses_a_device(tmp_path: Path) -> None:
    """The workspace saves and exports through outputs.write_atomic: the same rule."""
    with pytest.raises(OgiveError, match="character device"):
        write_atomic("/dev/null", b"{}")
    with pytest.raises(OgiveError, match="directory"):
        write_atomic(tmp_path, b"{}")
    check_target(tmp_path / "new.ogive")  # a new path is fine


@pytest.mark.parametrize("fail_on", ["write", "fsync"])
def test_disk_full_on_write_or_fsync_keeps_the_old_file(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, fail_on: str
) -> None:
    target = tmp_path / "keep.ogive"
    target.write_bytes(b"old")

    def full(*args: object, **kwargs: object) -> None:
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    if fail_on == "fsync":
        monkeypatch.setattr(os, "fsync", full)
    else:
        real_fdopen = os.fdopen

        class FullDisk:
            """The temporary file, on a disk that takes no more bytes."""

            def __init__(self, fd: int, mode: str) -> None:
                self.fh = real_fdopen(fd, mode)

            def __enter__(self) -> FullDisk:
                return self

            def __exit__(self, *exc: object) -> None:
                self.fh.close()

            write = full

        monkeypatch.setattr(os, "fdopen", FullDisk)
    with pytest.raises(OgiveError, match=r"No space left.*nothing was changed"):
        write_atomic(target, b"new contents")
    assert target.read_bytes() == b"old"
    assert [p.name for p in tmp_path.iterdir()] == ["keep.ogive"]  # no temporary file left


def test_a_link_is_followed_not_replaced(tmp_path: Path, csv: Path) -> None:
    real = tmp_path / "real.ogive"
    real.write_bytes(b"old")
    link = tmp_path / "link.ogive"
    link.symlink_to(real)
    assert ogive("scan", str(csv), "--column", "latency_ms", "-o", str(link), "--quiet").returncode == 0
    assert link.is_symlink()
    assert load_sketches(real)["all"].count == 20_000


@pytest.mark.parametrize("twice", [("{csv}", "{csv}"), ("{csv}", "./{name}"), ("{csv}", "{link}")])
def test_same_file_twice_in_one_scan_is_refused(csv: Path, tmp_path: Path, twice: tuple[str, str]) -> None:
    link = tmp_path / "hard.csv"
    os.link(csv, link)
    argv = [t.format(csv=csv, name=csv.name, link=link) for t in twice]
    line = _one_line_error(ogive("scan", *argv, "--column", "latency_ms", cwd=csv.parent))
    assert "counted twice" in line
