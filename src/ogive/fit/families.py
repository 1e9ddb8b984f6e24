"""The registry of candidate families: names, aliases, defaults, and the table for --help.

The families themselves live in ``kernels.py`` (the eight two-parameter ones),
``shifted.py`` (their three-parameter versions), ``mixture.py`` (the two-lognormal
mixture) and ``tail.py`` (the generalised Pareto tail).
"""

from __future__ import annotations

from typing import Any

from .family import Family
from .kernels import EXPONENTIAL, GAMMA, INVGAUSS, LOGLOGISTIC, LOGNORMAL, LOMAX, NORMAL, WEIBULL
from .mixture import MIXTURE
from .shifted import shifted

FAMILIES: dict[str, Family] = {
    f.name: f for f in (NORMAL, LOGNORMAL, GAMMA, WEIBULL, EXPONENTIAL, LOGLOGISTIC, INVGAUSS, LOMAX, MIXTURE)
}
"""Whole-distribution families with a fixed support, by the name ``--families`` takes."""

TWO_PARAMETER: tuple[str, ...] = tuple(f for f in FAMILIES if f != MIXTURE.name)
"""The plain families (one or two parameters), without the mixture."""

SHIFTED: dict[str, tuple[Family, str]] = {
    "lognormal3": (LOGNORMAL, "shifted lognormal"),
    "gamma3": (GAMMA, "shifted gamma"),
    "weibull3": (WEIBULL, "shifted Weibull"),
}
"""Three-parameter versions: bound to the data minimum by :func:`get`."""

SHIFTED_OF: dict[str, str] = {base.name: name for name, (base, _) in SHIFTED.items()}
"""A family's shifted version, by the plain family's name."""

TAIL_FAMILY = "gpd"
"""The generalised Pareto tail model (fitted above a threshold; see ``tail.py``)."""

ALIASES = {
    "pareto": "lomax",
    "fisk": "loglogistic",
    "log-logistic": "loglogistic",
    "inverse-gaussian": "invgauss",
    "mixture": "lognormal-mix",
    "genpareto": "gpd",
    "norm": "normal",
    "lognorm": "lognormal",
    "expon": "exponential",
}

DEFAULT_FAMILIES: tuple[str, ...] = (*FAMILIES, *SHIFTED, TAIL_FAMILY)


def get(name: str, minimum: float) -> Family:
    """The family called ``name``; a shifted one measures its floor from ``minimum``."""
    if name in SHIFTED:
        base, title = SHIFTED[name]
        return shifted(base, name, title, minimum)
    return FAMILIES[name]


def resolve(names: list[str] | tuple[str, ...] | None) -> list[str]:
    """Canonical family names; an unknown one is a ValueError naming the choices."""
    if names is None:
        return list(DEFAULT_FAMILIES)
    out: list[str] = []
    for raw in names:
        key = ALIASES.get(raw.strip().lower(), raw.strip().lower())
        if key not in DEFAULT_FAMILIES:
            raise ValueError(f"unknown family {raw!r}; choose from {', '.join(DEFAULT_FAMILIES)}.")
        if key not in out:
            out.append(key)
    if not out:
        raise ValueError("no family given; choose from " + ", ".join(DEFAULT_FAMILIES) + ".")
    return out


def registry_table() -> list[dict[str, Any]]:
    """The registry as rows (name, scipy distribution, parameters), for --help and JSON."""
    rows = [
        {
            "name": f.name,
            "title": f.title,
            "scipy": f.scipy_name,
            "params": list(f.param_names),
            "support": "x > location" if f.shifted else ("x > 0" if f.positive else "all reals"),
        }
        for f in (*FAMILIES.values(), *(get(n, 0.0) for n in SHIFTED))
    ]
    rows.append(
        {
            "name": TAIL_FAMILY,
            "title": "GPD tail",
            "scipy": "genpareto",
            "params": ["threshold", "shape", "scale"],
            "support": "tail only: x > threshold",
        }
    )
    return rows
