"""The textbook counterpart of a two-factor comparison: the two-way ANOVA F of each term
(normal errors, equal variances), with type II sums of squares (each main effect adjusted for
the other, the interaction for both; equal to type I and III in a balanced design), on the
error mean square of the model with the interaction."""
from __future__ import annotations

import math

from ..lazy import stats
from ..result import NormalTheory


def two_way_f(sums: dict, df: dict, df_error: int, name: str) -> NormalTheory:
    """The F of one term (key of `sums`, from engine.factorial.sums_of_squares)."""
    ss, d = sums[name], df[name]
    error = sums["error"]
    if error <= 1e-12 * max(ss + error, 1e-300):
        f = math.inf if ss > 0 else math.nan
        p = 0.0 if ss > 0 else 1.0
    else:
        f = (ss / d) / (error / df_error)
        p = float(stats.f.sf(f, d, df_error))
    return NormalTheory(f"two-way ANOVA F on {d} and {df_error} df (type II sums of squares, "
                        "normal errors)", float(f), float(d), p)
