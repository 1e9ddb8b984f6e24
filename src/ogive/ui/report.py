"""Exporting the workspace as Markdown and JSON, from the workspace model and the same tables.

The Markdown holds the tables ``ogive show``, ``fit`` and ``compare`` print (through
:mod:`ogive.render.tables`, values with their units); the JSON carries each result's own
``to_dict()`` (the shape ``--json`` prints), so an exported report and the CLI's output
can be checked against each other.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from ..render.jsonsafe import json_safe
from ..render.objectives import objective_table
from ..render.reports import comparison_notes
from ..render.tables import distribution_table, ladder_table, markdown_lines, ranking_table
from ..store import write_atomic
from .workspace import KIND_NAMES, Workspace


def screen_state(ws: Workspace, picture: list[str]) -> dict[str, Any]:
    """Everything on screen as JSON: the rows, the roles, the picture's lines, fit and comparison."""
    ref = ws.reference
    objectives = {"objectives": [c.to_dict() for c in ws.all_objective_checks()]} if ws.objectives else {}
    return json_safe(
        {
            **objectives,
            "subject": ws.subject,
            "reference": None if ref is None else {"kind": ref.kind, "name": ref.name},
            "distributions": [
                {
                    "name": d.name,
                    "origin": d.origin,
                    "state": d.state,
                    "note": d.note,
                    "bad_rows": d.sketch.provenance.skipped_total,
                    "summary": d.sketch.summary(),
                }
                for d in ws.dists.values()
            ],
            "picture": {"kind": ws.kind, "axes": ws.axes, "lines": list(picture)},
            "fit": ws.fit.to_dict()
            if ws.fit is not None
            else {"unavailable": ws.fit_note or "no fit on screen"},
            "comparison": ws.comparison.to_dict()
            if ws.comparison is not None
            else {"unavailable": ws.compare_note or "no comparison on screen"},
        }
    )


def markdown(ws: Workspace, picture: list[str]) -> str:
    ref = ws.reference
    out = [
        "# ogive workspace report",
        "",
        f"Subject: **{ws.subject or '—'}** · reference: **{ref.label if ref else '—'}**",
        "",
        "## Distributions",
        "",
        *markdown_lines(
            distribution_table([(d.state, d.name, d.sketch) for d in ws.dists.values()], first="state")
        ),
        "",
        f"## Picture: {KIND_NAMES[ws.kind]} ({ws.axes} axes)",
        "",
        "```",
        *(picture or ["(not drawn)"]),
        "```",
        "",
        "## Models fitted to the subject",
        "",
    ]
    if ws.fit is None:
        out.append(ws.fit_note or "No fit on screen.")
    else:
        unit = f" (parameters in {ws.fit.unit})" if ws.fit.unit else ""
        out += [f"Ranked by {ws.fit.rank_key}{unit}.", "", *markdown_lines(ranking_table(ws.fit))]
    out += ["", "## Comparison", ""]
    if ws.comparison is None:
        out.append(ws.compare_note or "No comparison on screen.")
    else:
        out += [*markdown_lines(ladder_table(ws.comparison)), "", *comparison_notes(ws.comparison)]
    if ws.objectives:
        checks = ws.all_objective_checks()
        out += [
            "",
            "## Objectives",
            "",
            *(markdown_lines(objective_table(checks)) if checks else ["None read."]),
        ]
    out.append("")
    return "\n".join(out)


def targets(path: str) -> tuple[Path, Path]:
    """The two files an export to ``path`` writes: the Markdown and the JSON beside it."""
    md = Path(path)
    if md.suffix.lower() != ".md":
        md = md.with_suffix(md.suffix + ".md") if md.suffix else md.with_suffix(".md")
    return md, md.with_suffix(".json")


def write(ws: Workspace, picture: list[str], path: str) -> tuple[Path, Path]:
    """Write ``path`` (Markdown) and the same name with ``.json``; both atomically."""
    md, js = targets(path)
    write_atomic(md, markdown(ws, picture).encode())
    write_atomic(js, (json.dumps(screen_state(ws, picture), indent=2) + "\n").encode())
    return md, js
