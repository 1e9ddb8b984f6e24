"""Every README example that shows output is run, and must print what the README says.

Two kinds: command examples, and screenshots of the workspace.

The README's indented blocks that start with ``$ ogive ...`` are commands (a trailing
``\\`` continues one on the next line) followed by the text they print on stdout. They
run in order, in one scratch folder holding the demo logs (so ``day.ogive`` written by
one example is there for the next), through ``ogive.cli.main`` as a shell would.

A screenshot is the indented block after a ``<!-- screen: demo WIDTHxHEIGHT KEYS -->``
comment: ``ogive demo``'s workspace at that size, once its scans, fit and comparison
are done, after the keys are pressed.

In the expected text a line ``...`` stands for any number of lines, and a line ending in
``...`` for any line that starts with what comes before it: the README shortens long
outputs that way, and nothing else may differ.
"""

from __future__ import annotations

import os
import re
import shlex
import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest
from textual.pilot import Pilot

from ogive.cli import main
from ogive.ui import OgiveApp

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
INDENT = "    "


@dataclass(frozen=True)
class Example:
    line: int
    argv: list[str]
    expected: list[str]

    def __str__(self) -> str:
        return f"README.md:{self.line}: ogive {' '.join(self.argv)}"


def examples(text: str) -> list[Example]:
    lines = text.splitlines()
    out: list[Example] = []
    i = 0
    while i < len(lines):
        if not lines[i].startswith(INDENT + "$ ogive "):
            i += 1
            continue
        start = i
        command = lines[i][len(INDENT) + 2 :]
        while command.endswith("\\"):
            i += 1
            command = command[:-1] + " " + lines[i].strip()
        i += 1
        expected: list[str] = []
        while i < len(lines) and not lines[i].startswith(INDENT + "$ "):
            line = lines[i]
            if line.strip() and not line.startswith(INDENT):
                break
            expected.append(line[len(INDENT) :] if line.startswith(INDENT) else "")
            i += 1
        while expected and not expected[-1].strip():
            expected.pop()
        out.append(Example(start + 1, shlex.split(command)[1:], expected))
    return out


SCREEN = re.compile(r"<!-- screen: demo (\d+)x(\d+)((?: \S+)*) -->")


@dataclass(frozen=True)
class Screen:
    line: int
    size: tuple[int, int]
    keys: list[str]
    expected: list[str]


def screens(text: str) -> list[Screen]:
    lines = text.splitlines()
    out = []
    for i, line in enumerate(lines):
        m = SCREEN.fullmatch(line.strip())
        if not m:
            continue
        j = i + 1
        while j < len(lines) and not lines[j].startswith(INDENT):
            j += 1
        block = []
        while j < len(lines) and (lines[j].startswith(INDENT) or not lines[j].strip()):
            block.append(lines[j][len(INDENT) :])
            j += 1
        while block and not block[-1].strip():
            block.pop()
        out.append(Screen(i + 1, (int(m[1]), int(m[2])), m[3].split(), block))
    return out


def matches(expected: list[str], actual: list[str]) -> bool:
    """``...`` alone: any lines; a line ending in ``...``: a prefix; otherwise equal (bar trailing blanks)."""
    if not expected:
        return not actual
    head, rest = expected[0], expected[1:]
    if head.strip() == "...":
        return any(matches(rest, actual[k:]) for k in range(len(actual) + 1))
    if not actual:
        return False
    if head.endswith("..."):
        ok = actual[0].rstrip().startswith(head[:-3].rstrip())
    else:
        ok = actual[0].rstrip() == head.rstrip()
    return ok and matches(rest, actual[1:])


EXAMPLES = examples(README.read_text(encoding="utf-8"))


def test_the_readme_has_examples_to_run() -> None:
    assert len(EXAMPLES) >= 6, [str(e) for e in EXAMPLES]
    assert {e.argv[0] for e in EXAMPLES} >= {"scan", "show", "fit", "compare", "gate", "plot"}


def test_readme_examples_print_what_the_readme_shows(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    shutil.copytree(ROOT / "demo_logs", tmp_path / "demo_logs")
    shutil.copytree(ROOT / "tests" / "formats", tmp_path / "tests" / "formats")  # the format corpus
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("NO_COLOR", "1")
    monkeypatch.setenv("COLUMNS", "100")
    monkeypatch.setenv("LINES", "40")
    failures = []
    for ex in EXAMPLES:
        code = main(ex.argv)
        out = capsys.readouterr().out.rstrip("\n").split("\n")
        if code not in (0, 1, 2) or not matches(ex.expected, out):
            got = "\n".join(INDENT + line for line in out)
            failures.append(f"{ex} (exit {code}) printed:\n{got}")
    assert not failures, "\n\n".join(failures)


def test_matching_rules() -> None:
    assert matches(["a", "...", "z"], ["a", "b", "c", "z"])
    assert matches(["abc ..."], ["abc def"])
    assert not matches(["a", "z"], ["a", "b", "z"])
    assert not matches(["abc ..."], ["abd"])
    assert not matches(["a"], ["a", "b"])


SCREENS = screens(README.read_text(encoding="utf-8"))


async def _quiet(app: OgiveApp, pilot: Pilot[int]) -> None:
    """Until scans, fit and comparison are done and no worker runs."""
    for _ in range(600):
        await pilot.pause(0.05)
        ws = app.ws
        done = ws.jobs and all(j.done for j in ws.jobs) and ws.fit is not None and ws.comparison is not None
        if done and not any(w.is_running for w in app.workers):
            await pilot.pause(0.3)
            return
    raise AssertionError("the demo did not settle within 30 s")


@pytest.mark.parametrize("shot", SCREENS, ids=[f"README.md:{s.line}" for s in SCREENS])
async def test_readme_screenshots_are_the_workspace(shot: Screen, monkeypatch: pytest.MonkeyPatch) -> None:
    from ogive.commands.demo import demo_app
    from ogive.ui.screen_text import screen_text

    monkeypatch.setenv("NO_COLOR", "1")
    app = demo_app(ROOT / "demo_logs")
    async with app.run_test(size=shot.size) as pilot:
        await _quiet(app, pilot)
        for key in shot.keys:
            await pilot.press(key)
            await pilot.pause(0.3)
        text = screen_text(app).split("\n")
    got = "\n".join(INDENT + line for line in text)
    if os.environ.get("OGIVE_UPDATE_README") and not matches(shot.expected, text):
        _rewrite_screen(shot.line, text)  # then review the README's diff
        return
    assert matches(shot.expected, text), f"README.md:{shot.line} shows another screen; now:\n{got}"


def _rewrite_screen(marker_line: int, text: list[str]) -> None:
    """Put ``text`` in place of the screenshot under the marker at ``marker_line`` (1-based)."""
    lines = README.read_text(encoding="utf-8").split("\n")
    j = marker_line
    while j < len(lines) and not lines[j].startswith(INDENT):
        j += 1
    end = j
    while end < len(lines) and (lines[end].startswith(INDENT) or not lines[end].strip()):
        end += 1
    while end > j and not lines[end - 1].strip():
        end -= 1
    lines[j:end] = [(INDENT + line).rstrip() for line in text]
    README.write_text("\n".join(lines), encoding="utf-8")


def test_the_readme_has_screenshots() -> None:
    assert {s.size for s in SCREENS} >= {(80, 24), (160, 48)}
