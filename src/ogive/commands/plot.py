"""`ogive plot`: a text-mode Q-Q, detrended, P-P, CDF or shift plot of one or two distributions."""

from __future__ import annotations

import argparse
import os
import shutil
import sys
from dataclasses import dataclass
from typing import TYPE_CHECKING

from ..errors import OgiveError
from .common import add_source_options

if TYPE_CHECKING:
    from ..fit.lineup import ModelLineup
    from ..fit.models import Candidate
    from ..sketch import Binned, Sketch

KINDS = ("qq", "detrended", "pp", "cdf", "shift")

DESCRIPTION = """\
Draw one distribution against a reference in the terminal, as braille dots (or plain
ASCII with --ascii). With two distributions, B is read against A (A is the baseline,
as in 'compare'); with --model FAMILY, A is read against a model of that family fitted
to A. A and B are saved sketches (run.ogive, run.ogive:GROUP) or sources to scan with
the reading options below.

With several families (--model lognormal,gamma,weibull) the plot is a line-up: one
panel per fitted model, best-ranked first (as 'ogive fit' ranks them), every panel on
the same axes so they compare by eye; each panel's title gives the model's rank, name,
tail error and parameters. Panels stand in one row when the width allows, in a grid
otherwise; models that do not fit at all are named on the last line. --one-axis draws
the detrended view of every model on one axis instead, told apart by glyph.

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
  ogive plot api.ogive --model lognormal,gamma,weibull
  ogive plot api.ogive --model lognormal,gamma,weibull --one-axis
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
        metavar="FAMILY[,FAMILY...]",
        default=None,
        help="use a model of this family fitted to A as the reference (e.g. lognormal, gamma, weibull); "
        "several, comma-separated, draw a line-up of panels, one per model",
    )
    parser.add_argument(
        "--kind", choices=KINDS, default=None, help="which plot (default qq; detrended with --one-axis)"
    )
    parser.add_argument(
        "--one-axis",
        action="store_true",
        help="with several models: every model's detrended deviation on one axis, told apart by glyph",
    )
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


def fitted_models(sketch: Sketch | Binned, families: list[str]) -> tuple[list[Candidate], str]:
    """Models of ``families`` fitted to the sketch by :func:`ogive.fit.models.fit_sketch`,
    best-ranked first, and the key they were ranked by. A family that could not be
    fitted is said on stderr (with why); none fitted is an error."""
    from ..fit.models import fit_sketch

    try:
        # No bootstrap: p-values are not drawn, and they would cost seconds.
        report = fit_sketch(sketch, families=families, bootstrap=0)
    except ValueError as exc:
        raise OgiveError(f"cannot fit {', '.join(families)}: {exc}") from None
    tail_only = ", ".join(repr(c.family) for c in report.tail_models)
    if not report.ranked:
        if report.tail_models:
            raise OgiveError(
                f"{tail_only} describes only the tail beyond a threshold; plot it with 'ogive fit', "
                "or pick a family for the whole distribution."
            )
        why = f": {report.not_fitted[0].reason}" if report.not_fitted else "."
        raise OgiveError(
            f"no {', '.join(repr(f) for f in families)} model could be fitted to these values{why}"
        )
    for nf in report.not_fitted:
        print(f"ogive: {nf.label} not drawn: {nf.reason}", file=sys.stderr)
    if report.tail_models:
        print(
            f"ogive: {tail_only} not drawn: a tail-only model has no whole-distribution plot.",
            file=sys.stderr,
        )
    return list(report.ranked), report.rank_key


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
    # The same family twice is one model (a line-up is ordered by rank, not as given).
    named = [f.strip() for f in args.model.split(",") if f.strip()] if args.model else []
    families = list(dict.fromkeys(named))
    if args.model is not None and not families:
        raise OgiveError("--model names no family; give one or more, comma-separated.")
    kind = _kind(args.kind, args.one_axis, families)
    width, height = (0, 0) if args.json else plot_size(args.width, args.height)
    name_a, a = _load(args.a, args)
    if a.count == 0:
        raise OgiveError(f"{args.a} holds no values; there is nothing to plot.")
    log = True if args.log else False if args.linear else None
    if len(families) > 1 or args.one_axis:
        models, rank_key = fitted_models(a, families)
        style = LineupStyle(kind, args.one_axis, args.ascii, log, args.along, args.band, args.confidence)
        lineup = make_lineup(a, name_a, models, rank_key, style)
        if args.json:
            emit([_json({"one_axis": args.one_axis, **lineup.to_dict()})])
        else:
            emit(draw_lineup(lineup, style, width=width, height=height))
        return 0

    # With two distributions B is read against A (A the baseline), as in 'compare';
    # with --model, A is read against the model.
    reference: Sketch | Binned | Candidate
    if families:
        reference = fitted_models(a, families)[0][0]
        ref_name = reference.label
        subject, subj_name = a, name_a
    else:
        name_b, b = _load(args.b, args)
        name_a, name_b = side_names((args.a, args.b), (name_a, name_b))
        subject, subj_name, reference, ref_name = b, name_b, a, name_a
    try:
        data = plot_inputs(
            kind,
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
        emit([_json({"kind": kind, **data.to_dict()})])
        return 0
    if isinstance(data, Detrended):
        lines = render.detrended_plot(
            data, width=width, height=height, x_axis=args.along, log=log, ascii_only=args.ascii
        )
    else:
        lines = render.draw(kind, data, width=width, height=height, log=log, ascii_only=args.ascii)
    emit(lines)
    return 0


def _kind(kind: str | None, one_axis: bool, families: list[str]) -> str:
    if one_axis:
        if not families:
            raise OgiveError("--one-axis draws fitted models on one axis; name them with --model A,B,...")
        if kind not in (None, "detrended"):
            raise OgiveError(f"--one-axis draws the detrended view; it cannot be --kind {kind}.")
        return "detrended"
    kind = kind or "qq"
    if families and kind == "shift":  # every other kind reads A against a model
        raise OgiveError("the shift function compares two distributions; give B instead of --model.")
    return kind


@dataclass(frozen=True)
class LineupStyle:
    """How a line-up is drawn: the options 'plot' and 'fit --plot' share."""

    kind: str
    one_axis: bool = False
    ascii_only: bool = False
    log: bool | None = None
    along: str = "prob"
    band: bool = True
    confidence: float = 0.95


def make_lineup(
    sketch: Sketch | Binned, label: str, models: list[Candidate], rank_key: str, style: LineupStyle
) -> ModelLineup:
    """The numbers behind a line-up (``fit.lineup.lineup_inputs``, as the workspace calls it)."""
    from ..fit.lineup import lineup_inputs

    try:
        return lineup_inputs(
            style.kind,
            sketch,
            models,
            subject_label=label,
            rank_key=rank_key,
            band=style.band,
            confidence=style.confidence,
        )
    except ValueError as exc:
        raise OgiveError(str(exc)) from None


def draw_lineup(lineup: ModelLineup, style: LineupStyle, *, width: int, height: int) -> list[str]:
    """The line-up drawn by ``render.lineup``, panels or one axis, as the workspace draws it."""
    from ..render.lineup import lineup_plot, one_axis_plot

    try:
        if style.one_axis:
            return one_axis_plot(lineup, width=width, height=height, ascii_only=style.ascii_only)
        return lineup_plot(
            lineup, width=width, height=height, log=style.log, x_axis=style.along, ascii_only=style.ascii_only
        )
    except ValueError as exc:
        raise OgiveError(str(exc)) from None


def _json(doc: dict[str, object]) -> str:
    import json

    from ..render.jsonsafe import json_safe

    return json.dumps(json_safe(doc), allow_nan=False)


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
    parser.add_argument(
        "--width",
        type=_size,
        default=None,
        help="with --plot: columns (default: terminal width, at most 120)",
    )
    parser.add_argument(
        "--height", type=_size, default=None, help="with --plot: lines (default: terminal height, at most 40)"
    )


def print_plot(
    kind: str,
    subject: Sketch | Binned,
    reference: Sketch | Binned | Candidate,
    subject_label: str,
    reference_label: str,
    *,
    ascii_only: bool,
    size: tuple[int | None, int | None] = (None, None),
) -> None:
    """The same plot 'ogive plot' draws, printed to stdout (used by fit and compare)."""
    from .. import render
    from ..fit.curves import plot_inputs

    width, height = plot_size(*size)
    try:
        data = plot_inputs(
            kind, subject, reference, subject_label=subject_label, reference_label=reference_label
        )
        lines = render.draw(kind, data, width=width, height=height, ascii_only=ascii_only)
    except ValueError as exc:
        raise OgiveError(str(exc)) from None
    sys.stdout.write("\n")
    emit(lines)


def emit(lines: list[str]) -> None:
    from ..render import ansi_lines, color_allowed

    out = ansi_lines(lines) if color_allowed(sys.stdout) and not os.environ.get("NO_COLOR") else list(lines)
    sys.stdout.write("\n".join(out) + "\n")
