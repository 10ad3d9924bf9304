"""Where a textbook test is not defined for the data, and how that is reported.

A t or F divides by a spread; where the data have none (every difference the same, no
residual left by the model), the statistic is 0 / 0 or x / 0 and its p-value is no number
at all: it is reported as undefined with the reason ("zero spread"), never as an infinite t,
a p of 0 or nan. The same for HC3 with a point of leverage 1 (its deleted residual, the
prediction error without that point, does not exist) and for a z whose null variance is 0.

"No spread" is decided on the data as recorded: values on a decimal grid (the engines'
integer grid, up to 6 decimals) have no spread when they are one grid point; other values
when they are equal to within ZERO_RTOL of their size. Differences such as 4.85 - 4.20 and
5.95 - 5.30 then count as equal, although in floating point they differ by 1e-16.
"""
from __future__ import annotations

import math

import numpy as np

from ..result import NormalTheory

from ..engine.core.grid import DEGENERACY_RTOL as ZERO_RTOL  # one threshold (engine/core/grid.py)

ZERO_SPREAD = "zero spread"
NO_RESIDUAL = "zero residual"
LEVERAGE_ONE = "a point of leverage 1"
ALL_TIED = "all values tied"


def no_spread(values) -> bool:
    """True when the values are all equal as recorded (see the module's note)."""
    from ..engine.core.grid import integer_grid

    v = np.asarray(values, dtype=float)
    if v.size < 2:
        return True
    grid = integer_grid(v)
    if grid is not None:
        return bool(np.all(grid.integers == grid.integers[0]))
    return float(np.max(np.abs(v - v.mean()))) <= ZERO_RTOL * float(np.max(np.abs(v)))


def no_residual(residual_ss: float, total_ss: float) -> bool:
    """A model's residual sum of squares is zero (to ZERO_RTOL of the total about the mean)."""
    from ..engine.core.grid import negligible
    return bool(negligible(residual_ss, total_ss))


def undefined(test: str, why: str, df=None) -> NormalTheory:
    """The textbook test named, with no statistic and no p-value, and the reason."""
    return NormalTheory(test, math.nan, None if df is None else float(df), math.nan,
                        undefined=why)
