"""Textbook counterpart for censored times in three or more groups.

At each event time t_j with d_j events among n_j at risk, n_gj of them in group g, the groups'
weighted observed minus expected events are U_g = sum_j w_j (d_gj - d_j n_gj / n_j), with
covariance

    V_gh = sum_j w_j^2 d_j (n_j - d_j) / (n_j - 1) (n_gj / n_j) (delta_gh - n_hj / n_j);

chi-square U' V^- U on k - 1 degrees of freedom (U and V of the first k - 1 groups; Mantel
1966; Peto & Peto 1972; Klein & Moeschberger 2003, Survival Analysis, sec. 7.3).
"""
from __future__ import annotations

import numpy as np

from ..engine.core.inverse import generalized_inverse
from ..result import NormalTheory
from .events import NAMES


def observed_expected(kind, time, event, groups, k: int):
    """(observed events O_g, U_g = weighted O - E, covariance V) over the pooled risk sets."""
    from ..engine.events import float_weights, risk_table

    time, event, groups = np.asarray(time, float), np.asarray(event, int), np.asarray(groups, int)
    t_events, dj, nj = risk_table(time, event)
    w = float_weights(kind, dj, nj)
    u = np.zeros(k)
    cov = np.zeros((k, k))
    for tj, d, n, wj in zip(t_events, dj, nj, w):
        at_risk = time >= tj
        ng = np.bincount(groups[at_risk], minlength=k).astype(float)
        dg = np.bincount(groups[(time == tj) & (event == 1)], minlength=k).astype(float)
        p = ng / n
        u += wj * (dg - d * p)
        if n > 1:
            cov += wj ** 2 * d * (n - d) / (n - 1) * (np.diag(p) - np.outer(p, p))
    observed = np.bincount(groups[event == 1], minlength=k)
    return observed, u, cov


def chi_square(kind, time, event, groups, k: int) -> NormalTheory:
    """U' V^- U on the rank of V (k - 1 when every group is at risk at some event time)."""
    from ..lazy import stats
    from .degenerate import undefined

    name = NAMES[kind] + f", {k} groups"
    _, u, cov = observed_expected(kind, time, event, groups, k)
    sub, us = cov[:k - 1, :k - 1], u[:k - 1]
    inv, rank = generalized_inverse(sub)
    rank = int(rank)
    if rank == 0:
        return undefined(name, "no event time where two groups are at risk")
    chi2 = float(us @ inv @ us)
    return NormalTheory(name, chi2, float(rank), float(stats.chi2.sf(chi2, rank)),
                        None, "")
