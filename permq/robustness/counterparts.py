"""The normal-theory counterparts, vectorised over data sets: the same formulas as
`permq.normal` (Welch t, t on the differences, normal approximations, one-way F, chi-square
approximations, linear-trend t, the t test of the slope, the blocked tests' F, t and normal
approximations, Kendall's and Jonckheere-Terpstra's normal approximations).

Each takes (problem, Y, A) — the data sets (rows of Y) and their scores (A) — and returns the
p-value of each data set. A family's `Check` (robustness/spec.py) names one, or brings its own.
`fisher_z_interval` gives a correlation's normal-theory interval instead (`Check.interval`).
"""
from __future__ import annotations

import numpy as np


def t_tails(t, df, alternative):
    """p-values of many t statistics (the rule of normal.tails.p_from_t, vectorised)."""
    from scipy import stats

    if alternative == "higher":
        return stats.t.sf(t, df)
    if alternative == "lower":
        return stats.t.cdf(t, df)
    return np.minimum(1.0, 2 * stats.t.sf(np.abs(t), df))


def z_tails(z, alternative):
    """p-values of many z statistics (the rule of normal.tails.p_from_z, vectorised)."""
    from scipy import stats

    if alternative == "higher":
        return stats.norm.sf(z)
    if alternative == "lower":
        return stats.norm.cdf(z)
    return np.minimum(1.0, 2 * stats.norm.sf(np.abs(z)))


# ---------------------------------------------------------------- two groups

def welch_t(pb, Y, A):
    g1 = pb.codes == 0
    n1, n2 = int(g1.sum()), int((~g1).sum())
    x, y = Y[:, g1], Y[:, ~g1]
    v1, v2 = x.var(axis=1, ddof=1) / n1, y.var(axis=1, ddof=1) / n2
    se = np.sqrt(v1 + v2)
    df = (v1 + v2) ** 2 / (v1 ** 2 / (n1 - 1) + v2 ** 2 / (n2 - 1))
    return t_tails((x.mean(axis=1) - y.mean(axis=1)) / se, df, pb.alternative)


def score_sum_z(pb, Y, A):
    """The first group's score sum against its permutation mean and variance."""
    g1 = pb.codes == 0
    n1, n2 = int(g1.sum()), int((~g1).sum())
    N = n1 + n2
    abar = A.mean(axis=1)
    var = n1 * n2 / (N * (N - 1)) * ((A - abar[:, None]) ** 2).sum(axis=1)
    z = (A[:, g1].sum(axis=1) - n1 * abar) / np.sqrt(var)
    return z_tails(np.where(var > 0, z, 0.0), pb.alternative)


# ---------------------------------------------------------------- paired, one sample

def one_sample_t(pb, Y, A):
    n = Y.shape[1]
    t = Y.mean(axis=1) / (Y.std(axis=1, ddof=1) / np.sqrt(n))
    return t_tails(t, n - 1, pb.alternative)


def signed_rank_z(pb, Y, A):
    r = np.abs(A)
    pos = np.where(A > 0, r, 0.0).sum(axis=1)
    z = (pos - r.sum(axis=1) / 2) / np.sqrt((r * r).sum(axis=1) / 4)
    return z_tails(np.nan_to_num(z), pb.alternative)


def sign_z(pb, Y, A):
    pos = (A > 0).sum(axis=1)
    m = (A != 0).sum(axis=1)
    z = (pos - m / 2) / np.sqrt(m / 4)
    return z_tails(np.nan_to_num(z), pb.alternative)


# ---------------------------------------------------------------- three or more groups

def _between_total(pb, A):
    sizes = pb.sizes
    k = len(sizes)
    a = A - A.mean(axis=1, keepdims=True)
    onehot = (pb.codes[:, None] == np.arange(k)).astype(float)
    return ((a @ onehot) ** 2 / sizes).sum(axis=1), (a * a).sum(axis=1)


def anova_f(pb, Y, A):
    from scipy import stats

    N, k = len(pb.codes), len(pb.sizes)
    ssb, sst = _between_total(pb, A)
    f = (ssb / (k - 1)) / ((sst - ssb) / (N - k))
    return stats.f.sf(f, k - 1, N - k)


def chi_square_of_scores(pb, Y, A):
    """(N - 1) SSB / SST on k - 1 df: Kruskal-Wallis, van der Waerden."""
    from scipy import stats

    N, k = len(pb.codes), len(pb.sizes)
    ssb, sst = _between_total(pb, A)
    return stats.chi2.sf((N - 1) * ssb / sst, k - 1)


def median_chi_square(pb, Y, A):
    """N SSB / SST on k - 1 df: the median test's chi-square."""
    from scipy import stats

    N, k = len(pb.codes), len(pb.sizes)
    ssb, sst = _between_total(pb, A)
    return stats.chi2.sf(N * ssb / sst, k - 1)


# ---------------------------------------------------------------- ordered groups, slopes

def trend_t(pb, Y, A):
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


def slope_t(pb, Y, A):
    """The t of r between the scores and the fixed weights: the slope's t test, Pearson's r,
    and the t approximation for Spearman's rho (on ranks)."""
    n = A.shape[1]
    w = pb.weights
    a = A - A.mean(axis=1, keepdims=True)
    r = (a @ w) / np.sqrt((a * a).sum(axis=1) * (w * w).sum())
    r = np.clip(r, -1.0, 1.0)
    t = r * np.sqrt((n - 2) / (1 - r * r))
    return t_tails(t, n - 2, pb.alternative)


def fisher_z_interval(pb, Y, level):
    """Fisher's z interval for the correlation of each data set with the fixed weights (x),
    tanh(atanh(r) -+ z / sqrt(n - 3)), as normal/association.fisher_interval: alpha/2 in each
    tail, or alpha in the one tail of a one-sided interval (its other end +-1)."""
    from scipy import stats

    n = Y.shape[1]
    w = pb.weights - pb.weights.mean()
    a = Y - Y.mean(axis=1, keepdims=True)
    r = np.clip((a @ w) / np.sqrt((a * a).sum(axis=1) * (w @ w)), -1.0, 1.0)
    z = np.arctanh(np.clip(r, -1 + 1e-15, 1 - 1e-15))
    one = 1.0 - level
    h = stats.norm.isf(one / 2 if pb.alternative == "two-sided" else one) / np.sqrt(n - 3)
    low, high = np.tanh(z - h), np.tanh(z + h)
    if pb.alternative == "higher":
        high = np.ones_like(high)
    elif pb.alternative == "lower":
        low = -np.ones_like(low)
    return low, high


def adjusted_slope_t(pb, Y, A):
    """The least-squares t of the slope adjusted for covariates."""
    from .batch import observed_statistic

    return t_tails(observed_statistic(pb, A), pb.residual_df, pb.alternative)


def _null_variance(A, untied: float, variance) -> np.ndarray:
    """Per data set: `untied` where its values have no ties, else variance(row)."""
    out = np.full(A.shape[0], untied)
    srt = np.sort(A, axis=1)
    for d in np.nonzero((np.diff(srt, axis=1) == 0).any(axis=1))[0]:
        out[d] = variance(A[d])
    return out


def kendall_z(pb, Y, A):
    from ..normal.association import kendall_variance
    from .batch import pair_signs

    x = pb.x
    var = _null_variance(A, kendall_variance(np.arange(pb.n, dtype=float), x),
                         lambda row: kendall_variance(row, x))
    s = pair_signs(A) @ pb.weights
    return z_tails(np.where(var > 0, s / np.sqrt(var), 0.0), pb.alternative)


def jonckheere_z(pb, Y, A):
    """z = (J - E0 J) / sd, and J - E0 J = S / 2 with S Kendall's S against the group order."""
    from ..normal.ksample import jonckheere_variance
    from .batch import pair_signs

    g = pb.codes
    var = _null_variance(A, jonckheere_variance(np.arange(pb.n, dtype=float), g),
                         lambda row: jonckheere_variance(row, g))
    s = pair_signs(A) @ pb.weights / 2.0
    return z_tails(np.where(var > 0, s / np.sqrt(var), 0.0), pb.alternative)


# ---------------------------------------------------------------- within blocks

def block_basis(pb) -> np.ndarray:
    """Orthonormal columns spanning the block indicators."""
    ind = (pb.strata[:, None] == np.unique(pb.strata)[None, :]).astype(float)
    return ind / np.sqrt(ind.sum(axis=0))


def centred_within(pb, A) -> np.ndarray:
    """Each data set's scores minus their block mean."""
    q = block_basis(pb)
    return A - (A @ q) @ q.T


def blocked_t(pb, Y, A):
    """t for group 0 - group 1 in y = block + group + error, as normal.blocks."""
    q = block_basis(pb)
    g0 = (pb.codes == 0).astype(float)
    xt = g0 - q @ (q.T @ g0)
    sxx = float(xt @ xt)
    r = Y - (Y @ q) @ q.T
    c = r @ xt
    df = pb.n - q.shape[1] - 1
    rss = np.maximum((r * r).sum(axis=1) - c * c / sxx, 0.0)
    return t_tails((c / sxx) / np.sqrt(rss / df / sxx), df, pb.alternative)


def stratified_rank_sum_z(pb, Y, A):
    a = centred_within(pb, A)
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


def friedman_chi_square(pb, Y, A):
    from scipy import stats

    k = len(pb.sizes)
    b = pb.n // k
    dev = _treatment_sums(pb, A) - b * (k + 1) / 2
    d = ((A - (k + 1) / 2) ** 2).sum(axis=1)
    q = (k - 1) * (dev ** 2).sum(axis=1) / np.where(d > 0, d, 1.0)
    return np.where(d > 0, stats.chi2.sf(q, k - 1), 1.0)


def additive_f(pb, Y, A):
    from scipy import stats

    k = len(pb.sizes)
    b = pb.n // k
    a = centred_within(pb, Y)              # y minus its block mean
    sst = (_treatment_sums(pb, a) ** 2).sum(axis=1) / b
    sse = np.maximum((a * a).sum(axis=1) - sst, 0.0)
    f = (sst / (k - 1)) / (sse / ((k - 1) * (b - 1)))
    return stats.f.sf(f, k - 1, (k - 1) * (b - 1))


def page_z(pb, Y, A):
    k = len(pb.sizes)
    c = pb.weights
    a = centred_within(pb, A)
    spread = (a * a).sum(axis=1)
    var = ((np.arange(1, k + 1) - (k + 1) / 2) ** 2).sum() * spread / (k - 1)
    z = (a @ c) / np.sqrt(np.where(var > 0, var, 1.0))
    return z_tails(np.where(var > 0, z, 0.0), pb.alternative)
