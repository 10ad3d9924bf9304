"""The statistic as a result reports it, from the simulation's statistic t (the group-1 score
sum, the signed sum, sum S_g^2 / n_g, sum w a, Kendall's S, the adjusted t) of scores a.

Each takes (problem, a, t); a family's `Check` (robustness/spec.py) names one or brings its own.
"""
from __future__ import annotations

import numpy as np


def as_is(problem, a, t):
    """The simulation's statistic is the reported one (score sums, Page's L, adjusted t)."""
    return t


def mean_difference(problem, a, t):
    n1 = int(problem.sizes[0])
    return t / n1 - (a.sum() - t) / (problem.n - n1)


def mean_of_flips(problem, a, t):
    return t / problem.n


def positive_sum(problem, a, t):
    """The sum of the positive scores (signed-rank W+, the count of positive signs)."""
    return (t + np.abs(a).sum()) / 2


def quadratic(engine_family):
    """The k-sample statistic of an engine.ksample family (F, Kruskal-Wallis's H, ...)."""
    def reported(problem, a, t):
        total = a.sum()
        ssb = np.maximum(t - total ** 2 / problem.n, 0.0)
        sst = float(((a - a.mean()) ** 2).sum())
        return engine_family.statistic_of(ssb, sst, problem.n, len(problem.sizes))
    return reported


def jonckheere(problem, a, t):
    """J = (pairs in different groups + S) / 2."""
    between = (problem.n ** 2 - float((problem.sizes ** 2).sum())) / 2
    return (between + t) / 2


def trend(problem, a, t):
    return t + problem.x.mean() * a.sum()


def kendall_tau(problem, a, t):
    from ..engine.association.pairings import tied_pairs

    n0 = problem.n * (problem.n - 1) / 2
    return t / np.sqrt((n0 - tied_pairs(problem.x)) * (n0 - tied_pairs(a)))


def slope(problem, a, t):
    w = problem.weights
    return t / (w * w).sum()


def correlation(problem, a, t):
    w = problem.weights
    return t / np.sqrt((w * w).sum() * ((a - a.mean()) ** 2).sum())


def friedman(problem, a, t):
    """Friedman's Q from sum_j S_j^2 / b."""
    k = len(problem.sizes)
    b = problem.n // k
    d = float(((a - (k + 1) / 2) ** 2).sum())
    return (k - 1) * (b * t - (b * k * (k + 1) / 2) ** 2 / k) / d if d > 0 else 0 * t


def within_block_f(problem, a, t):
    """The F for treatments within blocks from sum_j S_j^2 / b."""
    k = len(problem.sizes)
    b = problem.n // k
    means = np.array([a[problem.strata == s].mean() for s in problem.strata])
    resid_total = float(((a - means) ** 2).sum())
    sst = t - a.sum() ** 2 / problem.n
    with np.errstate(divide="ignore", invalid="ignore"):
        return (sst / (k - 1)) / ((resid_total - sst) / ((k - 1) * (b - 1)))
