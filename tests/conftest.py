"""Shared test set-up: every merge in every test is followed by the sketch's own invariant
checks (``Sketch.check``), as the reference t-digest asserts its invariants after merging."""

from __future__ import annotations

from collections.abc import Iterator, Sequence

import pytest

from ogive.sketch import Sketch


@pytest.fixture(autouse=True)
def _check_after_every_merge(monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    real = Sketch.merge_many

    def merge_many(self: Sketch, others: Sequence[Sketch]) -> None:
        real(self, others)
        self.check()

    monkeypatch.setattr(Sketch, "merge_many", merge_many)
    yield
