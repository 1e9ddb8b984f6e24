"""Exporting what is on screen as Markdown and JSON, from the same result objects.

The JSON carries each result's own ``to_dict()`` (the shape ``--json`` prints), so a
report exported here and the CLI's output can be checked against each other.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..render.jsonsafe import json_safe
from ..store import write_atomic
from . import fmt
from .fit_panel import model_scores, ranked_models
from .ladder_panel import ladder_rows, summary_lines
from .plot_panel import KIND_NAMES, PlotPanel

if TYPE_CHECKING:
    from .app import OgiveApp


def _as_dict(obj: Any) -> Any:
    to_dict = getattr(obj, "to_dict", None)
    return to_dict() if callable(to_dict) else None


def screen_state(app: OgiveApp) -> dict[str, Any]:
    plot = app._ws.query_one(PlotPanel)
    ref = app.reference
    return json_safe(
        {
            "subject": app.subject,
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
                for d in app.dists.values()
            ],
            "picture": {"kind": plot.kind, "axes": plot.axes, "lines": list(plot.lines)},
            "fit": _as_dict(app.fit_report) if app.fit_report is not None else {"unavailable": app.fit_note},
            "comparison": _as_dict(app.comparison)
            if app.comparison is not None
            else {"unavailable": app.compare_note or "no comparison on screen"},
        }
    )


def markdown(app: OgiveApp) -> str:
    plot = app._ws.query_one(PlotPanel)
    ref = app.reference
    out = ["# ogive workspace report", ""]
    out.append(f"Subject: **{app.subject or '—'}** · reference: **{ref.label if ref else '—'}**")
    out += [
        "",
        "## Distributions",
        "",
        "| name | n | p50 | p99 | max | bad rows | state |",
        "|---|---:|---:|---:|---:|---:|---|",
    ]
    for d in app.dists.values():
        s = d.sketch.summary()
        out.append(
            f"| {d.name} | {s['n']} | {fmt.num(s['p50'])} | {fmt.num(s['p99'])} | {fmt.num(s['max'])} "
            f"| {d.sketch.provenance.skipped_total} | {d.state} |"
        )
    out += ["", f"## Picture: {KIND_NAMES[plot.kind]} ({plot.axes} axes)", ""]
    out += ["```", *(plot.lines or ["(not drawn)"]), "```", ""]
    out += ["## Models fitted to the subject", ""]
    if app.fit_report is None:
        out.append(app.fit_note or "No fit on screen.")
    else:
        models = ranked_models(app.fit_report)
        keys: list[str] = []  # the panel's column order (tail error first)
        for m in models:
            keys += [k for k in model_scores(m) if k not in keys]
        out.append("| # | model | " + " | ".join(keys) + " |")
        out.append("|---|---|" + "---:|" * len(keys))
        for i, m in enumerate(models):
            sc = model_scores(m)
            out.append(
                f"| {i + 1} | {getattr(m, 'label', m)} | "
                + " | ".join(fmt.num(sc.get(k)) for k in keys)
                + " |"
            )
    out += ["", "## Comparison", ""]
    if app.comparison is None:
        out.append(app.compare_note or "No comparison on screen.")
    else:
        out.append("| q | reference | subject | change | verdict |")
        out.append("|---|---:|---:|---:|---|")
        for r in ladder_rows(app.comparison):
            rel = getattr(r, "relative_change", float("nan"))
            rel_s = "—" if rel is None or math.isnan(rel) else f"{rel * 100:+.1f}%"
            verdict = getattr(r, "verdict", "")
            out.append(f"| {r.label} | {fmt.num(r.a_value)} | {fmt.num(r.b_value)} | {rel_s} | {verdict} |")
        out += ["", *summary_lines(app.comparison)]
    out.append("")
    return "\n".join(out)


def write(app: OgiveApp, path: str) -> tuple[Path, Path]:
    """Write ``path`` (Markdown) and the same name with ``.json``; both atomically."""
    md = Path(path)
    if md.suffix.lower() != ".md":
        md = md.with_suffix(md.suffix + ".md") if md.suffix else md.with_suffix(".md")
    js = md.with_suffix(".json")
    write_atomic(md, markdown(app).encode())
    write_atomic(js, (json.dumps(screen_state(app), indent=2) + "\n").encode())
    return md, js
