"""The terminal driver: textual's own, with Escape told apart from Alt+key by time alone.

Textual waits ``ESCAPE_DELAY`` after an Escape for the rest of a key's sequence, but its
input loop only looks at that deadline when ``select`` wakes up (every 0.1 s) or after new
bytes have been parsed. A key that arrives 50 ms after Escape — after the deadline — is
therefore parsed together with it as Alt+key (in a dialog: escape is lost and the letter
lands in the path field). This loop is textual's (``LinuxDriver.run_input_thread``) with
two changes: the deadline is checked *before* new bytes are parsed, and ``select`` wakes
up at least every half escape delay, so an Escape is delivered on time.
"""

from __future__ import annotations

import os
import selectors
from codecs import getincrementaldecoder

from textual import constants
from textual._parser import ParseError
from textual._xterm_parser import XTermParser
from textual.drivers.linux_driver import LinuxDriver


class OnTimeEscapeDriver(LinuxDriver):
    """:class:`LinuxDriver` whose input loop honours the escape delay (see the module text)."""

    def run_input_thread(self) -> None:
        selector = selectors.SelectSelector()
        selector.register(self.fileno, selectors.EVENT_READ)
        parser = XTermParser(self._debug)
        decode = getincrementaldecoder("utf-8")().decode
        wake_s = min(0.1, max(constants.ESCAPE_DELAY / 2, 0.005))

        def process(events: list[tuple[selectors.SelectorKey, int]], final: bool = False) -> None:
            for event in parser.tick():  # an Escape whose wait is over goes first, alone
                self.process_message(event)
            for index, (_key, mask) in enumerate(events):
                if mask & selectors.EVENT_READ:
                    last = index == len(events) - 1
                    data = decode(os.read(self.fileno, 1024 * 4), final=final and last)
                    if not data:
                        break
                    for event in parser.feed(data):
                        self.process_message(event)
            for event in parser.tick():
                self.process_message(event)

        try:
            while not self.exit_event.is_set():
                process(selector.select(wake_s))
            selector.unregister(self.fileno)
            process(selector.select(0.1), final=True)
        finally:
            selector.close()
            try:
                for _event in parser.feed(""):
                    pass
            except (EOFError, ParseError):
                pass
