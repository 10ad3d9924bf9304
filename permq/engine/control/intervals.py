"""Simultaneous intervals for doses against a control, from the single-step critical value c
of the joint permutation distribution (`manytoone.critical_value`).

- means: estimate -+ c x the pair's Welch standard error (one-sided: one end);
- ranks: the shifts delta whose pair statistic z(delta) = (U(delta) - n_0 n_j / 2) / sd stays
  within c, U(delta) = #{d > delta} + 1/2 #{d = delta} over the n_0 n_j differences d
  (dose - control); its ends are order statistics of those differences.

Either way 0 lies outside a dose's interval exactly when its oriented statistic exceeds c,
that is when the single-step adjusted p is at most 1 - level (save where a difference is 0).
"""
from __future__ import annotations

import math

import numpy as np

BIG = 1e299


def welch_intervals(dose_means, control_mean, se, c, alternative) -> list:
    out = []
    for m, s in zip(dose_means, se):
        est = float(m - control_mean)
        if not np.isfinite(c) or c >= BIG:
            out.append((-math.inf, math.inf))
            continue
        h = max(c, 0.0) * float(s) if alternative == "two-sided" else c * float(s)
        lo = est - h if alternative != "lower" else -math.inf
        hi = est + h if alternative != "higher" else math.inf
        out.append((lo, hi))
    return out


def shift_interval(dose, control, c, alternative) -> tuple:
    dose, control = np.asarray(dose, float), np.asarray(control, float)
    d = np.sort((dose[:, None] - control[None, :]).ravel())
    M = len(d)
    n0, nj = len(control), len(dose)
    mu, sd = M / 2.0, math.sqrt(n0 * nj * (n0 + nj + 1) / 12.0)
    if not np.isfinite(c) or c >= BIG:
        return (-math.inf, math.inf)
    lo, hi = -math.inf, math.inf
    if alternative in ("two-sided", "higher"):
        a = mu + c * sd                       # accept U(delta) <= a
        k = math.ceil(M - a - 1e-9)
        lo = -math.inf if k <= 0 else float(d[min(k, M) - 1])
    if alternative in ("two-sided", "lower"):
        b = mu - c * sd                       # accept U(delta) >= b
        k = math.floor(M - b + 1e-9)
        hi = math.inf if k >= M else float(d[max(k, 0)])
    return (lo, hi)


def hodges_lehmann(dose, control) -> float:
    d = np.asarray(dose, float)[:, None] - np.asarray(control, float)[None, :]
    return float(np.median(d))
