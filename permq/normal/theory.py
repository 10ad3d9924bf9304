"""The textbook counterparts of the permutation tests of two samples and of paired data.

Each function returns a `NormalTheory`: the test's name in words, statistic, degrees of
freedom, p-value for the same alternative, and where there is one, the normal-theory interval
for the same estimate.
"""
from __future__ import annotations

import numpy as np

from ..engine.rankintervals import (
    hodges_lehmann_one_sample_normal, hodges_lehmann_two_sample_normal, median_interval_normal)
from ..engine.core.scores import median_scores, midranks, normal_scores
from ..result import NormalTheory
from .degenerate import ALL_TIED, ZERO_SPREAD, no_spread, undefined

NO_NONZERO = "no nonzero differences"
from .tails import p_from_z as _p_from_z, p_from_t as _p_from_t, t_interval as _t_interval


def _z_test(name, s, mean, var, alternative, interval=None, how="",
            why=ALL_TIED) -> NormalTheory:
    """z = (s - mean) / sd; undefined when the null variance is 0 (tied scores take equal
    values exactly, so the test is exact)."""
    if not var > 0:
        return undefined(name, why)
    z = float((s - mean) / np.sqrt(var))
    return NormalTheory(name, z, None, _p_from_z(z, alternative), interval, how)


# ---------------------------------------------------------------- two samples

def welch_t(x, y, level, alternative) -> NormalTheory:
    """Welch's t for the difference in means, with its interval."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    n1, n2 = len(x), len(y)
    name = "Welch t (unequal variances)"
    if n1 < 2 or n2 < 2:
        return undefined(name, "a group has a single value")
    if no_spread(x) and no_spread(y):
        return undefined(name, ZERO_SPREAD)
    v1, v2 = x.var(ddof=1) / n1, y.var(ddof=1) / n2
    v1, v2 = (0.0 if no_spread(x) else v1), (0.0 if no_spread(y) else v2)
    se = np.sqrt(v1 + v2)
    df = (v1 + v2) ** 2 / (v1 ** 2 / (n1 - 1) + v2 ** 2 / (n2 - 1))
    est = x.mean() - y.mean()
    t = est / se
    return NormalTheory(name, t, df, _p_from_t(t, df, alternative),
                        _t_interval(est, se, df, level, alternative), "Welch t interval")


def _score_sum_z(name, score, x, y, alternative, interval=None, how="") -> NormalTheory:
    """The normal approximation to the first group's score sum (permutation mean and
    variance of the pooled scores)."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    n1, n2 = len(x), len(y)
    N = n1 + n2
    a = score(np.concatenate([x, y]))
    mean = n1 * a.mean()
    var = n1 * n2 / (N * (N - 1)) * ((a - a.mean()) ** 2).sum()
    return _z_test(name, a[:n1].sum(), mean, var, alternative, interval, how)


def rank_sum_z(x, y, level, alternative) -> NormalTheory:
    return _score_sum_z(
        "normal approximation to the rank sum (tie-corrected, no continuity correction)",
        midranks, x, y, alternative, hodges_lehmann_two_sample_normal(x, y, level, alternative),
        "order statistics of the pairwise differences at normal-approximation ranks")


def normal_scores_z(x, y, level, alternative) -> NormalTheory:
    return _score_sum_z("normal approximation to the normal-scores sum", normal_scores, x, y,
                        alternative)


def median_count_z(x, y, level, alternative) -> NormalTheory:
    return _score_sum_z("normal approximation to the count above the median", median_scores,
                        x, y, alternative)


# ---------------------------------------------------------------- paired / one sample

def one_sample_t(d, level, alternative) -> NormalTheory:
    """The one-sample t on the differences, with its interval."""
    d = np.asarray(d, float)
    n = len(d)
    name = "one-sample t on the differences"
    if n < 2:
        return undefined(name, "a single difference")
    if no_spread(d):
        return undefined(name, ZERO_SPREAD, n - 1)
    se = d.std(ddof=1) / np.sqrt(n)
    est = d.mean()
    t = est / se
    return NormalTheory(name, t, n - 1, _p_from_t(t, n - 1, alternative),
                        _t_interval(est, se, n - 1, level, alternative), "t interval")


def signed_rank_z(d, level, alternative) -> NormalTheory:
    d = np.asarray(d, float)
    nz = d[d != 0]
    r = midranks(np.abs(d))[d != 0]
    tplus = r[nz > 0].sum()
    return _z_test("normal approximation to the signed-rank sum (tie- and zero-corrected,"
                   " no continuity correction)", tplus, r.sum() / 2, (r ** 2).sum() / 4,
                   alternative, hodges_lehmann_one_sample_normal(d, level, alternative),
                   "order statistics of the Walsh averages at normal-approximation ranks",
                   NO_NONZERO)


def sign_z(d, level, alternative) -> NormalTheory:
    d = np.asarray(d, float)
    nz = d[d != 0]
    m = len(nz)
    return _z_test("normal approximation to the sign count (no continuity correction)",
                   (nz > 0).sum(), m / 2, m / 4, alternative,
                   median_interval_normal(d, level, alternative),
                   "order statistics at normal-approximation ranks", NO_NONZERO)
