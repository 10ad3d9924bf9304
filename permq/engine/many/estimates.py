"""Estimates and intervals for many responses at once (two groups), each from its own values.

- means: the difference in means first - second with the Welch t interval (normal theory,
  unequal variances, Welch-Satterthwaite degrees of freedom);
- ranks: the Hodges-Lehmann shift (median of the n1*n2 differences x_i - y_j) with the
  distribution-free interval [D(C+1), D(n1 n2 - C)], C from the Mann-Whitney law without ties
  (as the one-response statement gives it; with ties slightly conservative, common practice).

Intervals are per response, at the stated level, and are not adjusted for multiplicity.
Inputs are (units, responses) matrices with NaN where a value is missing.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np
from ...lazy import stats

from ..core.confidence import alpha_side
from ..rankintervals import critical, mann_whitney_counts

CHUNK_ELEMENTS = 4_000_000


def welch(x1, x2, level: float, alternative: str):
    """(difference in means, (lo, hi) arrays) per column; x1, x2: (n_g, m) with NaN."""
    n1 = np.count_nonzero(~np.isnan(x1), axis=0).astype(float)
    n2 = np.count_nonzero(~np.isnan(x2), axis=0).astype(float)
    est = np.nanmean(x1, axis=0) - np.nanmean(x2, axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        v1 = np.nanvar(x1, axis=0, ddof=1) / n1
        v2 = np.nanvar(x2, axis=0, ddof=1) / n2
        se = np.sqrt(v1 + v2)
        df = (v1 + v2) ** 2 / (v1 ** 2 / (n1 - 1) + v2 ** 2 / (n2 - 1))
    df = np.where(np.isfinite(df) & (df > 0), df, n1 + n2 - 2)
    side = (1 - level) / 2 if alternative == "two-sided" else 1 - level
    h = stats.t.isf(side, df) * se
    lo, hi = est - h, est + h
    if alternative == "higher":
        hi = np.full_like(hi, np.inf)
    elif alternative == "lower":
        lo = np.full_like(lo, -np.inf)
    bad = ~np.isfinite(se) | (n1 < 2) | (n2 < 2)
    return est, np.where(bad, np.nan, lo), np.where(bad, np.nan, hi)


@lru_cache(maxsize=256)
def _critical(n1: int, n2: int, side) -> int:
    return critical(mann_whitney_counts(n1, n2), side)


def hodges_lehmann(x1, x2, level: float, alternative: str):
    """(shift, lo, hi) per column; x1, x2: (n_g, m) with NaN."""
    m = x1.shape[1]
    est = np.full(m, np.nan)
    lo = np.full(m, np.nan)
    hi = np.full(m, np.nan)
    pairs = x1.shape[0] * x2.shape[0]
    step = max(1, CHUNK_ELEMENTS // max(1, pairs))
    side = alpha_side(level, alternative)
    for a in range(0, m, step):
        b = min(m, a + step)
        d = (x1[:, None, a:b] - x2[None, :, a:b]).reshape(pairs, b - a)
        d = np.sort(d, axis=0)                           # missing pairs (NaN) sort last
        n1 = np.count_nonzero(~np.isnan(x1[:, a:b]), axis=0)
        n2 = np.count_nonzero(~np.isnan(x2[:, a:b]), axis=0)
        cols = np.arange(b - a)
        count = n1 * n2
        ok = count > 0
        half_lo = np.where(ok, (count - 1) // 2, 0)
        half_hi = np.where(ok, count // 2, 0)
        est[a:b] = np.where(ok, (d[half_lo, cols] + d[half_hi, cols]) / 2, np.nan)
        crit = np.array([_critical(int(p), int(q), side) if p and q else -1
                         for p, q in zip(n1, n2)])
        has = ok & (crit >= 0) & (crit < count)          # else the interval is the line
        c = np.where(has, crit, 0)
        top = np.where(has, count - 1 - c, 0)
        lo[a:b] = np.where(has, d[c, cols], -np.inf)
        hi[a:b] = np.where(has, d[top, cols], np.inf)
        if alternative == "higher":
            hi[a:b] = np.inf
        elif alternative == "lower":
            lo[a:b] = -np.inf
        lo[a:b] = np.where(ok, lo[a:b], np.nan)
        hi[a:b] = np.where(ok, hi[a:b], np.nan)
    return est, lo, hi
