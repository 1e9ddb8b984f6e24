"""``--objective 300ms@99.9%`` for every command that shows distributions: one option, one parse.

The option is declared, parsed and read here once; the numbers come from
:mod:`ogive.fit.objective` and the text from :mod:`ogive.render.objectives`, so
``scan``, ``show``, ``compare``, ``view`` and ``timeline`` say the same thing.
"""

from __future__ import annotations

import argparse
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

from ..errors import OgiveError

if TYPE_CHECKING:
    from ..fit.objective import Objective, ObjectiveReport
    from ..sketch import Distribution, SketchSet

OBJECTIVE_HELP = (
    "a service-level objective THRESHOLD@SHARE%%, e.g. 300ms@99.9%% (99.9%% of values at most "
    "300 ms): prints the share over the threshold with a 95%% interval, the error budget spent "
    "and met / missed / cannot tell (repeat for more)"
)


def add_objective_option(
    parser: argparse.ArgumentParser | argparse._ArgumentGroup, help: str = OBJECTIVE_HELP
) -> None:
    parser.add_argument("--objective", action="append", default=[], metavar="THRESHOLD@SHARE%", help=help)


def parse_objectives(texts: Sequence[str], unit: str | None = None) -> list[Objective]:
    """Every ``--objective``, parsed before any work starts (a typo fails at once); with the
    ``--unit`` a scan will use, a threshold that cannot be in that unit fails before the scan too."""
    from ..fit.objective import parse_objective

    try:
        objectives = [parse_objective(t) for t in texts]
        if unit is not None:
            for o in objectives:
                o.threshold.in_unit(unit, o.text)
        return objectives
    except ValueError as exc:
        raise OgiveError(str(exc)) from None


def read_objectives(
    named: Sequence[tuple[str, Distribution]], objectives: Sequence[Objective], confidence: float = 0.95
) -> ObjectiveReport:
    """Every objective on every named distribution; a unit that does not convert is one line."""
    from ..fit.objective import objective_report

    try:
        return objective_report(list(named), list(objectives), confidence)
    except ValueError as exc:
        raise OgiveError(str(exc)) from None


def set_objectives(sset: SketchSet, objectives: Sequence[Objective]) -> ObjectiveReport:
    return read_objectives([(n, sset[n]) for n in sset.names()], objectives)


def objective_text(report: ObjectiveReport) -> list[str]:
    from ..render.objectives import objective_lines

    return ["", *objective_lines(report)] if report.checks else []


def with_objectives(doc: dict[str, Any], report: ObjectiveReport) -> dict[str, Any]:
    """A command's JSON document with the objectives beside its own keys (unchanged without any)."""
    return {**doc, "objectives": report.to_dict()} if report.checks else doc
