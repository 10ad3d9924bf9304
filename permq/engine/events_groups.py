"""Censored times in three or more groups: the k-sample weighted log-rank statistic handed to
the k-sample engine.

With the pooled risk sets' unit scores a_i (engine/events.py) and the groups' score sums S_g
(each group's weighted observed minus expected events), the permutation statistic is the
quadratic form of S in its permutation covariance,

    L = (N - 1) sum_g S_g^2 / n_g / sum_i a_i^2            (the scores sum to zero),

an increasing function of the between-group sum of squares of the scores, so the k-sample
engine (`ksample.QuadraticFamily`) counts, lists or samples it over every assignment of the
units to groups of the observed sizes. Under the null L is about chi-square on k - 1 degrees
of freedom; the textbook statistic beside it (normal/events_groups.py) uses the
hypergeometric variance of the risk sets instead of the permutation variance.

Scores are exact integers over their common denominator where the weights are rational
(`events.scaled`); L does not change with the scale.
"""
from __future__ import annotations

from dataclasses import replace
from functools import lru_cache

import numpy as np

from .core.progress import NO_PROGRESS, Progress
from .events import Scores, scaled, unit_scores
from .events_strata import NOT_RATIONAL

STATISTIC_NAMES = {
    "log-rank": "k-sample log-rank permutation chi-square (N - 1) sum S_g^2 / n_g / sum a^2",
    "gehan": "k-sample Gehan permutation chi-square (N - 1) sum S_g^2 / n_g / sum a^2",
    "tarone-ware": "k-sample Tarone-Ware permutation chi-square (N - 1) sum S_g^2 / n_g / "
                   "sum a^2",
    "peto-prentice": "k-sample Peto-Prentice permutation chi-square (N - 1) sum S_g^2 / n_g / "
                     "sum a^2"}


def pooled_scores(kind: str, time, event) -> Scores:
    return scaled(*unit_scores(kind, np.asarray(time, dtype=float),
                               np.asarray(event, dtype=int)))


@lru_cache(maxsize=None)
def _family(kind: str):
    from .ksample import quadratic

    return quadratic.QuadraticFamily(
        "censored-" + kind, STATISTIC_NAMES[kind], score=lambda x: np.asarray(x, dtype=float),
        statistic_of=quadratic.scaled_statistic(lambda N: N - 1), grid=quadratic.value_grid,
        counting_words="dynamic programming over group score sums (scores as exact integers)")


def candidates(kind: str, time, event, groups, draws: int):
    sc = pooled_scores(kind, time, event)
    out = _family(kind).candidates(sc.values, groups, draws)
    if sc.integer:
        return out
    return [replace(c, note=NOT_RATIONAL, feasible=False) if c.algorithm.startswith("dp-")
            else c for c in out]


def run(kind: str, time, event, groups, alternative: str, algorithm: str, draws=None,
        seed=None, progress: Progress = NO_PROGRESS):
    """The permutation p of L; any alternative is its upper tail (the statistic has no side)."""
    sc = pooled_scores(kind, time, event)
    return _family(kind).run(sc.values, groups, alternative, algorithm, draws=draws, seed=seed,
                             progress=progress)
