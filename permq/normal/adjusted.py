"""The textbook counterpart of groups compared with covariates: analysis of covariance
(least squares, normal errors, equal variances, a common slope for every group).

- two groups: the t of the group coefficient in y ~ 1 + Z + z (z: the first group's
  indicator), the adjusted difference first - second, with its t interval;
- three or more groups: the F for groups adjusted for the covariates (type II: the groups'
  sum of squares given the covariates), on the full model's residual mean square.
"""
from __future__ import annotations

import math

import numpy as np

from ..lazy import stats
from ..result import NormalTheory
from .tails import p_from_t, t_interval


def _fit(y, columns):
    u, s, _ = np.linalg.svd(columns, full_matrices=False)
    q = u[:, s > 1e-10 * s[0]]
    resid = y - q @ (q.T @ y)
    return float(resid @ resid), q.shape[1]


def ancova(values, groups, covariates, alternative: str, level: float) -> NormalTheory:
    y = np.asarray(values, float)
    g = np.asarray(groups)
    n = len(y)
    base = np.column_stack([np.ones(n), np.asarray(covariates, float).reshape(n, -1)])
    k = int(g.max()) + 1
    dummies = (g[:, None] == np.arange(1, k)).astype(float)
    rss_reduced, _ = _fit(y, base)
    rss, rank = _fit(y, np.hstack([base, dummies]))
    df = n - rank
    if k == 2:
        return _two_groups(y, g, base, rss, df, alternative, level)
    ss = max(rss_reduced - rss, 0.0)
    if df < 1 or rss <= 1e-12 * max(ss + rss, 1e-300):
        f, p = (math.inf, 0.0) if ss > 0 else (math.nan, 1.0)
    else:
        f = (ss / (k - 1)) / (rss / df)
        p = float(stats.f.sf(f, k - 1, df))
    return NormalTheory(f"ANCOVA F on {k - 1} and {df} df (groups adjusted for the covariates; "
                        "normal errors, common slopes)", float(f), float(k - 1), p)


def _two_groups(y, g, base, rss, df, alternative, level) -> NormalTheory:
    z = (g == 0).astype(float)
    u, s, _ = np.linalg.svd(base, full_matrices=False)
    q = u[:, s > 1e-10 * s[0]]
    mz = z - q @ (q.T @ z)
    szz = float(mz @ mz)
    tau = float(mz @ y / szz)
    if df < 1:
        return NormalTheory("ANCOVA t for the group difference: no residual degrees of freedom",
                            math.nan, None, math.nan)
    se = math.sqrt(rss / df / szz)
    t = tau / se if se > 0 else math.copysign(math.inf, tau) if tau else math.nan
    interval = t_interval(tau, se, df, level, alternative) if se > 0 else None
    return NormalTheory("ANCOVA t for the group difference adjusted for the covariates (normal "
                        "errors, common slopes)", float(t), float(df), p_from_t(t, df, alternative),
                        interval, "least-squares t interval of the adjusted difference")
