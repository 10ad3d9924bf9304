"""Scores for linear permutation statistics: mid-ranks (the one definition every engine uses),
normal scores, median scores.

Mid-ranks compare values exactly: values formed on the data's decimal grid (differences
included, see `grid.exact_difference`) tie exactly when their decimals tie. Doubled mid-ranks
are integers.
"""
from __future__ import annotations

import numpy as np
from ...lazy import stats


def midranks(x, axis=None, nan_policy: str = "propagate") -> np.ndarray:
    """Ranks 1..n, tied values sharing the mean of their ranks (as scipy.stats.rankdata's
    'average'; computed here for one sample so that a rank test does not wait for scipy.stats
    to load). Along `axis` of an array when given; nan_policy 'omit' leaves missing values
    missing and ranks the rest."""
    x = np.asarray(x, dtype=float)
    if axis is not None or x.ndim > 1:
        return stats.rankdata(x, method="average", axis=-1 if axis is None else axis,
                              nan_policy=nan_policy)
    if not np.all(np.isfinite(x)):
        return stats.rankdata(x, method="average")
    order = np.argsort(x, kind="mergesort")
    xs = x[order]
    starts = np.flatnonzero(np.r_[True, xs[1:] != xs[:-1]])
    ends = np.r_[starts[1:], x.size]
    ranks = np.empty(x.size)
    ranks[order] = np.repeat((starts + ends + 1) / 2.0, ends - starts)   # mean of start+1..end
    return ranks


def normal_scores(x) -> np.ndarray:
    """van der Waerden scores Phi^-1(r / (N + 1)) of the mid-ranks r (tied values share one)."""
    x = np.asarray(x, dtype=float)
    return stats.norm.ppf(midranks(x) / (len(x) + 1))


def median(x) -> float:
    """np.median of all the values, the same float (the middle one, or the two middle ones'
    mean, (a + b) / 2), without np.median's first call loading numpy.ma (15 ms of a start)."""
    v = np.asarray(x, dtype=float).ravel()
    n = v.size
    if n == 0 or np.isnan(v).any():
        return float("nan")
    m = n // 2
    v = np.partition(v, [m - 1, m] if n % 2 == 0 else m)
    return float(v[m]) if n % 2 else float((v[m - 1] + v[m]) / 2)


def median_scores(x) -> np.ndarray:
    """1 for values above the pooled median, 0 otherwise (Mood's median test)."""
    x = np.asarray(x, dtype=float)
    return (x > median(x)).astype(float)
