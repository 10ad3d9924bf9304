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
from .core.counting import counts_all_subsets, rescale
from .core.grid import common_grid, integer_grid
from .core.scores import median

# the exact no-ties laws are counted up to these sizes (two samples: EXACT_LAW_OPS below);
# beyond, normal-approximation ranks
EXACT_ONE_SAMPLE_N = 400
EXACT_BINOMIAL_N = 2000


def critical(counts, side: Fraction) -> int:
    """Largest c with P(U <= c) <= alpha_side under the null law given by its counts
    (indexed from 0), or -1 when none."""
    cum = np.cumsum(np.asarray(counts, dtype=float))
    return last_rejected(cum, cum[-1], side)


def _side(level, alternative) -> Fraction:
    return alpha_side(level, alternative)


def _interval_from_order(values, c, alternative):
    """The order statistics c and m-1-c (from 0) of the values, by selection (no sort)."""
    values = np.asarray(values, dtype=float)
    m = len(values)
    lo, hi = -np.inf, np.inf
    if c >= 0 and c < m:
        low, high = values[c], values[m - 1 - c]
        if not (values.size < 2 or np.all(values[1:] >= values[:-1])):     # not yet sorted
            picked = np.partition(values, sorted({c, m - 1 - c}))
            low, high = picked[c], picked[m - 1 - c]
        if alternative in ("two-sided", "higher"):
            lo = float(low)
        if alternative in ("two-sided", "lower"):
            hi = float(high)
    return lo, hi


def mann_whitney_counts(n1: int, n2: int) -> np.ndarray:
    """Numbers of the C(n1 + n2, n1) splits with U = u, u = 0 .. n1*n2, without ties (times a
    power of two past 2^960: use ratios).

    The law's generating function is the Gaussian binomial coefficient
    prod_{i=1..m} (1 - q^(n+i)) / (1 - q^i), m = min(n1, n2), n = max(n1, n2); multiplying
    by (1 - q^(n+i)) is one shifted difference and dividing by (1 - q^i) a running sum along
    each residue class mod i, so the law costs about m passes over a one-dimensional array
    (Harding, E. F. (1984), An efficient, minimal-storage procedure for calculating the
    Mann-Whitney U, generalized U and similar distributions, Applied Statistics 33, 1-6).
    Both steps read only lower powers, so the half up to n1*n2/2 is formed and mirrored."""
    m, n = min(n1, n2), max(n1, n2)
    top = m * n // 2
    c = np.zeros(top + 1)
    c[0] = 1.0
    for i in range(1, m + 1):
        a = n + i
        if a <= top:
            c[a:] -= c[:top + 1 - a]                 # numpy reads the right side first
        rows = -(-(top + 1) // i)
        padded = np.zeros(rows * i)
        padded[:top + 1] = c
        np.cumsum(padded.reshape(rows, i), axis=0, out=padded.reshape(rows, i))
        c = padded[:top + 1]
        if i % 16 == 0:
            rescale(c)
    np.maximum(c, 0.0, out=c)                        # rounding noise below the smallest count
    rest = m * n + 1 - c.size
    return np.concatenate([c, c[:rest][::-1]])


def mann_whitney_cdf(n1: int, n2: int) -> np.ndarray:
    """P(U <= u), u = 0 .. n1*n2, without ties."""
    counts = mann_whitney_counts(n1, n2)
    return np.cumsum(counts) / counts.sum()


def mann_whitney_ops(n1: int, n2: int) -> float:
    """Array operations of `mann_whitney_counts` (two or three passes a step)."""
    m, n = min(n1, n2), max(n1, n2)
    return 3.0 * m * (m * n / 2 + 1)


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


# the exact no-ties law is formed when it costs at most this many array operations (about
# 0.3 s; 300 + 300 is within); past it, normal-approximation ranks
EXACT_LAW_OPS = 2e7


def pairwise_differences(x, y) -> np.ndarray:
    """Every x_i - y_j (unsorted), formed on the data's decimal grid (exact decimals)."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    grid = common_grid(x, y) if x.size and y.size else None
    if grid is None:
        return (x[:, None] - y[None, :]).ravel()
    z = grid.integers
    return grid.differences((z[:x.size, None] - z[None, x.size:]).ravel())


def two_sample_critical(n1: int, n2: int, level, alternative) -> tuple:
    """(c, exact): the order statistic (from 0) of the pairwise differences that ends the
    interval, from the exact no-ties Mann-Whitney law where it is formed, else normal ranks."""
    side = _side(level, alternative)
    if mann_whitney_ops(n1, n2) <= EXACT_LAW_OPS:
        return critical(mann_whitney_counts(n1, n2), side), True
    return two_sample_normal_critical(n1, n2, level, alternative), False


def two_sample_normal_critical(n1: int, n2: int, level, alternative) -> int:
    return _normal_critical(n1 * n2 / 2, np.sqrt(n1 * n2 * (n1 + n2 + 1) / 12),
                            _side(level, alternative))


def hodges_lehmann_two_sample(x, y, level, alternative):
    x, y = np.asarray(x, float), np.asarray(y, float)
    diffs = pairwise_differences(x, y)
    est = float(median(diffs))
    c, exact = two_sample_critical(len(x), len(y), level, alternative)
    return est, _interval_from_order(diffs, c, alternative), exact


def hodges_lehmann_two_sample_normal(x, y, level, alternative):
    c = two_sample_normal_critical(len(x), len(y), level, alternative)
    return _interval_from_order(pairwise_differences(x, y), c, alternative)


def walsh_averages(d):
    """The n(n+1)/2 Walsh averages (d_i + d_j) / 2, i <= j, unsorted; on the data's decimal
    grid, exact decimals."""
    d = np.asarray(d, float)
    i, j = np.triu_indices(len(d))
    grid = integer_grid(d)
    if grid is None:
        return (d[i] + d[j]) / 2
    z = grid.integers
    return grid.means(z[i] + z[j], 2)


def one_sample_critical(n: int, level, alternative) -> tuple:
    """(c, exact): the order statistic (from 0) of the Walsh averages that ends the interval,
    from the exact no-ties signed-rank law up to EXACT_ONE_SAMPLE_N, else normal ranks."""
    if n <= EXACT_ONE_SAMPLE_N:
        return critical(signed_rank_counts(n), _side(level, alternative)), True
    return one_sample_normal_critical(n, level, alternative), False


def one_sample_normal_critical(n: int, level, alternative) -> int:
    return _normal_critical(n * (n + 1) / 4, np.sqrt(n * (n + 1) * (2 * n + 1) / 24),
                            _side(level, alternative))


def hodges_lehmann_one_sample(d, level, alternative):
    w = walsh_averages(d)
    est = float(median(w))
    c, exact = one_sample_critical(len(d), level, alternative)
    return est, _interval_from_order(w, c, alternative), exact


def hodges_lehmann_one_sample_normal(d, level, alternative):
    c = one_sample_normal_critical(len(d), level, alternative)
    return _interval_from_order(walsh_averages(d), c, alternative)


def sign_critical(n: int, level, alternative) -> int:
    """The order statistic (from 0) that ends the sign-test interval (binomial law)."""
    return binomial_critical(n, _side(level, alternative))


def sign_normal_critical(n: int, level, alternative) -> int:
    return _normal_critical(n / 2, np.sqrt(n) / 2, _side(level, alternative))


def median_interval(d, level, alternative):
    d = np.sort(np.asarray(d, float))
    c = sign_critical(len(d), level, alternative)
    return float(median(d)), _interval_from_order(d, c, alternative)


def median_interval_normal(d, level, alternative):
    d = np.sort(np.asarray(d, float))
    c = sign_normal_critical(len(d), level, alternative)
    return _interval_from_order(d, c, alternative)


def _normal_critical(mean, sd, side):
    z = normal_isf(float(side))
    return int(np.floor(mean - z * sd))
