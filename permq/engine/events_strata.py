"""Censored times in two groups within strata: the stratified weighted log-rank score handed
to the blocked engine's stratified sum.

Each stratum has its own risk sets, so each unit's score a_i (engine/events.py) is taken from
its own stratum's times and censoring alone, and U = sum over strata of the first group's
score sum. The reference set is every relabelling of the units within each stratum (each
stratum's group sizes kept), all equally likely under the null of equal hazards within each
stratum; U is a sum of fixed scores, so the blocked engine's stratified sum (engine/blocks,
"stratified-means") counts, lists or samples it. Strata holding one group only contribute
nothing and are left out (their scores are fixed). Within each stratum the scores sum to zero,
so E U = 0 and the two-sided p counts |U| >= |u|.

Scores are exact Fractions where the weights are rational, scaled by their common
denominator to integers when that is small (`events.scaled`), so that the engine compares
exact integers.
"""
from __future__ import annotations

from dataclasses import replace
from fractions import Fraction
from typing import Optional

import numpy as np

from .core.progress import NO_PROGRESS, Progress
from .events import STATISTIC, Scores, scaled, unit_scores

NOT_RATIONAL = "scores are not rationals with a small common denominator"


def stratum_scores(kind: str, time, event, strata) -> Scores:
    """Each unit's weighted log-rank score from its own stratum's risk sets."""
    time = np.asarray(time, dtype=float)
    event = np.asarray(event, dtype=int)
    strata = np.asarray(strata)
    floats = np.zeros(len(time))
    fractions: Optional[list] = [Fraction(0)] * len(time)
    for s in np.unique(strata):
        idx = np.flatnonzero(strata == s)
        if not (event[idx] == 1).any():
            continue                                    # no event: every score is zero
        a, fr = unit_scores(kind, time[idx], event[idx])
        floats[idx] = a
        if fr is None:
            fractions = None
        elif fractions is not None:
            for i, f in zip(idx, fr):
                fractions[i] = f
    return scaled(floats, fractions)


STATISTIC_NAMES = {k: "stratified " + v.replace(" of the first group", "") +
                   " of the first group, summed over strata" for k, v in STATISTIC.items()}


def candidates(kind: str, time, event, groups, strata, draws: int, names=None):
    from . import blocks

    sc = stratum_scores(kind, time, event, strata)
    out = blocks.candidates("stratified-means", sc.values, groups, strata, draws,
                            block_names=names)
    if sc.integer:
        return out
    return [replace(c, note=NOT_RATIONAL, feasible=False) if c.algorithm == "dp-integer" else c
            for c in out]


def run(kind: str, time, event, groups, strata, alternative: str, algorithm: str,
        draws=None, seed=None, progress: Progress = NO_PROGRESS, names=None, limits=None):
    """The permutation p of U within strata (`higher`: the first group has more events than
    expected, its hazard is the higher)."""
    from . import blocks
    from .core.limits import NO_LIMITS_GIVEN

    sc = stratum_scores(kind, time, event, strata)
    outcome = blocks.run("stratified-means", sc.values, groups, strata, alternative, algorithm,
                         draws=draws, seed=seed, progress=progress, block_names=names,
                         limits=limits or NO_LIMITS_GIVEN)
    support = outcome.null_support
    if support is not None:
        support = np.asarray(support, dtype=float) / sc.scale
    warnings = tuple(w.replace("the block contributes", "the stratum contributes")
                     for w in outcome.warnings)
    return replace(outcome, statistic_name=STATISTIC_NAMES[kind],
                   statistic=float(outcome.statistic) / sc.scale, null_support=support,
                   warnings=warnings)
