"""Adjusted p-values for a family of tests.

From the raw p-values alone:
- "none": the raw p-values;
- "holm": Holm's step-down rule, adj p_(i) = max_{j <= i} min(1, (m - j + 1) p_(j));
  its single-step form is Bonferroni, min(1, m p);
- "fdr": the Benjamini-Hochberg step-up rule, adj p_(i) = min_{j >= i} min(1, m p_(j) / j)
  (controls the false discovery rate, not the family-wise error).

From the joint permutation distribution (Westfall and Young, 1993, "Resampling-Based Multiple
Testing", algorithms 2.5 to 2.8), over a reference set of R arrangements that holds the observed
one (every arrangement for an exact run; the observed plus the draws for Monte Carlo):
- "max-t" single-step: adj p_j = #{r : max_k T_k(r) >= t_j} / R;
- "max-t" step-down: tests in order of decreasing observed t (r_1, r_2, ...),
  p~_(i) = #{r : max_{l >= i} T_(l)(r) >= t_(i)} / R, then adj p_(i) = max_{l <= i} p~_(l);
- "min-p": the same with each statistic replaced by its own permutation p-value, so that tests
  on different scales weigh alike (p_k(r) = #{r' : T_k(r') >= T_k(r)} / R; smaller is more
  extreme).

"At least as extreme" uses the tolerance rule of `pvalues` (t - tol), held per test in `tol`.
The functions with `_matrix` in their names keep the whole R x m null matrix in memory: they
serve small families (the pairs of `pairwise`) and are the plain statement of the rules that the
batched engine (`engine/many.py`) follows.
"""
from __future__ import annotations

import numpy as np

from ..core.pvalues import RTOL

METHODS = ("none", "holm", "fdr", "max-t", "min-p")


def tolerances(t_obs) -> np.ndarray:
    """Per-test tolerance for statistics on a standardised scale (pvalues' rule, scale 1)."""
    return RTOL * np.maximum(np.abs(np.asarray(t_obs, dtype=float)), 1.0)


# ---------------------------------------------------------------- from raw p-values

def bonferroni(p) -> np.ndarray:
    p = np.asarray(p, dtype=float)
    return np.minimum(1.0, p * p.size)


def holm(p) -> np.ndarray:
    p = np.asarray(p, dtype=float)
    m = p.size
    order = np.argsort(p, kind="stable")
    stepped = np.minimum(1.0, (m - np.arange(m)) * p[order])
    out = np.empty(m)
    out[order] = np.maximum.accumulate(stepped)
    return out


def benjamini_hochberg(p) -> np.ndarray:
    p = np.asarray(p, dtype=float)
    m = p.size
    order = np.argsort(p, kind="stable")
    stepped = np.minimum(1.0, m * p[order] / np.arange(1, m + 1))
    out = np.empty(m)
    out[order] = np.minimum.accumulate(stepped[::-1])[::-1]
    return out


def from_raw(p, method: str, step: str) -> np.ndarray:
    """Adjustments that need only the raw p-values."""
    if method == "none":
        return np.asarray(p, dtype=float).copy()
    if method == "holm":
        return bonferroni(p) if step == "single-step" else holm(p)
    if method == "fdr":
        return benjamini_hochberg(p)
    raise ValueError(f"{method} needs the joint permutation distribution")


def enforce_step_down(counts_in_order) -> np.ndarray:
    """Successive maxima: an adjusted p never falls below the one of a more extreme test."""
    return np.maximum.accumulate(np.asarray(counts_in_order))


# ---------------------------------------------------------------- whole-matrix forms

def exceedance_counts(null, t_obs, tol) -> np.ndarray:
    """#{r : T_j(r) >= t_j - tol_j} for every test j (R x m null)."""
    return np.count_nonzero(null >= (t_obs - tol)[None, :], axis=0)


def max_t_matrix(null, t_obs, tol, step: str) -> np.ndarray:
    """Westfall-Young max-T adjusted p-values from an R x m matrix of null statistics."""
    null = np.asarray(null, dtype=float)
    t_obs = np.asarray(t_obs, dtype=float)
    R, m = null.shape
    thr = t_obs - tol
    if step == "single-step":
        top = null.max(axis=1)
        return np.count_nonzero(top[:, None] >= thr[None, :], axis=0) / R
    order = np.argsort(-t_obs, kind="stable")
    ordered = null[:, order]
    tails = np.maximum.accumulate(ordered[:, ::-1], axis=1)[:, ::-1]   # max over l >= i
    counts = np.count_nonzero(tails >= thr[order][None, :], axis=0)
    out = np.empty(m)
    out[order] = enforce_step_down(counts) / R
    return out


def arrangement_counts(null, tol) -> np.ndarray:
    """C[r, j] = #{r' : T_j(r') >= T_j(r) - tol_j}: each arrangement's own p-value times R."""
    null = np.asarray(null, dtype=float)
    R, m = null.shape
    out = np.empty((R, m), dtype=np.int64)
    for j in range(m):
        ascending = np.sort(null[:, j])
        out[:, j] = R - np.searchsorted(ascending, null[:, j] - tol[j], side="left")
    return out


def min_p_matrix(null, t_obs, tol, step: str) -> np.ndarray:
    """Westfall-Young min-P adjusted p-values from an R x m matrix of null statistics."""
    null = np.asarray(null, dtype=float)
    R, m = null.shape
    c_obs = exceedance_counts(null, np.asarray(t_obs, dtype=float), tol)   # raw p times R
    per_arrangement = arrangement_counts(null, tol)
    if step == "single-step":
        low = per_arrangement.min(axis=1)
        return np.count_nonzero(low[:, None] <= c_obs[None, :], axis=0) / R
    order = np.lexsort((-np.asarray(t_obs, dtype=float), c_obs))   # smallest p first
    ordered = per_arrangement[:, order]
    tails = np.minimum.accumulate(ordered[:, ::-1], axis=1)[:, ::-1]   # min over l >= i
    counts = np.count_nonzero(tails <= c_obs[order][None, :], axis=0)
    out = np.empty(m)
    out[order] = enforce_step_down(counts) / R
    return out


def from_matrix(null, t_obs, method: str, step: str) -> tuple[np.ndarray, np.ndarray]:
    """(raw p, adjusted p) for any method, from the whole null matrix."""
    t_obs = np.asarray(t_obs, dtype=float)
    tol = tolerances(t_obs)
    raw = exceedance_counts(np.asarray(null, dtype=float), t_obs, tol) / null.shape[0]
    if method == "max-t":
        return raw, max_t_matrix(null, t_obs, tol, step)
    if method == "min-p":
        return raw, min_p_matrix(null, t_obs, tol, step)
    return raw, from_raw(raw, method, step)
