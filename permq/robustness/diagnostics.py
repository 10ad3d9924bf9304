"""Diagnostics on every result: how far the data are from what normal theory assumes.

`diagnostics(design, result, level)` gives, as plain data for `Result.extra["diagnostics"]`:

- skewness: the adjusted Fisher-Pearson skewness G1 of the residuals (values minus their
  group mean; differences minus their mean; residuals about the least-squares line, the
  additive fit of blocks and treatments, or the analysis of covariance), None with fewer
  than three;
- largest_residual_sd: the largest |residual| divided by the residual standard deviation
  (residual sum of squares over its degrees of freedom);
- spread_ratio: the largest group standard deviation over the smallest (for slopes: the
  residual sd above the median of x over the one below it); None for one sample and tables;
- disagree: whether the permutation and the normal-theory p-values fall on opposite sides of
  the level (default 5%).
"""
from __future__ import annotations

import math
from typing import Optional

import numpy as np

from ..bind import designs
from ..engine.core.scores import median

LEVEL = 0.05


def diagnostics(design, result, level: float = LEVEL) -> dict:
    resid, df, spread, spread_of = _residuals(design)
    out = {"skewness": None, "largest_residual_sd": None, "spread_ratio": spread,
           "spread_ratio_of": spread_of, "level": level, "disagree": None}
    if resid is not None and len(resid) >= 3 and df > 0:
        sd = math.sqrt(float(resid @ resid) / df)
        if sd > 1e-12 * max(1.0, float(np.abs(resid).max())):
            out["skewness"] = skewness(resid)
            out["largest_residual_sd"] = float(np.abs(resid).max() / sd)
    p, q = result.outcome.p_value, result.normal.p_value if result.normal else None
    if q is not None and np.isfinite(q) and np.isfinite(p):
        out["disagree"] = bool((p <= level) != (q <= level))
    return out


def skewness(r) -> Optional[float]:
    """The adjusted Fisher-Pearson skewness G1, as scipy.stats.skew(r, bias=False) computes it
    (the same steps, so the same number; here so that no statement waits for scipy.stats)."""
    r = np.asarray(r, dtype=float)
    n = r.size
    d = r - r.mean()
    m2 = np.mean(d ** 2)
    m3 = np.mean(d ** 2 * d)
    if n < 3 or m2 <= (np.finfo(float).resolution * 10 * r.mean()) ** 2:
        return None if n < 3 else float("nan")
    return float(np.sqrt((n - 1.0) * n) / (n - 2.0) * m3 / m2 ** 1.5)


def attach(design, result, level: float = LEVEL) -> None:
    from .spread import note, unequal_spread_test

    result.extra["diagnostics"] = diagnostics(design, result, level)
    pointer = note(unequal_spread_test(design), result.extra["diagnostics"]["spread_ratio"])
    if pointer:
        result.warnings.append(pointer)


def _ratio(sds) -> Optional[float]:
    sds = [s for s in sds if np.isfinite(s)]
    if len(sds) < 2 or min(sds) <= 0:
        return None
    return float(max(sds) / min(sds))


def _residuals(design):
    """(residuals, residual df, spread ratio, what the ratio compares)."""
    if isinstance(design, designs.TwoSampleDesign):
        x, y = design.x, design.y
        r = np.r_[x - x.mean(), y - y.mean()]
        sds = [np.std(v, ddof=1) if len(v) > 1 else np.nan for v in (x, y)]
        return r, len(r) - 2, _ratio(sds), "group standard deviations, largest over smallest"
    if isinstance(design, designs.OneSampleDesign):
        d = design.d
        return d - d.mean(), len(d) - 1, None, None
    if isinstance(design, designs.GroupsDesign):
        if np.isin(design.values, (0.0, 1.0)).all():     # yes/no outcomes have no residuals
            return None, 0, None, None
        return _group_residuals(design)
    if isinstance(design, designs.ControlDesign):
        return _group_residuals(design)
    if isinstance(design, designs.AssociationDesign):
        return _line_residuals(design)
    if isinstance(design, designs.AdjustedDesign):
        return _adjusted_residuals(design)
    return None, 0, None, None


def _group_residuals(design):
    v, g = design.values, design.groups
    k = int(g.max()) + 1
    groups = (g[:, None] == np.arange(k)[None, :]).astype(float)
    if getattr(design, "blocks", None) is None:
        X = np.column_stack([np.ones(len(v)), groups[:, 1:]])
        coef, *_ = np.linalg.lstsq(X, v, rcond=None)
        r = v - X @ coef
        df = len(v) - np.linalg.matrix_rank(X)
    else:
        # the additive fit of blocks and groups: block effects swept out by centring within
        # blocks, then the groups fitted (Frisch-Waugh-Lovell: the same residuals as the
        # full least-squares fit, in O(N k^2) instead of O(N (k + blocks)^2))
        _, b = np.unique(design.blocks, return_inverse=True)
        sizes = np.bincount(b).astype(float)
        vc = v - (np.bincount(b, weights=v) / sizes)[b]
        gc = groups - (np.stack([np.bincount(b, weights=groups[:, j]) for j in range(k)],
                                axis=1) / sizes[:, None])[b]
        coef, *_ = np.linalg.lstsq(gc, vc, rcond=None)
        r = vc - gc @ coef
        df = len(v) - len(sizes) - np.linalg.matrix_rank(gc)
    sds = [np.std(r[g == i], ddof=1) if np.sum(g == i) > 1 else np.nan for i in range(k)]
    what = "group standard deviations, largest over smallest"
    if getattr(design, "blocks", None) is not None:
        what = "residual standard deviations of the groups (additive fit), largest over smallest"
    return r, df, _ratio(sds), what


def _adjusted_residuals(design):
    """Residuals of the analysis of covariance (groups and covariates)."""
    v, g = design.values, design.groups
    k = int(g.max()) + 1
    X = np.column_stack([np.ones(len(v)), design.covariates] +
                        [(g == i).astype(float) for i in range(1, k)])
    coef, *_ = np.linalg.lstsq(X, v, rcond=None)
    r = v - X @ coef
    sds = [np.std(r[g == i], ddof=1) if np.sum(g == i) > 1 else np.nan for i in range(k)]
    return (r, len(v) - np.linalg.matrix_rank(X), _ratio(sds),
            "residual standard deviations of the groups (analysis of covariance), largest "
            "over smallest")


def _line_residuals(design):
    y, x = design.y, design.x
    cols = [np.ones(len(y)), x]
    if design.covariates is not None:
        cols.append(np.asarray(design.covariates, dtype=float).reshape(len(y), -1))
    X = np.column_stack(cols)
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    r = y - X @ coef
    df = len(y) - np.linalg.matrix_rank(X)
    upper = x > median(x)
    sds = [np.std(r[m], ddof=1) if m.sum() > 1 else np.nan for m in (upper, ~upper)]
    spread = None
    if all(np.isfinite(sds)) and sds[1] > 0:
        spread = float(sds[0] / sds[1])
    return r, df, spread, "residual sd above the median of x over the one below it"
