"""The one exception type the user sees as a single line (``ogive: error: ...``)."""

from __future__ import annotations


class OgiveError(Exception):
    """A problem with the user's input or environment, worded as a full sentence.

    ``cli.main`` prints it as one line and exits with ``EXIT_ERROR``; anything else
    reaching the top is a bug in ogive and is reported as one.
    """


EXIT_OK = 0
EXIT_GATE_FAIL = 1
"""``gate``: a limit is credibly exceeded."""
EXIT_UNDECIDED = 2
"""``gate``: the data cannot decide a limit."""
EXIT_ERROR = 3
"""Bad input, a missing file, a usage mistake: ogive could not do what was asked."""
EXIT_INTERRUPTED = 130
