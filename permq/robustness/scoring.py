"""Scores of many data sets at once (rows of Y are data sets, columns the design's units): what
each family's permutation statistic is computed from. A family's robustness check (its `Check`,
robustness/spec.py) names one of these, or brings its own of the same signature:
`scores(problem, Y) -> A`.
"""
from __future__ import annotations

import numpy as np


def _midranks(Y, axis=1):
    from ..engine.core.scores import midranks

    return midranks(Y, axis=axis)


def values(problem, Y):
    """The data as they are (means, slopes, correlations, Kendall's S against a fixed order)."""
    return Y


def ranks(problem, Y):
    """Mid-ranks within each data set."""
    return _midranks(Y)


def normal_scores(problem, Y):
    """van der Waerden scores of the mid-ranks."""
    from scipy.stats import norm

    return norm.ppf(_midranks(Y) / (Y.shape[1] + 1))


def above_median(problem, Y):
    """1 above the data set's median, else 0 (the median test)."""
    return (Y > np.median(Y, axis=1, keepdims=True)).astype(float)


def signed_ranks(problem, Y):
    """Signed mid-ranks of |d|: zeros keep their place in the ranking (Pratt) and carry no sign."""
    return np.sign(Y) * _midranks(np.abs(Y))


def signs(problem, Y):
    return np.sign(Y)


def ranks_within(problem, Y):
    """Mid-ranks within each block (the problem's strata)."""
    out = np.empty_like(Y, dtype=float)
    for s in np.unique(problem.strata):
        units = np.nonzero(problem.strata == s)[0]
        out[:, units] = _midranks(Y[:, units])
    return out


def residuals(problem, Y):
    """Residuals of each data set on the reduced model (the basis's columns but the last)."""
    q = problem.basis[:, :-1]
    return Y - (Y @ q) @ q.T
