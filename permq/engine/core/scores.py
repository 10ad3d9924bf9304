"""Scores for linear permutation statistics: mid-ranks (the one definition every engine uses),
normal scores, median scores.

Mid-ranks compare values exactly: values formed on the data's decimal grid (differences
included, see `grid.exact_difference`) tie exactly when their decimals tie. Doubled mid-ranks
are integers.
"""
from __future__ import annotations

import numpy as np


def midranks(x, axis=None, nan_policy: str = "propagate") -> np.ndarray:
    """Mid-ranks (ties share the average of their ranks), 1-based; along `axis` when given;
    nan_policy 'omit' leaves missing values missing and ranks the rest."""
    from scipy.stats import rankdata

    a = np.asarray(x, dtype=float)
    if axis is None and a.ndim <= 1:
        return rankdata(a, method="average")
    return rankdata(a, method="average", axis=-1 if axis is None else axis, nan_policy=nan_policy)


def normal_scores(x) -> np.ndarray:
    """van der Waerden scores Phi^-1(r / (N + 1)) of the mid-ranks r (tied values share one)."""
    from scipy.stats import norm

    x = np.asarray(x, dtype=float)
    return norm.ppf(midranks(x) / (len(x) + 1))


def median_scores(x) -> np.ndarray:
    """1 for values above the pooled median, 0 otherwise (Mood's median test)."""
    x = np.asarray(x, dtype=float)
    return (x > np.median(x)).astype(float)
