"""The textbook counterparts of the association tests.

- Pearson's r: t = r sqrt((n - 2) / (1 - r^2)) on n - 2 df; interval for rho by Fisher's z,
  tanh(atanh(r) -+ z_a / sqrt(n - 3)).
- Spearman's rho (mid-ranks): the same t approximation applied to rho; no interval.
- Kendall's tau: z = S / sd(S) with the tie-corrected variance of S (no continuity
  correction); no interval.
- Slope of y on x, and the slope adjusted for covariates: the least-squares t for x's
  coefficient with its t interval, and the same with the heteroscedasticity-robust HC3
  standard error (t reference on the residual df), as a second result the caller can show.

`alternative` is "higher" (positive association), "lower" or "two-sided"; one-sided
intervals are one-sided (an infinite end, or +-1 for a correlation).
"""
from __future__ import annotations

from typing import Optional

import numpy as np
from ..lazy import stats

from ..engine.core.scores import midranks
from ..errors import DataError
from ..result import NormalTheory
from .degenerate import ALL_TIED, LEVERAGE_ONE, NO_RESIDUAL, no_residual, undefined
from .tails import p_from_t as _p_from_t, p_from_z as _p_from_z, t_interval


def _t_of_r(name, r, df, alternative) -> NormalTheory:
    """t = r sqrt(df / (1 - r^2)); undefined at r = +-1, where nothing is left about the line."""
    if not df > 0:
        return undefined(name, "too few pairs for the t test", df)
    if no_residual(1.0 - r * r, 1.0):
        return undefined(name, NO_RESIDUAL + ": the points lie on a line", df)
    t = float(r * np.sqrt(df / (1 - r * r)))
    return NormalTheory(name, t, float(df), _p_from_t(t, df, alternative))


# ---------------------------------------------------------------- correlations

def pearson(y, x, alternative: str, level: float = 0.95) -> NormalTheory:
    y, x = np.asarray(y, float), np.asarray(x, float)
    n = len(y)
    r = float(np.corrcoef(x, y)[0, 1])
    r = max(-1.0, min(1.0, r))
    test = _t_of_r("t test of Pearson's r", r, n - 2, alternative)
    if test.undefined:
        return test
    interval = fisher_interval(r, n, level, alternative) if n > 3 else None
    return NormalTheory(test.test, test.statistic, test.df, test.p_value, interval,
                        "Fisher's z transformation, tanh(atanh(r) -+ z / sqrt(n - 3))")


def fisher_interval(r: float, n: int, level: float, alternative: str) -> tuple:
    if abs(r) == 1:
        return (r, r)
    z, se = np.arctanh(r), 1 / np.sqrt(n - 3)
    if alternative == "two-sided":
        h = stats.norm.isf((1 - level) / 2) * se
        return float(np.tanh(z - h)), float(np.tanh(z + h))
    h = stats.norm.isf(1 - level) * se
    return (float(np.tanh(z - h)), 1.0) if alternative == "higher" else (-1.0, float(np.tanh(z + h)))


def spearman(y, x, alternative: str) -> NormalTheory:
    n = len(y)
    rho = float(np.corrcoef(midranks(x), midranks(y))[0, 1])
    name = "t approximation for Spearman's rho (mid-ranks)"
    if no_residual(1.0 - rho * rho, 1.0):
        return undefined(name, "the ranks agree perfectly", n - 2)
    return _t_of_r(name, max(-1.0, min(1.0, rho)), n - 2, alternative)


def kendall_variance(y, x) -> float:
    """Variance of S under the null, corrected for ties in x (t) and y (u)."""
    n = len(x)
    t = np.unique(x, return_counts=True)[1].astype(float)
    u = np.unique(y, return_counts=True)[1].astype(float)
    v0 = n * (n - 1) * (2 * n + 5)
    vt, vu = (t * (t - 1) * (2 * t + 5)).sum(), (u * (u - 1) * (2 * u + 5)).sum()
    v1 = (t * (t - 1)).sum() * (u * (u - 1)).sum() / (2 * n * (n - 1))
    v2 = (t * (t - 1) * (t - 2)).sum() * (u * (u - 1) * (u - 2)).sum() / (9 * n * (n - 1) * (n - 2))
    return float((v0 - vt - vu) / 18 + v1 + v2)


def kendall(y, x, alternative: str) -> NormalTheory:
    y, x = np.asarray(y, float), np.asarray(x, float)
    s = float(np.sum(np.sign(x[:, None] - x[None, :]) * np.sign(y[:, None] - y[None, :])) / 2)
    var = kendall_variance(y, x)
    name = "normal approximation for Kendall's S (tie-corrected variance)"
    if not var > 0:
        return undefined(name, ALL_TIED)
    z = s / np.sqrt(var)
    return NormalTheory(name, float(z), None, _p_from_z(z, alternative))


# ---------------------------------------------------------------- slopes

def _ols_last(design: np.ndarray, y: np.ndarray):
    """Coefficient of the last column, its classical and HC3 standard errors, residual df."""
    n, p = design.shape
    if np.linalg.matrix_rank(design) < p:
        raise DataError("the predictor and covariates are collinear; the slope is not identified")
    if n - p < 1:
        raise DataError(f"too few pairs ({n}) for {p} coefficients")
    xtx_inv = np.linalg.inv(design.T @ design)
    coef = xtx_inv @ design.T @ y
    e = y - design @ coef
    df = n - p
    se = float(np.sqrt(e @ e / df * xtx_inv[-1, -1]))
    h = np.einsum("ij,jk,ik->i", design, xtx_inv, design)
    with np.errstate(divide="ignore", invalid="ignore"):
        w = e * e / (1 - h) ** 2
    row = xtx_inv[-1] @ design.T                      # the last coefficient's weights on y
    # a point of leverage 1 has residual 0 whatever y is: e / (1 - h), its deleted residual,
    # is 0 / 0 (without the point the coefficient is not estimable), so HC3 is undefined
    se_hc3 = float(np.sqrt(np.sum(row * row * w))) if np.all(h < 1 - 1e-10) else None
    perfect = no_residual(float(e @ e), float(np.sum((y - y.mean()) ** 2)))
    return float(coef[-1]), se, se_hc3, df, perfect


def _t_result(name, est, se, df, level, alternative, how, why="") -> NormalTheory:
    if why:
        return undefined(name, why, df)
    t = est / se
    return NormalTheory(name, float(t), float(df), _p_from_t(t, df, alternative),
                        t_interval(est, se, df, level, alternative), how)


def _slope_pair(design, y, alternative, level, what):
    est, se, se3, df, perfect = _ols_last(design, y)
    fit = NO_RESIDUAL + ": the points lie on the fitted line" if perfect else ""
    ols = _t_result(f"least-squares t test of the {what}", est, se, df, level, alternative,
                    f"t interval on {df} df", fit)
    hc3 = _t_result(f"least-squares t test of the {what}, HC3 robust standard error",
                    est, se3, df, level, alternative, f"t interval on {df} df, HC3 standard error",
                    fit or (LEVERAGE_ONE if se3 is None else ""))
    return ols, hc3


def slope(y, x, alternative: str, level: float = 0.95) -> tuple[NormalTheory, NormalTheory]:
    y, x = np.asarray(y, float), np.asarray(x, float)
    design = np.column_stack([np.ones(len(x)), x])
    return _slope_pair(design, y, alternative, level, "slope")


def adjusted_slope(y, x, covariates, alternative: str,
                   level: float = 0.95) -> tuple[NormalTheory, NormalTheory]:
    y, x = np.asarray(y, float), np.asarray(x, float)
    z = np.asarray(covariates, float).reshape(len(x), -1)
    design = np.column_stack([np.ones(len(x)), z, x])
    return _slope_pair(design, y, alternative, level, "slope adjusted for covariates")


def normal_theory(statistic: str, y, x, alternative: str, level: float = 0.95,
                  covariates: Optional[np.ndarray] = None) -> tuple:
    """The textbook results for a statistic: one NormalTheory, or (OLS, HC3) for slopes."""
    if covariates is not None and np.asarray(covariates).size > 0:
        if statistic != "slope":
            raise ValueError("covariates apply to the slope only")
        return adjusted_slope(y, x, covariates, alternative, level)
    if statistic == "slope":
        return slope(y, x, alternative, level)
    if statistic == "pearson":
        return (pearson(y, x, alternative, level),)
    if statistic == "spearman":
        return (spearman(y, x, alternative),)
    if statistic == "kendall":
        return (kendall(y, x, alternative),)
    raise KeyError(statistic)
