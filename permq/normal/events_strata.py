"""Textbook counterpart for censored times in two groups within strata.

U = sum_s U_s and V = sum_s V_s of the weighted log-rank score and its hypergeometric variance
in each stratum (normal/events.py); chi-square U^2 / V on 1 degree of freedom, z = U / sqrt(V)
for one side (the stratified log-rank test: Kalbfleisch & Prentice 1980, The Statistical
Analysis of Failure Time Data, sec. 6.2); the stratified hazard ratio exp(U / V) of the
log-rank U and V with exp(U / V +- z / sqrt(V)) (common practice).
"""
from __future__ import annotations

import math

import numpy as np

from ..result import Estimate, NormalTheory
from .events import NAMES, one_step_estimate, one_step_interval, score_and_variance
from .tails import p_from_z


def parts(kind, time, event, groups, strata):
    """(U, V) summed over the strata that hold both groups and an event."""
    time, event = np.asarray(time, float), np.asarray(event, int)
    groups, strata = np.asarray(groups, int), np.asarray(strata)
    u = v = 0.0
    for s in np.unique(strata):
        sel = strata == s
        first, second = sel & (groups == 0), sel & (groups == 1)
        if not first.any() or not second.any() or not (event[sel] == 1).any():
            continue
        us, vs = score_and_variance(kind, time[first], event[first], time[second],
                                    event[second])
        u, v = u + us, v + vs
    return u, v


def chi_square(kind, time, event, groups, strata, alternative: str, level: float = 0.95,
               with_interval: bool = True) -> NormalTheory:
    """The stratified weighted log-rank chi-square (two-sided) or z (one side), with the
    stratified hazard ratio's normal-theory interval beside it."""
    from .degenerate import undefined

    name = "stratified " + NAMES[kind]
    u, v = parts(kind, time, event, groups, strata)
    if not v > 0:
        return undefined(name, "no event time where both groups are at risk in one stratum")
    z = u / math.sqrt(v)
    interval, how = None, ""
    if with_interval:
        interval, how = one_step_interval(*parts("log-rank", time, event, groups, strata),
                                          level, alternative, "stratified log-rank U and V")
    if alternative == "two-sided":
        return NormalTheory(name, z * z, 1.0, p_from_z(z, "two-sided"), interval, how)
    return NormalTheory(name + ", one side as z", z, None, p_from_z(z, alternative), interval,
                        how)


def hazard_ratio(time, event, groups, strata, level, labels) -> Estimate:
    """exp(U / V) of the stratified log-rank U and V; its interval is normal theory (in
    `chi_square`), none is exact."""
    a, b = labels
    return one_step_estimate(*parts("log-rank", time, event, groups, strata), level,
                             f"hazard ratio {a} / {b} within strata (stratified log-rank "
                             "one-step, exp(U / V))")
