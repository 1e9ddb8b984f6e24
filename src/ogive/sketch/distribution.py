"""What every distribution ogive answers from must say: the ``Distribution`` protocol.

Two things meet it: a ``Sketch`` of raw values (a t-digest with exact tails) and a
``Binned`` distribution from telemetry histograms (counts over bucket intervals). The
ladder, the fits, the plots and the gate ask only these questions, so both go through
every command the same way. Each answer is either **sure** (``count_bounds``,
``order_statistic_bounds``: the raw values are certain to satisfy them) or an
**estimate** (``quantile``, ``rank``, ``cdf``, ``value_at``) whose worst error the sure
answers bound.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, Protocol

from numpy.typing import ArrayLike

from .binned import Binned
from .buckets import FloatArray
from .sketch import Provenance, Sketch

if TYPE_CHECKING:
    from typing_extensions import TypeIs


class Distribution(Protocol):
    """The questions a sketch and a binned distribution both answer (see the module text)."""

    unit: str
    provenance: Provenance

    @property
    def count(self) -> int: ...
    @property
    def total(self) -> float: ...
    @property
    def min(self) -> float: ...
    @property
    def max(self) -> float: ...
    @property
    def mean(self) -> float: ...
    @property
    def exact(self) -> bool: ...
    @property
    def low(self) -> FloatArray: ...
    @property
    def high(self) -> FloatArray: ...
    @property
    def nan_count(self) -> int: ...
    @property
    def inf_count(self) -> int: ...
    @property
    def zero_count(self) -> int: ...
    @property
    def negative_count(self) -> int: ...

    def quantile(self, q: ArrayLike) -> FloatArray: ...
    def value_at(self, position: ArrayLike) -> FloatArray: ...
    def rank(self, x: ArrayLike) -> FloatArray: ...
    def cdf(self, x: ArrayLike) -> FloatArray: ...
    def count_bounds(self, x: ArrayLike) -> tuple[FloatArray, FloatArray]: ...
    def order_statistic_bounds(self, rank: ArrayLike) -> tuple[FloatArray, FloatArray]: ...
    def rank_error_at(self, q: ArrayLike) -> FloatArray: ...
    def rank_error_bound(self) -> float: ...
    def cdf_knots(self) -> FloatArray: ...
    def bound_steps(self) -> FloatArray: ...
    def summary(self) -> dict[str, Any]: ...


Dist = Sketch | Binned
"""The concrete kinds of distribution, for annotations that need more than the protocol."""

DISTRIBUTION_TYPES = (Sketch, Binned)
"""For ``isinstance``: what is a distribution (and not a fitted model)."""


def is_distribution(x: object) -> TypeIs[Sketch | Binned]:
    """A sketch or a binned distribution (not a fitted model, which has a CDF too)."""
    return isinstance(x, DISTRIBUTION_TYPES)


def is_binned(x: object) -> TypeIs[Binned]:
    return isinstance(x, Binned)
