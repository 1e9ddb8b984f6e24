"""Command line: argument parsing, wiring sub-commands to the packages, exit codes.

Each sub-command lives in ``ogive.commands.<name>`` with ``add_arguments(parser)`` and
``run(args) -> int``. Those modules import only the standard library at top level;
heavy libraries (polars, scipy, textual) are imported inside ``run`` so that
``ogive --help`` stays fast.
"""

from __future__ import annotations

import argparse
import contextlib
import ctypes
import importlib
import os
import signal
import sys
from collections.abc import Sequence

from . import __version__
from .errors import EXIT_ERROR, EXIT_INTERRUPTED, OgiveError, printable
from .outputs import OUTPUT_ERRNOS, silence_stdout

# numpy's OpenBLAS starts a thread per core when numpy is imported, and on 2 cores that
# thread spun for ~0.14 CPU-s per process (measured: `import numpy` took 0.26-0.30 CPU-s,
# 0.10-0.16 with one thread). ogive sorts and sums arrays and fits a few parameters; it
# never multiplies big matrices. One BLAS thread, unless the user chose otherwise.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

M_ARENA_MAX = -8
"""glibc's ``mallopt`` parameter for the most malloc arenas (``<malloc.h>``)."""


def _one_malloc_arena() -> None:
    """Keep every thread of this process on one glibc malloc arena.

    Why: glibc gives each thread that contends for the heap an arena of its own (up to 8
    per core), and each arena keeps the chunk buffers freed in it (``read.heap`` keeps
    up to 32 MB free per arena so chunks are not page-faulted in afresh). A scan's
    reader, four parser threads and commit thread so held several arenas of idle chunk
    memory, and the peak crept up with the file's length: ``--time-field --split-at``
    on 6 MB chunks peaked at 221 MB at 1 GB and 254-258 MB at 8 GB; on one arena 203-209
    and 236-237. The threads allocate a few large blocks per chunk, so one lock costs
    nothing measurable (1 GB, median of 4, default / one arena: CSV 2.84 / 2.75 s, text
    3.95 / 3.79 s, CSV with a time 3.15 / 3.01 s).

    It must run before a second thread touches the heap (glibc fixes the arena limit the
    first time it needs a new arena; set when a scan starts, it came too late), hence
    here, when the command line is read. Elsewhere than glibc, nothing is done.
    """
    if not sys.platform.startswith("linux"):
        return
    try:
        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError):
        return  # not glibc: nothing to tune
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    mallopt(M_ARENA_MAX, 1)


_one_malloc_arena()

COMMANDS: dict[str, str] = {
    "scan": "read sources once and summarise (and save) a sketch of one numeric field",
    "show": "summarise a saved sketch; any quantiles with -q",
    "merge": "merge saved sketches (per host, per day) into one",
    "fit": "fit candidate probability models to a sketch and rank them",
    "compare": "compare two distributions: quantile ladder with intervals, distances, shift",
    "gate": "release check: exit 0/1/2 on quantile limits between a baseline and a candidate",
    "plot": "text-mode Q-Q, detrended, P-P, CDF and shift plots",
    "timeline": "quantiles per time window, and when the distribution changed, into what",
    "view": "open the keyboard-driven workspace on sources or sketches",
    "demo": "open the workspace on the bundled demo data (a release that slowed the tail)",
    "generate": "write the invented demo scenario as logs of any size (for trying and benchmarks)",
}


class _Parser(argparse.ArgumentParser):
    """Usage mistakes exit with EXIT_ERROR so that 1 and 2 stay meaningful for ``gate``."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        self.exit(EXIT_ERROR, f"{self.prog}: error: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="ogive",
        description="Stream huge logs once into small mergeable quantile sketches, "
        "fit probability models to them and compare distributions, in the terminal.",
        epilog="Exit status: 0 done; 1 and 2 are used by 'gate'; 3 bad input or usage; 130 interrupted.",
    )
    parser.add_argument("--version", action="version", version=f"ogive {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, summary in COMMANDS.items():
        module = importlib.import_module(f"ogive.commands.{name}")
        p = sub.add_parser(
            name,
            help=summary,
            description=getattr(module, "DESCRIPTION", summary),
            epilog=getattr(module, "EPILOG", None),
            formatter_class=argparse.RawDescriptionHelpFormatter,
        )
        module.add_arguments(p)
        p.set_defaults(_run=module.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "_run", None):
        parser.print_help()
        return EXIT_ERROR
    # SIGTERM ends a command as Ctrl-C does (a scan keeps what it read; anything else
    # stops cleanly, its temporary files removed) instead of killing it mid-write.
    with contextlib.suppress(ValueError):  # not the main thread (embedded in a test runner)
        signal.signal(signal.SIGTERM, _terminate)
    try:
        code = int(args._run(args))
        sys.stdout.flush()  # a full output fails here, inside the checks, not at exit
        return code
    except OgiveError as exc:
        print(f"ogive: error: {printable(str(exc))}", file=sys.stderr)
        return EXIT_ERROR
    except KeyboardInterrupt:
        print("ogive: interrupted", file=sys.stderr)
        return EXIT_INTERRUPTED
    except BrokenPipeError:
        # A reader such as `head` went away: stop quietly, as other filters do (a sketch
        # or a generated log sent to it is checked where it is written, and fails).
        silence_stdout()
        return 0
    except OSError as exc:
        if exc.errno not in OUTPUT_ERRNOS:
            return _internal(exc)
        # Text output (tables, --json) that the disk or device behind stdout refused.
        silence_stdout()
        print(
            f"ogive: error: cannot write the output: {exc.strerror or exc}; what was printed is incomplete.",
            file=sys.stderr,
        )
        return EXIT_ERROR
    except Exception as exc:
        return _internal(exc)


def _terminate(signum: int, frame: object) -> None:
    raise KeyboardInterrupt


def _internal(exc: Exception) -> int:
    """A bug in ogive, not the user's fault; still one line, and the traceback on demand."""
    if os.environ.get("OGIVE_DEBUG"):
        raise exc
    first = printable((str(exc).splitlines() or [""])[0][:200])
    print(
        f"ogive: internal error: {type(exc).__name__}: {first} "
        "(please report it; OGIVE_DEBUG=1 shows the traceback)",
        file=sys.stderr,
    )
    return EXIT_ERROR


if __name__ == "__main__":
    sys.exit(main())
