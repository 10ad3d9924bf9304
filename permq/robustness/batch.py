"""Both tests on many data sets at once: rows of Y are data sets, columns the design's units.

- `scores(problem, Y)`: the family's scores of each data set (values, mid-ranks, normal
  scores, above-the-median indicators, signed ranks, signs, mid-ranks within blocks,
  residuals of the reduced model), row by row.
- `normal_p(problem, Y, A)`: the family's normal-theory counterpart, the same formulas as
  `permq.normal` (Welch t, t on the differences, normal approximations, one-way F,
  chi-square approximations, linear-trend t, the t test of the slope, the blocked tests'
  F, t and normal approximations, Kendall's and Jonckheere-Terpstra's normal approximations),
  vectorised.
- `permutation_p(problem, A, reference)`: the permutation p-value of each data set against
  one reference set of arrangements (all of them, or Monte Carlo draws shared by a block of
  data sets), with the p-value rules of `engine.pvalues`: the relative tolerance, the two-sided
  rule |T - E0 T| >= |t - E0 T| for linear statistics, (b + 1) / (m + 1) for Monte Carlo.
"""
from __future__ import annotations

import numpy as np
from scipy import stats

from ..engine.core.pvalues import RTOL
from ..engine.core.scores import midranks
from .arrangements import Reference
from .problem import Problem

CHUNK_WORK = 160_000     # multiply-adds a piece of a product (below BLAS's threading threshold)


# ---------------------------------------------------------------- scores

def _ranks(Y):
    return midranks(Y, axis=1)


def _ranks_within(problem: Problem, Y):
    out = np.empty_like(Y, dtype=float)
    for s in np.unique(problem.strata):
        units = np.nonzero(problem.strata == s)[0]
        out[:, units] = midranks(Y[:, units], axis=1)
    return out


def _residuals(problem: Problem, Y):
    """Residuals of each data set on the reduced model (the basis's columns but the last)."""
    q = problem.basis[:, :-1]
    return Y - (Y @ q) @ q.T


def scores(problem: Problem, Y: np.ndarray) -> np.ndarray:
    fam, kind = problem.family, problem.kind
    if kind in ("paired", "one-sample"):
        if fam == "means":
            return Y
        if fam == "ranks":   # zeros keep their place in the ranking (Pratt) and carry no sign
            return np.sign(Y) * _ranks(np.abs(Y))
        return np.sign(Y)
    if kind == "blocked":
        return _ranks_within(problem, Y) if fam in ("stratified-ranks", "friedman", "page") else Y
    if problem.form == "residual":
        return _residuals(problem, Y)
    if fam in ("means", "slope", "pearson", "kendall") or problem.form == "pairs":
        return Y
    r = _ranks(Y)
    if fam in ("ranks", "spearman"):
        return r
    if fam == "normal-scores":
        return stats.norm.ppf(r / (Y.shape[1] + 1))
    if fam == "medians":
        return (Y > np.median(Y, axis=1, keepdims=True)).astype(float)
    raise KeyError(fam)


def pair_signs(A: np.ndarray) -> np.ndarray:
    """sign(a_j - a_i) over the pairs i < j, row by row."""
    i, j = np.triu_indices(A.shape[1], 1)
    return np.sign(A[:, j] - A[:, i])


# ---------------------------------------------------------------- normal theory

def normal_test_name(problem: Problem) -> str:
    """The normal-theory test simulated here (the family's own counterpart), in words."""
    fam, kind = problem.family, problem.kind
    if kind == "two-sample":
        return {"means": "Welch t", "ranks": "normal approximation to the rank sum",
                "normal-scores": "normal approximation to the normal-scores sum",
                "medians": "normal approximation to the count above the median"}[fam]
    if kind in ("paired", "one-sample"):
        return {"means": "one-sample t on the differences" if kind == "paired"
                else "one-sample t", "ranks": "normal approximation to the signed-rank sum",
                "signs": "normal approximation to the sign count"}[fam]
    if kind == "k-sample":
        return {"means": "one-way ANOVA F", "ranks": "Kruskal-Wallis chi-square approximation",
                "normal-scores": "van der Waerden chi-square approximation",
                "medians": "median test chi-square approximation"}[fam]
    if kind == "ordered":
        return "linear trend t" if fam == "means" else \
            "Jonckheere-Terpstra normal approximation"
    if kind == "blocked":
        return {"stratified-means": "t for the group effect, additive model with blocks",
                "stratified-ranks": "normal approximation to the stratified rank sum",
                "friedman": "chi-square approximation to Friedman's statistic",
                "within-block-f": "F for treatments, additive two-way model",
                "page": "normal approximation to Page's L"}[fam]
    if problem.form == "residual":
        return "least-squares t test of the slope adjusted for covariates"
    return {"slope": "least-squares t test of the slope", "pearson": "t test of Pearson's r",
            "spearman": "t approximation for Spearman's rho",
            "kendall": "normal approximation for Kendall's S"}[fam]


def t_tails(t, df, alternative):
    """p-values of many t statistics (the rule of normal.tails.p_from_t, vectorised)."""
    if alternative == "higher":
        return stats.t.sf(t, df)
    if alternative == "lower":
        return stats.t.cdf(t, df)
    return np.minimum(1.0, 2 * stats.t.sf(np.abs(t), df))


def z_tails(z, alternative):
    """p-values of many z statistics (the rule of normal.tails.p_from_z, vectorised)."""
    if alternative == "higher":
        return stats.norm.sf(z)
    if alternative == "lower":
        return stats.norm.cdf(z)
    return np.minimum(1.0, 2 * stats.norm.sf(np.abs(z)))


def normal_p(problem: Problem, Y: np.ndarray, A: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        kind = problem.kind
        if kind == "two-sample":
            return _two_sample_normal(problem, Y, A)
        if kind in ("paired", "one-sample"):
            return _one_sample_normal(problem, Y, A)
        if kind == "k-sample":
            return _k_sample_normal(problem, Y, A)
        if kind == "ordered":
            return _trend_normal(problem, Y) if problem.family == "means" else \
                _jonckheere_normal(problem, A)
        if kind == "blocked":
            return _BLOCKED_NORMAL[problem.family](problem, Y, A)
        if problem.form == "residual":
            return t_tails(observed_statistic(problem, A), problem.residual_df, problem.alternative)
        if problem.family == "kendall":
            return _kendall_normal(problem, A)
        return _slope_normal(problem, A)


def _two_sample_normal(pb, Y, A):
    g1 = pb.codes == 0
    n1, n2 = int(g1.sum()), int((~g1).sum())
    if pb.family == "means":
        x, y = Y[:, g1], Y[:, ~g1]
        v1, v2 = x.var(axis=1, ddof=1) / n1, y.var(axis=1, ddof=1) / n2
        se = np.sqrt(v1 + v2)
        df = (v1 + v2) ** 2 / (v1 ** 2 / (n1 - 1) + v2 ** 2 / (n2 - 1))
        return t_tails((x.mean(axis=1) - y.mean(axis=1)) / se, df, pb.alternative)
    N = n1 + n2
    abar = A.mean(axis=1)
    var = n1 * n2 / (N * (N - 1)) * ((A - abar[:, None]) ** 2).sum(axis=1)
    z = (A[:, g1].sum(axis=1) - n1 * abar) / np.sqrt(var)
    return z_tails(np.where(var > 0, z, 0.0), pb.alternative)


def _one_sample_normal(pb, Y, A):
    n = Y.shape[1]
    if pb.family == "means":
        t = Y.mean(axis=1) / (Y.std(axis=1, ddof=1) / np.sqrt(n))
        return t_tails(t, n - 1, pb.alternative)
    r = np.abs(A)
    pos = (A > 0).sum(axis=1) if pb.family == "signs" else np.where(A > 0, r, 0.0).sum(axis=1)
    if pb.family == "signs":
        m = (A != 0).sum(axis=1)
        z = (pos - m / 2) / np.sqrt(m / 4)
    else:
        z = (pos - r.sum(axis=1) / 2) / np.sqrt((r * r).sum(axis=1) / 4)
    return z_tails(np.nan_to_num(z), pb.alternative)


def _k_sample_normal(pb, Y, A):
    sizes = pb.sizes
    N, k = len(pb.codes), len(sizes)
    a = A - A.mean(axis=1, keepdims=True)
    onehot = (pb.codes[:, None] == np.arange(k)).astype(float)
    ssb = ((a @ onehot) ** 2 / sizes).sum(axis=1)
    sst = (a * a).sum(axis=1)
    if pb.family == "means":
        f = (ssb / (k - 1)) / ((sst - ssb) / (N - k))
        return stats.f.sf(f, k - 1, N - k)
    factor = N if pb.family == "medians" else N - 1
    return stats.chi2.sf(factor * ssb / sst, k - 1)


def _trend_normal(pb, Y):
    sizes = pb.sizes
    N, k = len(pb.codes), len(sizes)
    w = pb.weights
    sxx = float((w * w).sum())
    b = (Y @ w) / sxx
    onehot = (pb.codes[:, None] == np.arange(k)).astype(float)
    means = (Y @ onehot) / sizes
    ssw = ((Y - means[:, pb.codes]) ** 2).sum(axis=1)
    df = N - k
    if df < 1:
        resid = Y - Y.mean(axis=1, keepdims=True) - b[:, None] * w
        ssw, df = (resid ** 2).sum(axis=1), N - 2
    return t_tails(b / np.sqrt(ssw / df / sxx), df, pb.alternative)


def _slope_normal(pb, A):
    n = A.shape[1]
    w = pb.weights
    a = A - A.mean(axis=1, keepdims=True)
    r = (a @ w) / np.sqrt((a * a).sum(axis=1) * (w * w).sum())
    r = np.clip(r, -1.0, 1.0)
    t = r * np.sqrt((n - 2) / (1 - r * r))
    return t_tails(t, n - 2, pb.alternative)


def _null_variance(A, untied: float, variance) -> np.ndarray:
    """Per data set: `untied` where its values have no ties, else variance(row)."""
    out = np.full(A.shape[0], untied)
    srt = np.sort(A, axis=1)
    for d in np.nonzero((np.diff(srt, axis=1) == 0).any(axis=1))[0]:
        out[d] = variance(A[d])
    return out


def _kendall_normal(pb, A):
    from ..normal.association import kendall_variance

    x = pb.x
    var = _null_variance(A, kendall_variance(np.arange(pb.n, dtype=float), x),
                         lambda row: kendall_variance(row, x))
    s = pair_signs(A) @ pb.weights
    return z_tails(np.where(var > 0, s / np.sqrt(var), 0.0), pb.alternative)


def _jonckheere_normal(pb, A):
    """z = (J - E0 J) / sd, and J - E0 J = S / 2 with S Kendall's S against the group order."""
    from ..normal.ksample import jonckheere_variance

    g = pb.codes
    var = _null_variance(A, jonckheere_variance(np.arange(pb.n, dtype=float), g),
                         lambda row: jonckheere_variance(row, g))
    s = pair_signs(A) @ pb.weights / 2.0
    return z_tails(np.where(var > 0, s / np.sqrt(var), 0.0), pb.alternative)


def _block_basis(pb) -> np.ndarray:
    """Orthonormal columns spanning the block indicators."""
    ind = (pb.strata[:, None] == np.unique(pb.strata)[None, :]).astype(float)
    return ind / np.sqrt(ind.sum(axis=0))


def _blocked_t(pb, Y, A):
    """t for group 0 - group 1 in y = block + group + error, as normal.blocks."""
    q = _block_basis(pb)
    g0 = (pb.codes == 0).astype(float)
    xt = g0 - q @ (q.T @ g0)
    sxx = float(xt @ xt)
    r = Y - (Y @ q) @ q.T
    c = r @ xt
    df = pb.n - q.shape[1] - 1
    rss = np.maximum((r * r).sum(axis=1) - c * c / sxx, 0.0)
    return t_tails((c / sxx) / np.sqrt(rss / df / sxx), df, pb.alternative)


def _centred_within(pb, A) -> np.ndarray:
    """Each data set's scores minus their block mean."""
    q = _block_basis(pb)
    return A - (A @ q) @ q.T


def _stratified_ranks_normal(pb, Y, A):
    a = _centred_within(pb, A)
    g0 = (pb.codes == 0).astype(float)
    t = a @ g0
    var = np.zeros(A.shape[0])
    for s in np.unique(pb.strata):
        units = pb.strata == s
        n_b, m_b = int(units.sum()), int(g0[units].sum())
        if n_b > 1 and 0 < m_b < n_b:
            var += m_b * (n_b - m_b) / (n_b * (n_b - 1)) * (a[:, units] ** 2).sum(axis=1)
    return z_tails(np.where(var > 0, t / np.sqrt(np.where(var > 0, var, 1.0)), 0.0),
                pb.alternative)


def _treatment_sums(pb, A):
    k = len(pb.sizes)
    return A @ (pb.codes[:, None] == np.arange(k)).astype(float)


def _friedman_normal(pb, Y, A):
    k = len(pb.sizes)
    b = pb.n // k
    dev = _treatment_sums(pb, A) - b * (k + 1) / 2
    d = ((A - (k + 1) / 2) ** 2).sum(axis=1)
    q = (k - 1) * (dev ** 2).sum(axis=1) / np.where(d > 0, d, 1.0)
    return np.where(d > 0, stats.chi2.sf(q, k - 1), 1.0)


def _additive_f(pb, Y, A):
    k = len(pb.sizes)
    b = pb.n // k
    a = _centred_within(pb, Y)              # y minus its block mean
    sst = (_treatment_sums(pb, a) ** 2).sum(axis=1) / b
    sse = np.maximum((a * a).sum(axis=1) - sst, 0.0)
    f = (sst / (k - 1)) / (sse / ((k - 1) * (b - 1)))
    return stats.f.sf(f, k - 1, (k - 1) * (b - 1))


def _page_normal(pb, Y, A):
    k = len(pb.sizes)
    c = pb.weights
    a = _centred_within(pb, A)
    spread = (a * a).sum(axis=1)
    var = ((np.arange(1, k + 1) - (k + 1) / 2) ** 2).sum() * spread / (k - 1)
    z = (a @ c) / np.sqrt(np.where(var > 0, var, 1.0))
    return z_tails(np.where(var > 0, z, 0.0), pb.alternative)


_BLOCKED_NORMAL = {"stratified-means": _blocked_t, "stratified-ranks": _stratified_ranks_normal,
                   "friedman": _friedman_normal, "within-block-f": _additive_f,
                   "page": _page_normal}


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
    k = len(problem.sizes)
    onehot = (problem.codes[:, None] == np.arange(k)).astype(float)
    return ((A @ onehot) ** 2 / problem.sizes).sum(axis=1)


def residual_t(problem: Problem, proj: np.ndarray, ee: np.ndarray) -> np.ndarray:
    """t of the slope from the projections of (permuted) residuals on the basis (last axis:
    columns), as engine.association.adjusted_t; ee: each data set's residual sum of squares."""
    sxx = float(problem.basis[:, -1] @ problem.basis[:, -1])
    c = proj[..., -1]
    rss = np.maximum(ee - (proj[..., :-1] ** 2).sum(axis=-1) - c * c / sxx, 0.0)
    return (c / sxx) / np.sqrt(rss / problem.residual_df / sxx)


def permutation_p(problem: Problem, A: np.ndarray, reference: Reference) -> np.ndarray:
    if problem.form == "quadratic":
        b = _quadratic_exceedances(problem, A, reference)
    elif problem.form == "residual":
        b = _residual_exceedances(problem, A, reference)
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
            a = _centred_within(problem, A)
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
