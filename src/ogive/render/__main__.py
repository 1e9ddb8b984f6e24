"""``python -m ogive.render [WIDTH HEIGHT] [--ascii]``: every plot kind on invented data.

A quick look at how the plots read in this terminal (font, braille support, width)
without any sketch file at hand.
"""

from __future__ import annotations

import shutil
import sys

import numpy as np

from ..fit.band import dkw_epsilon, with_dkw_band
from ..fit.curves import PlotData, cdf_from_pairs, detrended_from_pairs, pp_from_pairs, qq_from_pairs
from ..fit.qq import QuantilePairs, probability_grid
from ..fit.shift import ShiftFunction
from . import draw


def main(argv: list[str]) -> int:
    import scipy.stats as st

    ascii_only = "--ascii" in argv
    nums = [int(a) for a in argv if a.isdigit()]
    term = shutil.get_terminal_size((80, 24))
    width, height = [*nums, min(term.columns, 120), min(term.lines - 1, 30)][:2]
    # Invented scenario: a search service whose tail grew heavier than its fitted model.
    p = probability_grid(100_000)
    model, data = st.lognorm(0.45, scale=90.0), st.lognorm(0.55, scale=92.0)
    pairs = with_dkw_band(
        QuantilePairs(p, model.ppf(p), data.ppf(p), "ms", "lognormal fit", "search"),
        model.ppf,
        dkw_epsilon(100_000),
    )
    probs = np.array([0.1, 0.25, 0.5, 0.75, 0.9, 0.99, 0.999])
    delta = np.array([1.0, 2.0, 3.0, 6.0, 15.0, 90.0, 240.0])
    half = np.array([2.0, 2.0, 2.5, 3.0, 6.0, 40.0, 150.0])
    shift = ShiftFunction(
        probs=probs,
        a_values=model.ppf(probs),
        b_values=model.ppf(probs) + delta,
        delta=delta,
        delta_low=delta - half,
        delta_high=delta + half,
        confidence=0.95,
        per_interval_confidence=1 - 0.05 / 14,
        unit="ms",
        labels=("before", "after"),
    )
    kinds: list[tuple[str, PlotData]] = [
        ("qq", qq_from_pairs(pairs)),
        ("detrended", detrended_from_pairs(pairs)),
        ("pp", pp_from_pairs(pairs, epsilon=dkw_epsilon(100_000))),
        ("cdf", cdf_from_pairs(pairs)),
        ("shift", shift),
    ]
    try:
        for kind, inputs in kinds:
            print("\n".join(draw(kind, inputs, width=width, height=height, ascii_only=ascii_only)))
            print()
    except BrokenPipeError:  # piped into head: stop quietly
        return 0
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
