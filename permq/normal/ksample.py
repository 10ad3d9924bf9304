"""Textbook counterparts of the tests for three or more groups and for ordered groups.

Each function returns a `NormalTheory`. For F tests `df` holds the numerator degrees of
freedom and the test's name states both.
"""
from __future__ import annotations

import math
from typing import Optional

import numpy as np
from ..lazy import stats

from ..engine.core.grid import centred, is_constant, negligible
from ..engine.core.scores import median_scores, midranks, normal_scores
from ..engine.ksample import design
from ..engine.ordered import dose_scores, jt_doubled, least_squares_slope
from ..result import NormalTheory
from .degenerate import ALL_TIED, NO_RESIDUAL, ZERO_SPREAD, no_residual, no_spread, undefined
from .tails import p_from_z as _p_from_z, p_from_t as _p_from_t, t_interval as _t_interval


def _group_stats(values, groups):
    x, g, sizes = design(values, groups)
    means = np.bincount(g, weights=x) / sizes
    ss_within = float(np.sum((x - means[g]) ** 2))
    return x, g, sizes, means, ss_within


# ---------------------------------------------------------------- unordered groups

def one_way_anova(values, groups) -> NormalTheory:
    """Classical one-way ANOVA F (equal variances, normal errors)."""
    x, g, sizes, means, ssw = _group_stats(values, groups)
    N, k = len(x), len(sizes)
    ssb = float(np.sum(sizes * (means - x.mean()) ** 2))
    df1, df2 = k - 1, N - k
    name = f"one-way ANOVA F on {df1} and {df2} df (equal variances, normal errors)"
    if df2 < 1:
        return undefined(name, "one value a group leaves no within-group df", df1)
    if no_residual(ssw, ssb + ssw):
        return undefined(name, ZERO_SPREAD + " within the groups", df1)
    f = (ssb / df1) / (ssw / df2)
    return NormalTheory(name, float(f), float(df1), float(stats.f.sf(f, df1, df2)))


def welch_anova(values, groups) -> NormalTheory:
    """Welch's heteroscedastic one-way ANOVA (needs two or more values a group, some spread)."""
    x, g, sizes, means, _ = _group_stats(values, groups)
    k = len(sizes)
    var = np.array([np.var(x[g == i], ddof=1) if sizes[i] > 1 else np.nan for i in range(k)])
    name = "Welch one-way ANOVA F (unequal variances)"
    if np.any(sizes < 2):
        return undefined(name, "a group has a single value")
    if any(no_spread(x[g == i]) for i in range(k)):
        return undefined(name, ZERO_SPREAD + " in a group")
    w = sizes / var
    mw = float(np.sum(w * means) / np.sum(w))
    a = float(np.sum(w * (means - mw) ** 2) / (k - 1))
    lam = float(np.sum((1 - w / w.sum()) ** 2 / (sizes - 1)))
    f = a / (1 + 2 * (k - 2) * lam / (k * k - 1))
    df2 = (k * k - 1) / (3 * lam)
    return NormalTheory(f"Welch one-way ANOVA F on {k - 1} and {df2:.2f} df (unequal variances)",
                        float(f), float(k - 1), float(stats.f.sf(f, k - 1, df2)))


def _quadratic_chi_square(score, values, groups, factor):
    x, g, sizes = design(values, groups)
    raw = score(x)
    if is_constant(raw):
        return math.nan, 1.0, len(sizes) - 1
    a = centred(raw)
    a = a - a.mean()
    sst = float(np.sum(a * a))
    if sst <= 0:
        return None, None, len(sizes) - 1
    ssb = float(np.sum(np.bincount(g, weights=a) ** 2 / sizes))
    stat = factor(len(x)) * ssb / sst
    return stat, float(stats.chi2.sf(stat, len(sizes) - 1)), len(sizes) - 1


def kruskal_chi_square(values, groups) -> NormalTheory:
    """Kruskal-Wallis H (mid-ranks, divided by the tie correction) against chi-square, k-1 df."""
    return _chi_square_test("Kruskal-Wallis H, chi-square approximation (tie-corrected)",
                            midranks, values, groups, lambda N: N - 1)


def normal_scores_chi_square(values, groups) -> NormalTheory:
    return _chi_square_test("van der Waerden normal-scores statistic, chi-square approximation",
                            normal_scores, values, groups, lambda N: N - 1)


def median_chi_square(values, groups) -> NormalTheory:
    return _chi_square_test("median test, Pearson chi-square approximation (no continuity "
                            "correction)", median_scores, values, groups, lambda N: N)


def _chi_square_test(name, score, values, groups, factor) -> NormalTheory:
    stat, p, df = _quadratic_chi_square(score, values, groups, factor)
    if stat is None:
        return undefined(name, ALL_TIED, df)
    return NormalTheory(name, stat, float(df), p)


# ---------------------------------------------------------------- ordered groups

def jonckheere_variance(values, groups) -> float:
    """Null variance of J with the tie correction (common practice; the exact permutation
    variance given the tie pattern)."""
    x, _, sizes = design(values, groups)
    N = len(x)
    t = np.unique(x, return_counts=True)[1].astype(float)
    n = sizes.astype(float)

    def c2(v):
        return np.sum(v * (v - 1))

    def c3(v):
        return np.sum(v * (v - 1) * (v - 2))

    def c5(v):
        return np.sum(v * (v - 1) * (2 * v + 5))

    var = (N * (N - 1) * (2 * N + 5) - c5(n) - c5(t)) / 72.0
    if N > 2:
        var += c3(n) * c3(t) / (36.0 * N * (N - 1) * (N - 2))
    var += c2(n) * c2(t) / (8.0 * N * (N - 1))
    return float(var)


def jonckheere_normal(values, groups, alternative: str) -> NormalTheory:
    """Normal approximation of Jonckheere-Terpstra J (tie-corrected variance)."""
    x, g, sizes = design(values, groups)
    j = jt_doubled(x, g, len(sizes)) / 2.0
    mean = (len(x) ** 2 - float(np.sum(sizes ** 2))) / 4.0
    var = jonckheere_variance(x, g)
    name = "Jonckheere-Terpstra normal approximation (tie-corrected variance)"
    if not var > 0:
        return undefined(name, ALL_TIED)
    z = (j - mean) / math.sqrt(var)
    return NormalTheory(name, float(z), None, _p_from_z(z, alternative))


def linear_trend_t(values, groups, scores=None, alternative: str = "two-sided",
                   level: float = 0.95) -> NormalTheory:
    """t test of the linear trend in dose scores (F = t^2), with the t interval for the slope.

    The error variance is the within-group mean square (N - k df), as for a linear contrast
    in one-way ANOVA; with one value a group, the residual about the line (N - 2 df).
    """
    x, g, sizes, means, ssw = _group_stats(values, groups)
    d = dose_scores(scores, len(sizes))
    d_item = d[g]
    sxx = float(np.sum((d_item - d_item.mean()) ** 2))
    if sxx <= 0:
        return undefined("linear trend t", "all dose scores are equal")
    b = least_squares_slope(x, d_item)
    N, k = len(x), len(sizes)
    if N > k:
        df, mse, how = N - k, ssw / (N - k), "within-group error"
    else:
        resid = x - x.mean() - b * (d_item - d_item.mean())
        df, mse, how = N - 2, float(np.sum(resid ** 2)) / max(N - 2, 1), "residual about the line"
    name = f"linear trend t on {df} df ({how}; F = t^2)"
    if df < 1:
        return undefined(name, "no df left for the error")
    total = float(np.sum((x - x.mean()) ** 2))
    if no_residual(mse * df, total):
        return undefined(name, ZERO_SPREAD if N > k else NO_RESIDUAL, df)
    se = math.sqrt(mse / sxx)
    t = b / se
    return NormalTheory(name, float(t), float(df), _p_from_t(t, df, alternative),
                        _t_interval(b, se, df, level, alternative),
                        f"t interval for the slope ({how})")


# ---------------------------------------------------------------- summaries

def group_summaries(values, groups, labels) -> list[dict]:
    """n, mean, median and standard deviation (n - 1 divisor) of each group, in level order."""
    x, g, sizes = design(values, groups)
    out = []
    for i, n in enumerate(sizes):
        v = x[g == i]
        sd: Optional[float] = float(np.std(v, ddof=1)) if n > 1 else math.nan
        out.append({"name": str(labels[i]), "n": int(n), "mean": float(v.mean()),
                    "median": float(np.median(v)), "sd": sd})
    return out
