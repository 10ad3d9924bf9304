"""Hodges-Lehmann estimates and the distribution-free intervals that go with them.

Two samples: the median of the n1*n2 pairwise differences x_i - y_j, with the interval
[D(C+1), D(n1*n2 - C)] where C is the largest c with P(U <= c) <= alpha/2 under the
Mann-Whitney null without ties. Paired / one sample: the median of the n(n+1)/2 Walsh averages,
with the same rule from the signed-rank null without ties. Median: order statistics from the
binomial(n, 1/2) law (the sign-test interval). With ties in the data the untied laws make
these intervals slightly conservative (common practice). C is read by the interval-end rule
of `core.confidence` (exact counts against alpha_side as written).
"""
from __future__ import annotations

from fractions import Fraction
from math import comb

import numpy as np
from ..lazy import stats
from ..normal.tails import normal_isf

from .core.confidence import alpha_side, last_rejected
from .core.counting import counts_all_subsets, counts_by_size
from .core.grid import exact_difference, integer_grid

# the exact no-ties laws are counted up to these sizes; beyond, normal-approximation ranks
EXACT_TWO_SAMPLE_WORK = 5e7      # n1 * n2 * (n1 + n2)
EXACT_ONE_SAMPLE_N = 400
EXACT_BINOMIAL_N = 2000


def critical(counts, side: Fraction) -> int:
    """Largest c with P(U <= c) <= alpha_side under the null law given by its counts
    (indexed from 0), or -1 when none."""
    cum = np.cumsum(np.asarray(counts, dtype=float))
    return last_rejected(cum, cum[-1], side)


def _side(level, alternative) -> Fraction:
    return alpha_side(level, alternative)


def _interval_from_order(sorted_vals, c, alternative):
    m = len(sorted_vals)
    lo, hi = -np.inf, np.inf
    if c >= 0 and c < m:
        if alternative in ("two-sided", "higher"):
            lo = float(sorted_vals[c])
        if alternative in ("two-sided", "lower"):
            hi = float(sorted_vals[m - 1 - c])
    return lo, hi


def mann_whitney_counts(n1: int, n2: int) -> np.ndarray:
    """Numbers of splits with U = u, u = 0 .. n1*n2, without ties."""
    table = counts_by_size(np.arange(n1 + n2), n1)
    row = table[n1]
    offset = n1 * (n1 - 1) // 2
    return row[offset:offset + n1 * n2 + 1]


def signed_rank_counts(n: int) -> np.ndarray:
    """Numbers of sign patterns with T+ = t, t = 0 .. n(n+1)/2, without ties."""
    return counts_all_subsets(np.arange(1, n + 1))


def binomial_critical(n: int, side: Fraction) -> int:
    """Largest c with P(B <= c) <= alpha_side for B ~ binomial(n, 1/2), or -1 (exact)."""
    if n > EXACT_BINOMIAL_N:
        cdf = stats.binom.cdf(np.arange(n + 1), n, 0.5)
        idx = np.flatnonzero(cdf <= float(side) * (1 + 1e-12))
        return int(idx[-1]) if idx.size else -1
    bound, cum, c = side * 2 ** n, 0, -1
    for k in range(n + 1):
        cum += comb(n, k)
        if cum > bound:
            break
        c = k
    return c


def pairwise_differences(x, y) -> np.ndarray:
    """Every x_i - y_j, sorted, formed on the data's decimal grid (exact decimals)."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    return np.sort(exact_difference(np.repeat(x, len(y)), np.tile(y, len(x))))


def hodges_lehmann_two_sample(x, y, level, alternative):
    x, y = np.asarray(x, float), np.asarray(y, float)
    n1, n2 = len(x), len(y)
    diffs = pairwise_differences(x, y)
    est = float(np.median(diffs))
    side = _side(level, alternative)
    exact = n1 * n2 * (n1 + n2) <= EXACT_TWO_SAMPLE_WORK
    if exact:
        c = critical(mann_whitney_counts(n1, n2), side)
    else:
        c = _normal_critical(n1 * n2 / 2, np.sqrt(n1 * n2 * (n1 + n2 + 1) / 12), side)
    return est, _interval_from_order(diffs, c, alternative), exact


def hodges_lehmann_two_sample_normal(x, y, level, alternative):
    n1, n2 = len(x), len(y)
    diffs = pairwise_differences(x, y)
    c = _normal_critical(n1 * n2 / 2, np.sqrt(n1 * n2 * (n1 + n2 + 1) / 12),
                         _side(level, alternative))
    return _interval_from_order(diffs, c, alternative)


def walsh_averages(d):
    """Every (d_i + d_j) / 2, i <= j, sorted; on the data's decimal grid, exact decimals."""
    d = np.asarray(d, float)
    i, j = np.triu_indices(len(d))
    grid = integer_grid(d)
    if grid is None:
        return np.sort((d[i] + d[j]) / 2)
    z = grid.integers
    return np.sort(grid.means(z[i] + z[j], 2))


def hodges_lehmann_one_sample(d, level, alternative):
    w = walsh_averages(d)
    n = len(d)
    est = float(np.median(w))
    side = _side(level, alternative)
    exact = n <= EXACT_ONE_SAMPLE_N
    if exact:
        c = critical(signed_rank_counts(n), side)
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
    c = binomial_critical(n, _side(level, alternative))
    return float(np.median(d)), _interval_from_order(d, c, alternative)


def median_interval_normal(d, level, alternative):
    d = np.sort(np.asarray(d, float))
    n = len(d)
    c = _normal_critical(n / 2, np.sqrt(n) / 2, _side(level, alternative))
    return _interval_from_order(d, c, alternative)


def _normal_critical(mean, sd, side):
    z = normal_isf(float(side))
    return int(np.floor(mean - z * sd))
