"""The textbook counterparts of the blocked and stratified permutation tests.

Each function returns a `NormalTheory`. Inputs are the engine's: `values`, `groups` (codes
0..k-1 in level order) and `blocks` (codes). For two groups the effect is group 0 minus
group 1, and "higher" means group 0 tends to be larger; for Page's test "higher" means the
response rises along the level order.
"""
from __future__ import annotations

from typing import Optional

import numpy as np
from ..lazy import stats

from ..engine.blocks.complete import block_matrix, friedman_from_ranks
from ..engine.blocks.shared import design_arrays
from ..engine.core.grid import negligible
from ..engine.core.scores import midranks
from ..engine.blocks.stratified import prepare_stratified
from ..errors import BindError
from ..result import NormalTheory
from .degenerate import ALL_TIED, NO_RESIDUAL, no_residual, undefined
from .tails import p_from_z as _p_from_z, p_from_t as _p_from_t, t_interval as _t_interval


def _dummies(codes) -> np.ndarray:
    _, inverse = np.unique(codes, return_inverse=True)
    return np.eye(inverse.max() + 1)[inverse]


def _fit(x, y):
    """(residual sum of squares, rank, coefficients, pseudo-inverse of X'X) of least squares."""
    beta, _, rank, _ = np.linalg.lstsq(x, y, rcond=None)
    resid = y - x @ beta
    return float(resid @ resid), int(rank), beta, np.linalg.pinv(x.T @ x)


# ---------------------------------------------------------------- complete blocks

def additive_f(values, groups, blocks) -> NormalTheory:
    """F for treatments in the additive two-way model y = block + treatment + error."""
    v, g, bl = design_arrays(values, groups, blocks)
    xb = _dummies(bl)
    xt = _dummies(g)[:, 1:]
    rss_r, rank_r, _, _ = _fit(xb, v)
    rss_f, rank_f, _, _ = _fit(np.hstack([xb, xt]), v)
    df1, df2 = rank_f - rank_r, len(v) - rank_f
    if df1 < 1 or df2 < 1:
        raise BindError("the additive two-way model leaves no degrees of freedom for the F test")
    gain = max(rss_r - rss_f, 0.0)
    name = f"F for treatments on {df1} and {df2} df, additive two-way model (normal errors)"
    if no_residual(rss_f, float(np.sum((v - v.mean()) ** 2))):
        return undefined(name, NO_RESIDUAL, df1)
    f = (gain / df1) / (rss_f / df2)
    return NormalTheory(name, float(f), float(df1), float(stats.f.sf(f, df1, df2)))


def friedman_chi_square(values, groups, blocks, n_groups: Optional[int] = None) -> NormalTheory:
    """Friedman's statistic (mid-ranks, tie-corrected) against chi-square on k - 1 df."""
    y = block_matrix(values, groups, blocks, n_groups, "friedman")
    ranks = np.vstack([midranks(row) for row in y])
    q, d = friedman_from_ranks(ranks)
    k = y.shape[1]
    name = "chi-square approximation to Friedman's statistic (tie-corrected)"
    if not d > 0:
        return undefined(name, ALL_TIED + " within every block", k - 1)
    return NormalTheory(name, float(q), float(k - 1), float(stats.chi2.sf(q, k - 1)))


def page_normal(values, groups, blocks, alternative,
                n_groups: Optional[int] = None) -> NormalTheory:
    """Normal approximation to Page's L with its exact permutation mean and variance."""
    y = block_matrix(values, groups, blocks, n_groups, "page")
    ranks = np.vstack([midranks(row) for row in y])
    k = y.shape[1]
    c = np.arange(1, k + 1, dtype=float)
    l_obs = float(c @ ranks.sum(axis=0))
    mean = float(c.sum() * ranks.mean(axis=1).sum())
    spread = ((ranks - ranks.mean(axis=1, keepdims=True)) ** 2).sum(axis=1)
    var = float(((c - c.mean()) ** 2).sum() * spread.sum() / (k - 1))
    name = "normal approximation to Page's L (tie-corrected variance, no continuity correction)"
    if not var > 0:
        return undefined(name, ALL_TIED + " within every block")
    z = (l_obs - mean) / np.sqrt(var)
    return NormalTheory(name, float(z), None, _p_from_z(z, alternative))


# ---------------------------------------------------------------- stratified two groups

def stratified_rank_sum_normal(values, groups, blocks, alternative) -> NormalTheory:
    """Normal approximation to the plain sum over blocks of the group-0 mid-rank sums."""
    prep = prepare_stratified("stratified-ranks", values, groups, blocks)
    mean = var = 0.0
    for b in prep.blocks:
        r = b.scores
        mean += b.m * r.mean()
        var += b.m * (b.n - b.m) / (b.n * (b.n - 1)) * float(((r - r.mean()) ** 2).sum())
    name = ("normal approximation to the stratified rank sum (tie-corrected, no continuity "
            "correction)")
    if not var > 0:
        return undefined(name, ALL_TIED + " within every block")
    z = (prep.t_obs - mean) / np.sqrt(var)
    return NormalTheory(name, float(z), None, _p_from_z(z, alternative))


def stratified_mean_t(values, groups, blocks, alternative, level: float = 0.95) -> NormalTheory:
    """t for group 0 - group 1 in the additive model y = block + group + error (all units)."""
    v, g, bl = design_arrays(values, groups, blocks)
    if g.max() > 1:
        raise BindError("the stratified mean difference compares two groups")
    x = np.hstack([_dummies(bl), (g == 0).astype(float)[:, None]])
    rss, rank, beta, inv = _fit(x, v)
    if rank < x.shape[1]:
        raise BindError("no block contains both groups, so the group effect is not estimable")
    df = len(v) - rank
    if df < 1:
        raise BindError("the additive model leaves no degrees of freedom for the t test")
    est = float(beta[-1])
    name = "t for the group effect, additive model with blocks (normal errors)"
    if no_residual(rss, float(np.sum((v - v.mean()) ** 2))):
        return undefined(name, NO_RESIDUAL, df)
    se = float(np.sqrt(rss / df * inv[-1, -1]))
    t = est / se
    return NormalTheory(name, float(t), float(df), _p_from_t(t, df, alternative),
                        tuple(float(x) for x in _t_interval(est, se, df, level, alternative)),
                        "t interval for the first minus the second group, adjusted for blocks")

