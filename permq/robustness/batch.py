"""Both tests on many data sets at once: rows of Y are data sets, columns the design's units.

- `scores(problem, Y)`: the family's scores of each data set, row by row (its check's
  `scores`: robustness/scoring).
- `normal_p(problem, Y, A)`: the family's normal-theory counterpart, vectorised (its check's
  `normal_p`: robustness/counterparts).
- `permutation_p(problem, A, reference)`: the permutation p-value of each data set against
  one reference set of arrangements (all of them, or Monte Carlo draws shared by a block of
  data sets), with the p-value rules of `engine.pvalues`: the relative tolerance, the two-sided
  rule |T - E0 T| >= |t - E0 T| for linear statistics, (b + 1) / (m + 1) for Monte Carlo.
"""
from __future__ import annotations

import numpy as np

from ..engine.core.pvalues import RTOL
from .arrangements import Reference
from .counterparts import centred_within
from .problem import Problem

CHUNK_WORK = 160_000     # multiply-adds a piece of a product (below BLAS's threading threshold)


# ---------------------------------------------------------------- the family's pieces

def scores(problem: Problem, Y: np.ndarray) -> np.ndarray:
    """Each data set's scores, as the family's check computes them (robustness/scoring)."""
    return problem.check.scores(problem, Y)


def normal_test_name(problem: Problem) -> str:
    """The normal-theory test simulated here (the family's own counterpart), in words."""
    return problem.check.counterpart_name(problem)


def normal_p(problem: Problem, Y: np.ndarray, A: np.ndarray) -> np.ndarray:
    """The counterpart's p-value of each data set (robustness/counterparts)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return problem.check.normal_p(problem, Y, A)


def pair_signs(A: np.ndarray) -> np.ndarray:
    """sign(a_j - a_i) over the pairs i < j, row by row."""
    i, j = np.triu_indices(A.shape[1], 1)
    return np.sign(A[:, j] - A[:, i])


# ---------------------------------------------------------------- permutation

def observed_statistic(problem: Problem, A: np.ndarray) -> np.ndarray:
    """The permutation statistic of each data set as it stands (internal units)."""
    if problem.form == "signs":
        return A.sum(axis=1)
    if problem.form == "linear":
        return A @ problem.weights
    if problem.form == "pairs":
        return pair_signs(A) @ problem.weights
    if problem.form == "residual":
        return residual_t(problem, A @ problem.basis, (A * A).sum(axis=1))
    if problem.form == "recomputed":
        return problem.check.recompute(problem, A, problem.codes[None, :])[:, 0]
    k = len(problem.sizes)
    onehot = (problem.codes[:, None] == np.arange(k)).astype(float)
    if problem.form == "quadform":
        s = A @ onehot
        return np.einsum("dg,gh,dh->d", s, problem.matrix, s)
    return ((A @ onehot) ** 2 / problem.sizes).sum(axis=1)


def residual_t(problem: Problem, proj: np.ndarray, ee: np.ndarray) -> np.ndarray:
    """t of the slope from the projections of (permuted) residuals on the basis (last axis:
    columns), as engine.association.adjusted_t; ee: each data set's residual sum of squares."""
    sxx = float(problem.basis[:, -1] @ problem.basis[:, -1])
    c = proj[..., -1]
    rss = np.maximum(ee - (proj[..., :-1] ** 2).sum(axis=-1) - c * c / sxx, 0.0)
    return (c / sxx) / np.sqrt(rss / problem.residual_df / sxx)


def permutation_p(problem: Problem, A: np.ndarray, reference: Reference) -> np.ndarray:
    if problem.form in ("quadratic", "quadform"):
        b = _quadratic_exceedances(problem, A, reference)
    elif problem.form == "residual":
        b = _residual_exceedances(problem, A, reference)
    elif problem.form == "recomputed":
        t0 = observed_statistic(problem, A)
        t = problem.check.recompute(problem, A, reference.matrix).T     # arrangements x sets
        b = _tail_counts(problem.alternative, t, t0, RTOL * np.maximum(np.abs(t0), 1.0))
    else:
        b = _linear_exceedances(problem, A, reference)
    if reference.exact:
        return b / reference.count
    return (b + 1) / (reference.count + 1)


def _products(matrix: np.ndarray, a: np.ndarray) -> np.ndarray:
    """matrix @ a.T, one arrangement a row, in pieces small enough that a multi-threaded BLAS
    keeps each on one thread (on a busy machine, threads on tiny products stall each other;
    the cores are shared out by the simulation's own threads instead)."""
    aT = np.ascontiguousarray(a.T)
    out = np.empty((matrix.shape[0], a.shape[0]))
    rows = max(16, CHUNK_WORK // max(1, aT.size))
    for start in range(0, matrix.shape[0], rows):
        np.matmul(matrix[start:start + rows], aT, out=out[start:start + rows])
    return out


def _quadratic_exceedances(problem, A, reference):
    t0 = observed_statistic(problem, A)
    k = len(problem.sizes)
    s = _products(reference.matrix, A).reshape(-1, k, A.shape[0])
    if problem.form == "quadform":
        t = np.einsum("pgd,gh,phd->pd", s, problem.matrix, s)
    else:
        s *= s
        t = np.einsum("pgd,g->pd", s, 1.0 / problem.sizes)
    tol = RTOL * np.maximum(np.abs(t0), (A * A).sum(axis=1))
    return np.count_nonzero(t >= t0 - tol, axis=0)


def _residual_exceedances(problem, A, reference):
    t0 = observed_statistic(problem, A)
    cols = problem.basis.shape[1]
    proj = _products(reference.matrix, A).reshape(-1, cols, A.shape[0]).transpose(0, 2, 1)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = residual_t(problem, proj, (A * A).sum(axis=1))
    return _tail_counts(problem.alternative, t, t0, RTOL * np.abs(t0))


def _tail_counts(alternative, t, t0, tol):
    """How many arrangement statistics (rows of t) are at least as extreme as t0, per column."""
    if alternative == "higher":
        return np.count_nonzero(t >= t0 - tol, axis=0)
    if alternative == "lower":
        return np.count_nonzero(t <= t0 + tol, axis=0)
    np.abs(t, out=t)
    return np.count_nonzero(t >= np.abs(t0) - tol, axis=0)


def _linear_exceedances(problem, A, reference):
    """Exceedances of T - E0 T; the scores are centred first (within blocks, when there are
    blocks), which makes E0 T = 0 (every arranged weight vector has the same sum in each
    block; sign flips and pair signs have mean zero)."""
    if problem.form == "linear":
        if problem.strata is not None:
            a = centred_within(problem, A)
        else:
            a = A - A.mean(axis=1, keepdims=True)
        w_max = np.abs(problem.weights).max()
        scale = np.abs(A).sum(axis=1) * w_max
    elif problem.form == "pairs":
        a = pair_signs(A)
        scale = np.full(A.shape[0], float(a.shape[1]))
    else:
        a = A
        scale = np.abs(A).sum(axis=1)
    t0 = a @ problem.weights if problem.form != "signs" else a.sum(axis=1)
    tol = RTOL * np.maximum(np.abs(t0), scale)
    return _tail_counts(problem.alternative, _products(reference.matrix, a), t0, tol)
