"""The workspace on a real terminal (a pseudo-terminal): how it leaves, what it sends, what it draws.

Each test starts ``ogive view`` on a pty, as a shell would, waits for the first frame,
then signals it or presses keys, and reads every byte it wrote. The terminal modes are
checked against the xterm control sequences (ctlseqs, "Private Mode Set/Reset": 1049
alternate screen, 25 cursor, 1000/1002/1003/1006 mouse reporting); the exit statuses are
the shell's convention (128 + the signal's number, POSIX "Exit Status for Commands").
"""

from __future__ import annotations

import os
import pty
import re
import select
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from rich.segment import Segment
from textual.color import Color

from ogive.ui.terminal import ControlFilter, wants_ascii
from ui_pilot import pair_file

SRC = Path(__file__).resolve().parents[1] / "src"
SGR = re.compile(r"\x1b\[([0-9;:]*)m")


def colour_codes(text: str) -> list[str]:
    """SGR sequences that set a colour: 30–38, 40–48, 90–97, 100–107 (ECMA-48 8.3.117; 38/48
    start 256-colour and RGB forms). 39 and 49 are "default colour", i.e. none."""
    found = []
    for m in SGR.finditer(text):
        params = [int(p) for p in re.split("[;:]", m.group(1)) if p.isdigit()]
        if any(30 <= p <= 38 or 40 <= p <= 48 or 90 <= p <= 97 or 100 <= p <= 107 for p in params):
            found.append(m.group(0))
    return found


@pytest.fixture()
def sketches(tmp_path: Path) -> Path:
    return pair_file(tmp_path, 4, 3.1)


class Tty:
    """A child process on a pty of a given size; collects everything it writes."""

    def __init__(self, args: list[str], env: dict[str, str], cols: int = 80, rows: int = 24) -> None:
        import fcntl
        import struct
        import termios

        self.master, slave = pty.openpty()
        fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", rows, cols, 0, 0))
        full = {**os.environ, "PYTHONPATH": str(SRC), "TERM": "xterm-256color", **env}
        full.pop("NO_COLOR", None) if "NO_COLOR" not in env else None
        self.proc = subprocess.Popen(
            [sys.executable, "-m", "ogive", *args],
            stdin=slave,
            stdout=slave,
            stderr=slave,
            env=full,
            start_new_session=True,
            close_fds=True,
        )
        os.close(slave)
        self.out = b""

    def read(self, seconds: float, until: bytes | None = None) -> bytes:
        end = time.monotonic() + seconds
        while time.monotonic() < end:
            ready, _, _ = select.select([self.master], [], [], 0.05)
            if ready:
                try:
                    chunk = os.read(self.master, 65536)
                except OSError:
                    break
                if not chunk:
                    break
                self.out += chunk
                if until is not None and until in self.out:
                    break
            elif self.proc.poll() is not None:
                break
        return self.out

    def press(self, keys: bytes) -> None:
        os.write(self.master, keys)

    def wait(self, seconds: float = 10.0) -> int:
        try:
            self.read(seconds)
            return self.proc.wait(timeout=seconds)
        finally:
            if self.proc.poll() is None:
                self.proc.kill()
            os.close(self.master)

    def started(self) -> None:
        self.read(20.0, until=b"Quit")
        assert b"Quit" in self.out, self.out[-400:]
        self.read(1.0)


def _restored(out: bytes) -> None:
    """The last word on each mode is 'off' (reset), as a shell needs it."""
    for mode in (b"1049", b"1000", b"1003", b"1006"):
        last_set, last_reset = out.rfind(b"\x1b[?" + mode + b"h"), out.rfind(b"\x1b[?" + mode + b"l")
        assert last_reset > last_set, f"mode {mode.decode()} left on"
    assert out.rfind(b"\x1b[?25h") > out.rfind(b"\x1b[?25l"), "cursor left hidden"


@pytest.mark.parametrize(
    ("sig", "status"), [(signal.SIGTERM, 143), (signal.SIGHUP, 129), (signal.SIGINT, 130)]
)
def test_a_signal_gives_the_terminal_back(sketches: Path, sig: int, status: int) -> None:
    """Issue 21: SIGTERM/SIGHUP left the alternate screen, a hidden cursor and mouse reporting on."""
    tty = Tty(["view", str(sketches)], {})
    tty.started()
    os.kill(tty.proc.pid, sig)
    assert tty.wait() == status
    _restored(tty.out)


@pytest.mark.parametrize(("keys", "status"), [(b"q", 0), (b"\x03", None), (b"\x03\x03", 130)])
def test_exit_status_after_quit_and_interrupt(sketches: Path, keys: bytes, status: int | None) -> None:
    """q: 0; one ctrl+c stops scans and asks again (still running); two within 3 s: 130."""
    tty = Tty(["view", str(sketches)], {})
    tty.started()
    for k in keys:
        tty.press(bytes([k]))
        tty.read(0.3)
    if status is None:
        tty.read(1.0)
        assert tty.proc.poll() is None
        assert b"ctrl+c again" in tty.out
        tty.press(b"q")
        status = 0
    assert tty.wait() == status
    _restored(tty.out)


def test_no_color_sends_no_colour_codes(sketches: Path) -> None:
    """NO_COLOR (https://no-color.org): no colour at all; the highlight is reverse video."""
    tty = Tty(["view", str(sketches)], {"NO_COLOR": "1"})
    tty.started()
    tty.read(2.0)
    tty.press(b"q")
    tty.wait()
    text = tty.out.decode("utf-8", "replace")
    assert not colour_codes(text), colour_codes(text)[:5]
    reverse = [m for m in SGR.finditer(text) if "7" in re.split("[;:]", m.group(1))]
    assert reverse  # reverse video carries the highlight


@pytest.mark.parametrize("env", [{"TERM": "linux"}, {"LC_ALL": "C"}])
def test_a_terminal_without_unicode_gets_ascii(sketches: Path, env: dict[str, str]) -> None:
    """No braille (U+2800–U+28FF) and no rounded corners (╭╮╰╯) under TERM=linux or LC_ALL=C.

    One terminal type and one locale: the two ways ``wants_ascii`` says yes. TERM=vt100 takes
    the same branch as TERM=linux (``term in ASCII_TERMS``), and the test below checks it and
    the other names; a third run of the app here checked nothing new."""
    tty = Tty(["view", str(sketches)], env)
    tty.started()
    tty.read(3.0)
    tty.press(b"q")
    tty.wait()
    text = tty.out.decode("utf-8", "replace")
    assert not re.search("[\u2800-\u28ff]", text)
    assert not re.search("[╭╮╰╯]", text)
    assert "+" in text and "|" in text


def test_ascii_is_chosen_by_terminal_and_locale() -> None:
    assert wants_ascii({"TERM": "linux", "LANG": "en_US.UTF-8"})
    assert wants_ascii({"TERM": "vt100"})
    assert wants_ascii({"TERM": "xterm-256color", "LC_ALL": "C"})
    assert wants_ascii({"TERM": "xterm", "LC_ALL": "POSIX", "LANG": "en_US.UTF-8"})
    assert not wants_ascii({"TERM": "xterm-256color", "LANG": "en_US.UTF-8"})
    assert not wants_ascii({"TERM": "xterm-256color", "LC_ALL": "C.UTF-8"})
    assert not wants_ascii({"TERM": "screen-256color"})  # no locale said: Unicode stays


def test_escape_then_a_key_50_ms_later_is_two_keys(sketches: Path) -> None:
    """Issue 21: Escape followed within ~50 ms by a key was read as Alt+key (the key landed in the
    path field). Escape closes the Write prompt; the q after it quits (status 0).

    Up to three tries: on a loaded machine (the whole suite, other jobs) the app's input
    thread can be kept from running for the 50 ms, and then both bytes are waiting when
    it reads, which no program can tell from Alt+q (seen in one CI run of the suite and
    in one of seven runs of this file). The bug itself failed every try."""
    for _ in range(3):
        tty = Tty(["view", str(sketches)], {})
        tty.started()
        tty.press(b"w")
        tty.read(0.8)
        tty.press(b"\x1b")
        time.sleep(0.05)
        tty.press(b"q")
        try:
            status = tty.wait(8.0)
        except subprocess.TimeoutExpired:
            continue  # q went to the prompt: try again
        assert status == 0
        _restored(tty.out)
        return
    pytest.fail("Escape then q 50 ms later never closed the prompt and quit in three tries")


def test_suspend_and_resume_redraw_the_screen(sketches: Path) -> None:
    """Issue 21: after ctrl+z and fg the screen stayed blank until a key. SIGTSTP gives the
    terminal back (alternate screen left); SIGCONT takes it again and draws the whole screen."""
    tty = Tty(["view", str(sketches)], {})
    tty.started()
    mark = len(tty.out)
    os.kill(tty.proc.pid, signal.SIGTSTP)
    tty.read(1.5)
    assert b"\x1b[?1049l" in tty.out[mark:]
    mark = len(tty.out)
    os.kill(tty.proc.pid, signal.SIGCONT)
    tty.read(3.0, until=b"Quit")
    tty.read(0.5)
    resumed = tty.out[mark:]
    assert b"\x1b[?1049h" in resumed and b"Quit" in resumed and b"Distributions" in resumed
    tty.press(b"q")
    assert tty.wait() == 0


def test_the_last_filter_removes_what_a_terminal_acts_on() -> None:
    """What reaches the terminal holds no C0/C1 control, no bidirectional override and no
    lone surrogate (the set ``errors.printable`` escapes; ECMA-48 for the controls,
    Unicode UAX #9 for the overrides); plain text and textual's own control segments pass."""
    dirty = "a\x1b[2Jb\x07c\u202ed\udc80e\x9bf"
    own = Segment("\x1b[?25l", None, [])  # a control segment textual made itself
    out = ControlFilter().apply([Segment(dirty), Segment("p50 12.3 ms"), own], Color(0, 0, 0))
    assert [s.text for s in out] == ["a[2Jbcdef", "p50 12.3 ms", "\x1b[?25l"]
