"""How many decimals the data were written with, for showing their summaries.

Group summaries (mean, median, sd) are shown with the data's own decimals plus one, the same
for every group of a block, so that groups which differ look different (means 10.0115 and
10.0125 of data written to 3 decimals), and nothing is shown that the data do not carry.
Data on no decimal grid (up to 6 decimals) get SIGNIFICANT digits of their largest value.
"""
from __future__ import annotations

import math
from typing import Optional

import numpy as np

SIGNIFICANT = 4
MOST = 8                 # never more decimals than this


def written(values) -> Optional[int]:
    """The decimals the values were written with (0 for whole numbers), or None when they lie
    on no decimal grid of up to 6 decimals."""
    from ..engine.core.grid import integer_grid

    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return 0
    grid = integer_grid(v)
    return None if grid is None else grid.decimals


def for_summaries(values) -> int:
    """Decimals for the summaries of one response: its own decimals plus one."""
    d = written(values)
    if d is not None:
        return min(d + 1, MOST)
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    top = float(np.max(np.abs(v), initial=0.0))
    if top == 0:
        return 1
    return int(min(MOST, max(0, SIGNIFICANT - 1 - math.floor(math.log10(top)))))


def for_design(design) -> Optional[list]:
    """Decimals for each row of a result's group summaries, in the order the families give
    them: one value for the groups of one response, one a variable for associations."""
    kind = getattr(design, "kind", "")
    if kind == "association":
        return [for_summaries(design.y), for_summaries(design.x)]
    if hasattr(design, "x") and hasattr(design, "y"):            # two samples
        d = for_summaries(np.concatenate([design.x, design.y]))
        return [d, d]
    if hasattr(design, "d"):                                       # paired, one sample
        return [for_summaries(design.d + design.reference)]
    if hasattr(design, "values") and getattr(design.values, "ndim", 1) == 1:
        return [for_summaries(design.values)] * len(design.labels)
    return None
