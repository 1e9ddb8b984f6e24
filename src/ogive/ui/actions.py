"""What the workspace's keys do: panes, pictures, dialogs, writing, exporting, stopping and quitting.

Ctrl-C has one meaning, said in the key overlay: the first press stops every running
scan (what was read stays, marked partial) — or, with none running, asks for a second
press — and a second press within :data:`INTERRUPT_WINDOW_S` quits with status 130,
the shell's status for an interrupted program.
"""

from __future__ import annotations

import time
from pathlib import Path

from ..errors import OgiveError
from ..sketch import SketchSet
from ..store import save_sketches
from . import report
from .ask_path import AskPath, Confirm
from .base import INTERRUPT_WINDOW_S, WorkspaceBase
from .help_overlay import KeyHelp, MessageLog
from .keys import key_groups
from .open_prompt import OpenPrompt, OpenRequest
from .plot_panel import PlotPanel
from .shelf import DistributionShelf
from .workspace import AXES, KIND_NAMES, KINDS, LINEUP_WORDS, LINEUPS

PANES = ("picture", "models", "ladder", "timeline")
EXIT_INTERRUPTED = 130
"""128 + SIGINT: what a shell reports for a program ended by Ctrl-C."""


class ActionsMixin(WorkspaceBase):
    """The actions bound in :class:`.app.OgiveApp`'s key table."""

    def action_pane(self, pane: str) -> None:
        """Show a pane; ``list`` shows the Distributions list (the only thing shown, in a compact window)."""
        screen = self.workspace_screen
        screen.set_class(pane == "list", "-listing")
        if pane == "list":
            screen.query_one(DistributionShelf).show(self.ws)
            screen.query_one(DistributionShelf).focus()
            return
        self.pane = pane
        for name in PANES:
            screen.query_one(f"#{name}").set_class(name == pane, "-current")
        # Wide screens show every pane; the timeline takes the picture's place when asked for.
        screen.query_one("#picture").set_class(pane == "timeline", "-covered")
        target = {"models": "#models", "ladder": "#ladder", "timeline": "#timeline"}.get(pane, "#shelf")
        if target != "#shelf" or not screen.has_class("-compact"):
            screen.query_one(target).focus()

    def action_cycle_kind(self, step: int) -> None:
        self.ws.kind = KINDS[(KINDS.index(self.ws.kind) + step) % len(KINDS)]
        if self.pane != "picture":
            self.action_pane("picture")
        self.workspace_screen.query_one(PlotPanel).redraw()
        self.set_aside(f"picture: {KIND_NAMES[self.ws.kind]}")

    def action_cycle_lineup(self) -> None:
        self.ws.lineup = LINEUPS[(LINEUPS.index(self.ws.lineup) + 1) % len(LINEUPS)]
        panel = self.workspace_screen.query_one(PlotPanel)
        if self.ws.lineup and not panel.region.area:
            self.action_pane("picture")  # only one pane below the rows: show the line-up
        panel.redraw()
        self.set_aside(f"picture: {LINEUP_WORDS[self.ws.lineup]}")

    def action_cycle_axes(self) -> None:
        self.ws.axes = AXES[(AXES.index(self.ws.axes) + 1) % len(AXES)]
        self.workspace_screen.query_one(PlotPanel).redraw()
        self.set_aside(f"value axes: {self.ws.axes}")

    # ------------------------------------------------------------------ dialogs
    def action_open(self) -> None:
        def attempt(req: OpenRequest) -> str:
            return self.open(req.path, req.options)

        start = str(self.save_dir) + "/" if str(self.save_dir) != "." else ""
        if not isinstance(self.screen, OpenPrompt):  # a burst of o keys opens one prompt
            self.push_screen(OpenPrompt(start, self.options, attempt=attempt))

    def action_save(self) -> None:
        def chosen(path: str | None) -> None:
            if path:
                self.save_to(path)

        if not isinstance(self.screen, AskPath):
            self.push_screen(
                AskPath("Write sketches to (.ogive)", str(self.save_dir / "workspace.ogive")), chosen
            )

    def save_to(self, path: str) -> None:
        # A followed sketch is written as it stands now: the file goes on growing, so
        # there is no "finished" to wait for (the CLI's scan --follow -o does the same).
        ready, busy = self.ws.finished()
        if not ready:
            self.say("nothing to write yet: no finished sketches.")
            return
        try:
            save_sketches(path, SketchSet(dict(ready)))
        except OgiveError as exc:
            self.say(str(exc))
            return
        extra = f"; still scanning, not written: {', '.join(busy)}" if busy else ""
        self.say(f"wrote {len(ready)} sketch(es) to {path}{extra}")

    def action_export(self) -> None:
        def chosen(path: str | None) -> None:
            if not path:
                return
            taken = [p for p in report.targets(path) if Path(p).exists()]
            if not taken:
                self.export_to(path)
                return
            names = " and ".join(str(p) for p in taken)
            self.push_screen(
                Confirm(f"{names} already exist{'s' if len(taken) == 1 else ''}. Replace?"),
                lambda yes: self.export_to(path) if yes else self.say("export cancelled: nothing written."),
            )

        if not isinstance(self.screen, AskPath):
            title = "Export report to (.md; a .json is written beside it)"
            self.push_screen(AskPath(title, str(self.save_dir / "ogive-report.md")), chosen)

    def export_to(self, path: str) -> None:
        try:
            md, js = report.write(self.ws, self.workspace_screen.query_one(PlotPanel).lines, path)
        except OgiveError as exc:
            self.say(str(exc))
            return
        self.say(f"exported {md} and {js}")

    def action_help(self) -> None:
        if not isinstance(self.screen, KeyHelp):
            self.push_screen(KeyHelp(key_groups(type(self))))

    def action_messages(self) -> None:
        if not isinstance(self.screen, MessageLog):
            self.push_screen(MessageLog(list(self.messages)))

    # ------------------------------------------------------------------ stopping and quitting
    def action_stop_scans(self) -> None:
        running = self.stop_scans()
        self.say(f"stopping {running} scan(s)…" if running else "no scan is running.")

    def stop_scans(self) -> int:
        running = [j for j in self.ws.jobs if not j.done and not j.cancel.is_set()]
        for j in running:
            j.cancel.set()
        return len(running)

    def action_stop_follow(self) -> None:
        following = [j for j in self.ws.jobs if j.follow and not j.done]
        for j in following:
            j.cancel.set()
        names = ", ".join(Path(j.source).name for j in following)
        self.say(f"stopping: {names} (what was read stays)…" if following else "nothing is being followed.")

    def action_interrupt(self) -> None:
        """Ctrl-C: stop the scans; a second press within a few seconds quits (status 130)."""
        if self.interrupt_pending:
            self.leave(EXIT_INTERRUPTED)
            return
        self._interrupted_at = time.monotonic()
        stopped = self.stop_scans()
        then = f"; stopping {stopped} scan(s), what was read stays" if stopped else " (q quits too)"
        self.say(f"ctrl+c again within {INTERRUPT_WINDOW_S:.0f} s quits{then}.")

    async def action_quit(self) -> None:
        self.leave(0)

    def leave(self, status: int) -> None:
        """End the app with ``status`` (0 quit, 130 interrupted, 128+N a signal): scans are told to stop."""
        for j in self.ws.jobs:
            j.cancel.set()
        self.exit(status, return_code=status)
