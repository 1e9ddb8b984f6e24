"""How candidates are ordered: the keys, what each means, and which one the data support.

One copy of the keys for the whole program (``ogive fit --rank-by`` offers these).
"""

from __future__ import annotations

import math
from typing import Protocol

RANK_KEYS: tuple[str, ...] = ("auto", "tail", "ks", "ad", "cvm", "aic", "bic")
"""``auto`` picks one of the others from the data (``choose_key``)."""

RANK_MEANING = {
    "auto": "chosen from the data's size",
    "tail": "largest relative quantile error over p50/p90/p99/p99.9, then KS distance",
    "ks": "Kolmogorov-Smirnov distance sup|F_sketch - F_model|",
    "ad": "Anderson-Darling statistic A² (weights the tails)",
    "cvm": "Cramér-von Mises statistic W²",
    "aic": "Akaike information criterion from the grouped likelihood",
    "bic": "Bayesian information criterion from the grouped likelihood",
}


class Ranked(Protocol):
    """What ordering needs of a candidate (``results.Candidate`` has it)."""

    @property
    def ok(self) -> bool: ...

    def key_value(self, key: str) -> float: ...


def check_key(key: str) -> None:
    if key not in RANK_KEYS:
        raise ValueError(f"unknown rank key {key!r}; choose from {', '.join(RANK_KEYS)}.")


def choose_key(requested: str, n: int) -> tuple[str, str]:
    """The key to rank by and why (a sentence; empty when the user chose it)."""
    check_key(requested)
    if requested != "auto":
        return requested, ""
    return "bic", (
        f"BIC: with n = {n:,} the likelihood tells families apart best and its penalty keeps extra "
        "parameters from winning on noise (measured in benchmarks/ranking_bench.py)"
    )


def rank_value(c: Ranked, key: str) -> tuple[int, float, float]:
    """Sort key: ordinary fits first (at a boundary or unconverged after), then the
    statistic, ties by the KS distance."""
    v, ks = c.key_value(key), c.key_value("ks")
    return (0 if c.ok else 1, v if math.isfinite(v) else math.inf, ks if math.isfinite(ks) else math.inf)
