"""Hodges-Lehmann estimates and the distribution-free intervals that go with them.

Two samples: the median of the n1*n2 pairwise differences x_i - y_j, with the interval
[D(C+1), D(n1*n2 - C)] where C is the largest c with P(U <= c) <= alpha/2 under the
Mann-Whitney null without ties. Paired / one sample: the median of the n(n+1)/2 Walsh averages,
with the same rule from the signed-rank null without ties. Median: order statistics from the
binomial(n, 1/2) law (the sign-test interval). With ties in the data the untied laws make
these intervals slightly conservative (common practice).
"""
from __future__ import annotations

import numpy as np
from ..lazy import stats
from ..normal.tails import normal_isf

from .core.counting import counts_all_subsets, counts_by_size

MAX_PAIRS = 20_000_000


def _critical(cdf, alpha_side: float) -> int:
    """Largest c with cdf[c] <= alpha_side (cdf indexed from 0), or -1 when none."""
    idx = np.flatnonzero(cdf <= alpha_side + 1e-12)
    return int(idx[-1]) if idx.size else -1


def _side(level, alternative):
    alpha = 1 - level
    return alpha / 2 if alternative == "two-sided" else alpha


def _interval_from_order(sorted_vals, c, alternative):
    m = len(sorted_vals)
    lo, hi = -np.inf, np.inf
    if c >= 0 and c < m:
        if alternative in ("two-sided", "higher"):
            lo = float(sorted_vals[c])
        if alternative in ("two-sided", "lower"):
            hi = float(sorted_vals[m - 1 - c])
    return lo, hi


def mann_whitney_cdf(n1: int, n2: int) -> np.ndarray:
    """P(U <= u), u = 0 .. n1*n2, without ties."""
    table = counts_by_size(np.arange(n1 + n2), n1)
    row = table[n1]
    offset = n1 * (n1 - 1) // 2
    counts = row[offset:offset + n1 * n2 + 1]
    return np.cumsum(counts) / counts.sum()


def signed_rank_cdf(n: int) -> np.ndarray:
    """P(T+ <= t), t = 0 .. n(n+1)/2, without ties."""
    c = counts_all_subsets(np.arange(1, n + 1))
    return np.cumsum(c) / c.sum()


def hodges_lehmann_two_sample(x, y, level, alternative):
    x, y = np.asarray(x, float), np.asarray(y, float)
    n1, n2 = len(x), len(y)
    diffs = np.sort((x[:, None] - y[None, :]).ravel())
    est = float(np.median(diffs))
    side = _side(level, alternative)
    exact = n1 * n2 * (n1 + n2) <= 5e7
    if exact:
        c = _critical(mann_whitney_cdf(n1, n2), side)
    else:
        c = _normal_critical(n1 * n2 / 2, np.sqrt(n1 * n2 * (n1 + n2 + 1) / 12), side)
    return est, _interval_from_order(diffs, c, alternative), exact


def hodges_lehmann_two_sample_normal(x, y, level, alternative):
    n1, n2 = len(x), len(y)
    diffs = np.sort((np.asarray(x, float)[:, None] - np.asarray(y, float)[None, :]).ravel())
    c = _normal_critical(n1 * n2 / 2, np.sqrt(n1 * n2 * (n1 + n2 + 1) / 12),
                         _side(level, alternative))
    return _interval_from_order(diffs, c, alternative)


def walsh_averages(d):
    d = np.asarray(d, float)
    i, j = np.triu_indices(len(d))
    return np.sort((d[i] + d[j]) / 2)


def hodges_lehmann_one_sample(d, level, alternative):
    w = walsh_averages(d)
    n = len(d)
    est = float(np.median(w))
    side = _side(level, alternative)
    exact = n <= 400
    if exact:
        c = _critical(signed_rank_cdf(n), side)
    else:
        c = _normal_critical(n * (n + 1) / 4, np.sqrt(n * (n + 1) * (2 * n + 1) / 24), side)
    return est, _interval_from_order(w, c, alternative), exact


def hodges_lehmann_one_sample_normal(d, level, alternative):
    n = len(d)
    c = _normal_critical(n * (n + 1) / 4, np.sqrt(n * (n + 1) * (2 * n + 1) / 24),
                         _side(level, alternative))
    return _interval_from_order(walsh_averages(d), c, alternative)


def median_interval(d, level, alternative):
    d = np.sort(np.asarray(d, float))
    n = len(d)
    c = _critical(stats.binom.cdf(np.arange(n + 1), n, 0.5), _side(level, alternative))
    return float(np.median(d)), _interval_from_order(d, c, alternative)


def median_interval_normal(d, level, alternative):
    d = np.sort(np.asarray(d, float))
    n = len(d)
    c = _normal_critical(n / 2, np.sqrt(n) / 2, _side(level, alternative))
    return _interval_from_order(d, c, alternative)


def _normal_critical(mean, sd, side):
    z = normal_isf(side)
    return int(np.floor(mean - z * sd))
