"""Tail areas and t intervals shared by every normal-theory counterpart."""
from __future__ import annotations

import math

from scipy import stats


def p_from_z(z, alternative) -> float:
    if alternative == "higher":
        return float(stats.norm.sf(z))
    if alternative == "lower":
        return float(stats.norm.cdf(z))
    return float(min(1.0, 2.0 * stats.norm.sf(abs(z))))


def p_from_t(t, df, alternative) -> float:
    if t != t:
        return float("nan")
    if alternative == "higher":
        return float(stats.t.sf(t, df))
    if alternative == "lower":
        return float(stats.t.cdf(t, df))
    return float(min(1.0, 2.0 * stats.t.sf(abs(t), df)))


def t_interval(est, se, df, level, alternative) -> tuple:
    """est -+ t quantile x se: two-sided at level, or one-sided ('higher' gives [lo, inf))."""
    if alternative == "two-sided":
        h = float(stats.t.isf((1 - level) / 2, df) * se)
        return float(est - h), float(est + h)
    h = float(stats.t.isf(1 - level, df) * se)
    return (float(est - h), math.inf) if alternative == "higher" else (-math.inf, float(est + h))
