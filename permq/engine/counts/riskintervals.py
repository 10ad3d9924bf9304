"""Exact unconditional intervals for the risk difference p1 - p2 and the risk ratio p1 / p2.

Each interval inverts two one-sided exact unconditional tests, alpha / 2 each (one at alpha for
a one-sided alternative), of H0: p1 - p2 = d (or p1 / p2 = r), in the way of Santner & Snell
(1980) and Chan & Zhang (1999): the statistic orders the outcomes, and the test's p-value is
the largest, over the nuisance proportion p2 (with p1 = p2 + d, or r p2), of the probability of
the outcomes at least as extreme (`nuisance.matrix_sup`). The ordering is the score statistic
with the proportions' maximum-likelihood estimates restricted to the null (Miettinen &
Nurminen 1985; Farrington & Manning 1990), as Chan & Zhang recommend:

    z(d) = (p1^ - p2^ - d) / sqrt(p1~ (1 - p1~) / n1 + p2~ (1 - p2~) / n2)
    z(r) = (p1^ - r p2^)  / sqrt(p1~ (1 - p1~) / n1 + r^2 p2~ (1 - p2~) / n2)

(z = 0 where numerator and variance both vanish). The lower bound is the smallest d at which
the test against "the difference is larger" keeps d (p-value above alpha / 2), found on a grid
from the edge of the parameter space to the estimate and refined by bisection to 1e-7; the
upper bound likewise. The set of kept values is not always an interval (the p-value of an
unconditional test need not be monotone in d); the bounds are the outermost kept values the
grid finds, so the interval holds every value it keeps.
"""
from __future__ import annotations

import math

import numpy as np

from . import nuisance

BISECT_TOL = 1e-7
GRID = 12
STAT_RTOL = 1e-9
INTERVAL_WORDS = ("exact unconditional: inverts two one-sided score tests, alpha/2 each, "
                  "supremum over the nuisance proportion (Chan & Zhang 1999)")


def _phat(n1, n2):
    a = np.arange(n1 + 1, dtype=float)[:, None] / n1
    b = np.arange(n2 + 1, dtype=float)[None, :] / n2
    return a, b


def restricted_difference(n1: int, n2: int, d: float):
    """The MLEs of (p1, p2) with p1 - p2 = d, for every outcome (Farrington & Manning 1990)."""
    p1, p2 = _phat(n1, n2)
    th = n2 / n1
    a = 1.0 + th
    b = -(1.0 + th + p1 + th * p2 + d * (th + 2.0))
    c = d * d + d * (2.0 * p1 + th + 1.0) + p1 + th * p2
    dd = -p1 * d * (1.0 + d)
    v = b ** 3 / (3.0 * a) ** 3 - b * c / (6.0 * a * a) + dd / (2.0 * a)
    inside = b * b / (3.0 * a) ** 2 - c / (3.0 * a)
    u = np.where(v >= 0.0, 1.0, -1.0) * np.sqrt(np.maximum(inside, 0.0))
    cube = u ** 3
    cosine = np.divide(v, cube, out=np.zeros_like(v), where=cube != 0.0)
    w = (math.pi + np.arccos(np.clip(cosine, -1.0, 1.0))) / 3.0
    q1 = 2.0 * u * np.cos(w) - b / (3.0 * a)
    q1 = np.clip(q1, max(0.0, d), min(1.0, 1.0 + d))
    return q1, q1 - d


def restricted_ratio(n1: int, n2: int, r: float):
    """The MLEs of (p1, p2) with p1 = r p2, for every outcome (Miettinen & Nurminen 1985)."""
    p1, p2 = _phat(n1, n2)
    x1, x2 = p1 * n1, p2 * n2
    big = n1 + n2
    a = big * r
    b = -(n1 * r + x1 + n2 + x2 * r)
    c = x1 + x2
    disc = np.sqrt(np.maximum(b * b - 4.0 * a * c, 0.0))
    q2 = (-b - disc) / (2.0 * a)
    q2 = np.clip(q2, 0.0, min(1.0, 1.0 / r))
    return np.clip(r * q2, 0.0, 1.0), q2


def score_difference(n1, n2, d):
    p1, p2 = _phat(n1, n2)
    q1, q2 = restricted_difference(n1, n2, d)
    return _ratio(p1 - p2 - d, q1 * (1 - q1) / n1 + q2 * (1 - q2) / n2)


def score_ratio(n1, n2, r):
    p1, p2 = _phat(n1, n2)
    q1, q2 = restricted_ratio(n1, n2, r)
    return _ratio(p1 - r * p2, q1 * (1 - q1) / n1 + r * r * q2 * (1 - q2) / n2)


def _ratio(num, var):
    num = np.broadcast_to(num, np.broadcast(num, var).shape)
    scale = max(float(np.abs(num).max()), 1e-300)
    zero_num = np.abs(num) <= 1e-12 * scale
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(var > 1e-300, num / np.sqrt(np.where(var > 1e-300, var, 1.0)),
                     np.sign(num) * np.inf)
    return np.where(zero_num, 0.0, z)


class _Side:
    """One one-sided test family along the parameter: its p-value exceeds alpha or not."""

    def __init__(self, data, scale: str, upper: bool):
        self.data, self.scale, self.upper = data, scale, upper

    def pvalue_above(self, value: float, alpha: float) -> bool:
        d = self.data
        if self.scale == "difference":
            z = score_difference(d.n1, d.n2, value)
            lo, hi = max(0.0, -value), min(1.0, 1.0 - value)
            line = lambda p2: p2 + value
        else:
            z = score_ratio(d.n1, d.n2, value)
            lo, hi = 0.0, min(1.0, 1.0 / value)
            line = lambda p2: value * p2
        obs = z[d.x1, d.x2]
        tol = STAT_RTOL * max(abs(obs), 1.0) if np.isfinite(obs) else 0.0
        mask = z >= obs - tol if self.upper else z <= obs + tol
        if hi <= lo:
            return bool(mask[_certain(d, lo, value, self.scale)])
        p, _ = nuisance.matrix_sup(mask, d.n1, d.n2, line, lo, hi, stop_above=alpha)
        return p > alpha


def _certain(data, p2, value, scale):
    """The one outcome a degenerate nuisance range allows."""
    p1 = p2 + value if scale == "difference" else value * p2
    return (int(round(p1 * data.n1)), int(round(p2 * data.n2)))


def _bound(side: _Side, alpha: float, edge: float, estimate: float, to_param, progress=None):
    """The outermost kept value between the edge and the estimate (on the internal scale)."""
    points = np.linspace(edge, estimate, GRID + 1)
    kept = [side.pvalue_above(to_param(v), alpha) for v in points[:1]]
    if kept[0]:
        return edge
    prev = points[0]
    for v in points[1:]:
        if side.pvalue_above(to_param(v), alpha):
            lo, hi = prev, v
            while abs(hi - lo) > BISECT_TOL:
                mid = 0.5 * (lo + hi)
                if side.pvalue_above(to_param(mid), alpha):
                    hi = mid
                else:
                    lo = mid
            return hi
        prev = v
    return estimate


def difference_interval(data, level: float = 0.95, alternative: str = "two-sided") -> tuple:
    """The exact unconditional interval for p1 - p2."""
    alpha = (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0)
    est = data.x1 / data.n1 - data.x2 / data.n2
    eps = 1e-9
    lo, hi = -1.0, 1.0
    if alternative in ("two-sided", "higher"):
        lo = _bound(_Side(data, "difference", True), alpha, -1.0 + eps, est, lambda v: v)
        lo = -1.0 if lo <= -1.0 + 2 * eps else lo
    if alternative in ("two-sided", "lower"):
        hi = _bound(_Side(data, "difference", False), alpha, 1.0 - eps, est, lambda v: v)
        hi = 1.0 if hi >= 1.0 - 2 * eps else hi
    return (float(lo), float(hi))


LOG_SPAN = 14.0   # the ratio is searched within e^-14 .. e^14 of its estimate (or of 1)


def ratio_interval(data, level: float = 0.95, alternative: str = "two-sided") -> tuple:
    """The exact unconditional interval for p1 / p2 (0 or inf where the data allow it)."""
    alpha = (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0)
    x1, n1, x2, n2 = data.x1, data.n1, data.x2, data.n2
    if x1 == 0 and x2 == 0:
        return (0.0, math.inf)
    lo, hi = 0.0, math.inf
    if x1 > 0 and x2 > 0:
        centre = math.log((x1 / n1) / (x2 / n2))
    else:
        centre = math.log((x1 + 0.5) / (n1 + 0.5) / ((x2 + 0.5) / (n2 + 0.5)))
    if alternative in ("two-sided", "higher") and x1 > 0:
        start = centre if x2 > 0 else centre + LOG_SPAN
        v = _bound(_Side(data, "ratio", True), alpha, centre - LOG_SPAN, start, math.exp)
        lo = 0.0 if v <= centre - LOG_SPAN else math.exp(v)
    if alternative in ("two-sided", "lower") and x2 > 0:
        start = centre if x1 > 0 else centre - LOG_SPAN
        v = _bound(_Side(data, "ratio", False), alpha, centre + LOG_SPAN, start, math.exp)
        hi = math.inf if v >= centre + LOG_SPAN else math.exp(v)
    return (float(lo), float(hi))


def interval_ops(data) -> float:
    """Estimated operations for both intervals (difference and ratio): about 30 evaluations
    a bound, each a score matrix and a grid of nuisance values (measured on this class of
    machine: some 200 operations a cell, and a fixed cost near 1e6 for the calls)."""
    cells = (data.n1 + 1) * (data.n2 + 1)
    return 4.0 * (GRID + 22) * (200.0 * cells + 1e6)
