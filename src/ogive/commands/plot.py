"""`ogive plot`: a text-mode Q-Q, detrended, P-P, CDF or shift plot of one or two distributions."""

from __future__ import annotations

import argparse
import os
import shutil
import sys
from typing import TYPE_CHECKING

from ..errors import OgiveError
from .common import add_source_options

if TYPE_CHECKING:
    from ..fit.models import Candidate
    from ..sketch import Binned, Sketch

KINDS = ("qq", "detrended", "pp", "cdf", "shift")

DESCRIPTION = """\
Draw one distribution against a reference in the terminal, as braille dots (or plain
ASCII with --ascii). With two distributions, B is read against A (A is the baseline,
as in 'compare'); with --model FAMILY, A is read against a model of that family fitted
to A. A and B are saved sketches (run.ogive, run.ogive:GROUP) or sources to scan with
the reading options below.

Kinds (the "subject" is B, or A under --model; the reference is A, or the model):
  qq         subject quantiles (y) against reference quantiles (x) with the line
             y = x; above the line the subject is larger (slower) at that
             probability. p50, p90, p99 and p99.9 are marked.
  detrended  the subject's deviation from the reference in % along a tail-stretching
             probability axis: tail departures too small to see on a Q-Q plot show.
  pp         the subject's CDF against the reference's at the same values (the body).
  cdf        both CDFs on one value axis.
  shift      B − A at the deciles and tail quantiles with simultaneous intervals
             (needs B; Doksum's shift function).

The dotted band on qq, detrended and pp plots is a 95 % simultaneous band from the
Dvoretzky–Kiefer–Wolfowitz inequality (sketch error included): if the subject really
followed the reference, the whole curve would stay inside it 95 times in 100. A curve that
leaves it shows a real difference; one that stays inside is not proof of a good fit, only
that these data cannot tell — and in the far tail the band is wide for that reason.
"""

EPILOG = """\
examples:
  ogive plot before.ogive after.ogive
  ogive plot api.ogive --model lognormal --kind detrended
  ogive plot runs.ogive:before runs.ogive:after --kind shift --width 100 --height 30
  ogive plot access.log.gz --model gamma --format text --pattern ' (\\d+)ms$' --ascii

Colour is added only on a terminal and never when NO_COLOR is set; the series are told
apart by their glyphs and the legend, not by colour.
"""

DEFAULT_MAX = (120, 40)
"""Largest size picked from the terminal when --width/--height are not given."""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "a", metavar="A", help="the distribution under study: a sketch file[:GROUP] or a source"
    )
    parser.add_argument(
        "b", metavar="B", nargs="?", default=None, help="the reference distribution (sketch or source)"
    )
    parser.add_argument(
        "--model",
        metavar="FAMILY",
        default=None,
        help="use a model of this family fitted to A as the reference (e.g. lognormal, gamma, weibull)",
    )
    parser.add_argument("--kind", choices=KINDS, default="qq", help="which plot (default qq)")
    parser.add_argument(
        "--width", type=_size, default=None, help="columns (default: terminal width, at most 120)"
    )
    parser.add_argument(
        "--height", type=_size, default=None, help="lines (default: terminal height, at most 40)"
    )
    parser.add_argument("--ascii", action="store_true", help="plain ASCII instead of Unicode braille")
    axes = parser.add_mutually_exclusive_group()
    axes.add_argument(
        "--linear",
        action="store_true",
        help="linear value axes (default: log unless a value is negative; zeros are drawn at the "
        "log axis's floor and counted in the legend)",
    )
    axes.add_argument(
        "--log",
        action="store_true",
        help="log value axes even when some values are zero or negative (those are drawn at the "
        "axis floor and counted in the legend)",
    )
    parser.add_argument(
        "--no-band", dest="band", action="store_false", help="leave out the simultaneous band"
    )
    parser.add_argument(
        "--along",
        choices=("prob", "value"),
        default="prob",
        help="detrended: x axis is probability on a tail-stretching scale (prob, default) "
        "or the reference's value",
    )
    parser.add_argument(
        "--json",
        action="store_true",
        help="print the numbers behind the plot as one JSON object instead of drawing it",
    )
    parser.add_argument(
        "--confidence",
        type=float,
        default=0.95,
        help="level of the band and of the shift intervals (default 0.95)",
    )
    add_source_options(parser)


def _size(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of cells, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a positive number of cells, got {value}")
    return value


def plot_size(width: int | None, height: int | None) -> tuple[int, int]:
    """The requested size, or the terminal's (one line spared for the prompt), capped."""
    from ..render import MIN_HEIGHT, MIN_WIDTH

    term = shutil.get_terminal_size((80, 24))
    w = width if width is not None else max(min(term.columns, DEFAULT_MAX[0]), MIN_WIDTH)
    h = height if height is not None else max(min(term.lines - 1, DEFAULT_MAX[1]), MIN_HEIGHT)
    if w < MIN_WIDTH or h < MIN_HEIGHT:
        raise OgiveError(
            f"a plot needs at least {MIN_WIDTH}×{MIN_HEIGHT} cells; --width {w} --height {h} is smaller."
        )
    return w, h


def _load(spec: str, args: argparse.Namespace) -> tuple[str, Sketch | Binned]:
    from .common import load_one

    return load_one(spec, args)


def _fitted_model(sketch: Sketch | Binned, family: str) -> Candidate:
    """A model of ``family`` fitted to the sketch by :func:`ogive.fit.models.fit_sketch`."""
    from ..fit.models import fit_sketch

    try:
        # No bootstrap: p-values are not drawn, and they would cost seconds.
        report = fit_sketch(sketch, families=[family], bootstrap=0)
    except ValueError as exc:
        raise OgiveError(f"cannot fit {family!r}: {exc}") from None
    if report.best is None:
        if report.tail_models:
            raise OgiveError(
                f"{family!r} describes only the tail beyond a threshold; plot it with 'ogive fit', "
                "or pick a family for the whole distribution."
            )
        why = f": {report.not_fitted[0].reason}" if report.not_fitted else "."
        raise OgiveError(f"no {family!r} model could be fitted to these values{why}")
    return report.best


def run(args: argparse.Namespace) -> int:
    from .. import render
    from ..fit.curves import Detrended, plot_inputs
    from .common import side_names

    if args.b is not None and args.model is not None:
        raise OgiveError("give either a second distribution B or --model FAMILY, not both.")
    if args.b is None and args.model is None:
        raise OgiveError(
            "nothing to plot A against; name a second distribution B or a model with --model FAMILY."
        )
    if not 0 < args.confidence < 1:
        raise OgiveError(f"--confidence must lie strictly between 0 and 1, got {args.confidence}.")
    width, height = (0, 0) if args.json else plot_size(args.width, args.height)
    name_a, a = _load(args.a, args)
    if a.count == 0:
        raise OgiveError(f"{args.a} holds no values; there is nothing to plot.")

    # With two distributions B is read against A (A the baseline), as in 'compare';
    # with --model, A is read against the model.
    reference: Sketch | Binned | Candidate
    if args.model is not None:
        if args.kind == "shift":
            raise OgiveError("the shift function compares two distributions; give B instead of --model.")
        reference = _fitted_model(a, args.model)
        ref_name = reference.label
        subject, subj_name = a, name_a
    else:
        name_b, b = _load(args.b, args)
        name_a, name_b = side_names((args.a, args.b), (name_a, name_b))
        subject, subj_name, reference, ref_name = b, name_b, a, name_a
    try:
        data = plot_inputs(
            args.kind,
            subject,
            reference,
            subject_label=subj_name,
            reference_label=ref_name,
            band=args.band,
            confidence=args.confidence,
        )
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    if args.json:
        import json

        from ..render.jsonsafe import json_safe

        out = json_safe({"kind": args.kind, **data.to_dict()})
        sys.stdout.write(json.dumps(out, allow_nan=False) + "\n")
        return 0
    log = True if args.log else False if args.linear else None
    if isinstance(data, Detrended):
        lines = render.detrended_plot(
            data, width=width, height=height, x_axis=args.along, log=log, ascii_only=args.ascii
        )
    else:
        lines = render.draw(args.kind, data, width=width, height=height, log=log, ascii_only=args.ascii)
    _emit(lines)
    return 0


def add_plot_option(parser: argparse.ArgumentParser, kinds: tuple[str, ...]) -> None:
    """``--plot [KIND]`` and ``--ascii`` for commands that print a plot after their table."""
    parser.add_argument(
        "--plot",
        nargs="?",
        const=kinds[0],
        choices=kinds,
        metavar="KIND",
        help=f"after the table, draw a plot sized to the terminal: {', '.join(kinds)} (default {kinds[0]})",
    )
    parser.add_argument("--ascii", action="store_true", help="with --plot: plain ASCII instead of braille")


def print_plot(
    kind: str,
    subject: Sketch | Binned,
    reference: Sketch | Binned | Candidate,
    subject_label: str,
    reference_label: str,
    *,
    ascii_only: bool,
) -> None:
    """The same plot 'ogive plot' draws, printed to stdout (used by fit and compare)."""
    from .. import render
    from ..fit.curves import plot_inputs

    width, height = plot_size(None, None)
    try:
        data = plot_inputs(
            kind, subject, reference, subject_label=subject_label, reference_label=reference_label
        )
        lines = render.draw(kind, data, width=width, height=height, ascii_only=ascii_only)
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    sys.stdout.write("\n")
    _emit(lines)


def _emit(lines: list[str]) -> None:
    from ..render import ansi_lines, color_allowed

    out = ansi_lines(lines) if color_allowed(sys.stdout) and not os.environ.get("NO_COLOR") else list(lines)
    sys.stdout.write("\n".join(out) + "\n")
