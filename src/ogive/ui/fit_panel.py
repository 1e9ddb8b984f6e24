"""The model ranking for the subject; ``2`` makes the highlighted model the reference."""

from __future__ import annotations

from typing import Any, ClassVar

from textual.binding import Binding, BindingType
from textual.message import Message
from textual.widgets import DataTable

from . import fmt


def ranked_models(report: Any) -> list[Any]:
    """The report's models, best first (the fit package ranks them; the UI keeps its order)."""
    for attr in ("ranked", "models", "candidates"):
        models = getattr(report, attr, None)
        if models is not None:
            return list(models)
    return []


def model_scores(model: Any) -> dict[str, Any]:
    """The scores the fit package attached to a model, by the names it gave them."""
    out: dict[str, Any] = {}
    for key in ("tail_error", "ks", "ad", "cvm", "aic", "bic"):  # the fit ranks by tail error first
        value = getattr(model, key, None)
        if value is None:
            scores = getattr(model, "scores", None)
            value = getattr(scores, key, None) if scores is not None else None
            if value is None and isinstance(scores, dict):
                value = scores.get(key)
        if value is not None:
            out[key] = value
    return out


class ModelRanking(DataTable[str]):
    """Fitted families for the subject, in the fit package's order.

    | Key | Action |
    | :- | :- |
    | up / down | Move the highlight. |
    | 2 | Make the highlighted model the reference. |
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("2", "pick", "Model as reference", show=True),
    ]

    class Picked(Message):
        def __init__(self, index: int) -> None:
            super().__init__()
            self.index = index

    def on_mount(self) -> None:
        self.cursor_type = "row"

    def show(self, report: Any, chosen_label: str | None) -> None:
        self.clear(columns=True)
        models = ranked_models(report)
        score_keys: list[str] = []
        for m in models:
            for k in model_scores(m):
                if k not in score_keys:
                    score_keys.append(k)
        self.add_column("#", key="rank")
        self.add_column("model", key="model")
        for k in score_keys:
            self.add_column(k.replace("_", " "), key=k)
        for i, m in enumerate(models):
            label = str(getattr(m, "label", m))
            mark = "R " if label == chosen_label else ""
            scores = model_scores(m)
            self.add_row(
                f"{mark}{i + 1}",
                label,
                *(fmt.num(scores[k]) if k in scores else "—" for k in score_keys),
                key=str(i),
            )

    def action_pick(self) -> None:
        if self.row_count:
            self.post_message(self.Picked(self.cursor_row))
