"""The lowest effective dose: a step-down trend test against the control.

Levels 0 (the control) < 1 < ... < K in dose order. Hypothesis H_m: the control and doses
1 .. m have one distribution. Step m tests H_m with the linear trend in dose scores over those
m + 1 groups alone, T = sum_g d_g (sum of group g's scores), by permuting their units only
(the values; or, `ranked`, mid-ranks re-ranked among the m + 1 groups): exactly by the
trend law of `trend`, or by seeded Monte Carlo (the draws of `engine/ordered`).

Closed testing (Tukey, Ciminera and Heyse 1985, Biometrics 41:295): H_K implies every H_m
with m < K, so the intersections of the H_m are the H_m themselves; H_m is rejected at level
alpha when every H_m' with m' >= m is rejected by its own test at alpha. So the adjusted
p of step m is the largest raw p from the top step down to m; testing starts with all doses
and drops the top dose while the trend is significant. The lowest effective dose is the
lowest m so rejected (none when the top step is not). Family-wise error is held at alpha in
the strong sense for these hypotheses.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ...plan.cost import Candidate
from ..core import pvalues
from ..core.progress import NO_PROGRESS, Progress
from ..core.scores import midranks
from . import trend

EXACT_WORDS = "exact at each step: dynamic programming over units and group counts"
SAMPLED_WORDS = "Monte Carlo at each step: random assignments of the step's units"


@dataclass(frozen=True)
class Step:
    top: int                     # the highest level in this step (1 .. K)
    sizes: tuple                 # units per level 0 .. top
    trend: float                 # T = sum of dose score x group total (values or ranks)
    z: float                     # (T - E0 T) / sd0 T
    p_value: float
    p_adjusted: float
    method: str
    arrangements: float
    draws: Optional[int] = None
    p_interval: Optional[tuple] = None


def scores_of(values, ranked: bool) -> np.ndarray:
    """The step's scores: mid-ranks among its units (`ranked`), else the values."""
    return midranks(values) if ranked else np.asarray(values, dtype=float)


def _subset(values, groups, top, ranked):
    keep = np.asarray(groups) <= top
    return scores_of(np.asarray(values)[keep], ranked), np.asarray(groups)[keep]


def candidates(values, groups, scores, ranked: bool, draws: int) -> list:
    from ..ksample import monte_carlo_candidate

    k = int(np.max(groups)) + 1
    ops = memory = mc_ops = 0.0
    feasible, note, total = True, "", 0.0
    for top in range(k - 1, 0, -1):
        x, g = _subset(values, groups, top, ranked)
        sizes = np.bincount(g, minlength=top + 1)
        total = max(total, float(trend.count(sizes)))
        mc = monte_carlo_candidate(len(x), trend.count(sizes), draws, per_item=11.0)
        mc_ops += mc.ops
        tg = trend.grid(x, g, scores[:top + 1])
        if tg is None:
            feasible, note = False, "values or dose scores are not on a decimal grid"
            continue
        o, m, cells = trend.cost(tg)
        ops, memory = ops + o, max(memory, m)
        if cells > trend.MAX_CELLS:
            feasible, note = False, "too many counting states"
    return [Candidate("dp-steps", EXACT_WORDS, True, ops if feasible else math.inf,
                      memory if feasible else math.inf, feasible=feasible, note=note,
                      arrangements=total),
            Candidate("monte-carlo", SAMPLED_WORDS, False, mc_ops,
                      float(8192 * len(values) * 24), note=f"{draws} draws a step",
                      arrangements=total)]


def trend_parts(x, g, d):
    """(T, E0 T, sd0 T) of the linear trend over these groups."""
    sizes = np.bincount(g, minlength=len(d)).astype(float)
    N = len(x)
    T = float(np.sum(d[g] * x))
    centre = float(x.mean() * np.sum(sizes * d))
    dbar = float(np.sum(sizes * d) / N)
    var = float(np.sum((x - x.mean()) ** 2) / (N - 1) * np.sum(sizes * (d - dbar) ** 2))
    return T, centre, math.sqrt(var) if var > 0 else 0.0


def run(values, groups, scores, ranked: bool, alternative: str, algorithm: str,
        draws: int, seed: int, progress: Progress = NO_PROGRESS) -> list:
    """The steps from the top dose down, each with its raw and closed-testing adjusted p."""
    k = int(np.max(groups)) + 1
    steps, running = [], 0.0
    for top in range(k - 1, 0, -1):
        x, g = _subset(values, groups, top, ranked)
        d = np.asarray(scores, dtype=float)[:top + 1]
        sizes = np.bincount(g, minlength=top + 1)
        T, centre, sd = trend_parts(x, g, d)
        z = (T - centre) / sd if sd > 0 else 0.0
        if algorithm == "dp-steps":
            p, how, n_draws, interval = _exact(x, g, d, alternative, progress), "exact", None, None
        else:
            from ..ordered import LINEAR_TREND

            out = LINEAR_TREND.run(x, g, alternative, "monte-carlo", draws, seed, progress,
                                   scores=d)
            p, how, n_draws, interval = out.p_value, "monte-carlo", out.draws, out.p_interval
        running = max(running, p)
        steps.append(Step(top, tuple(int(v) for v in sizes), T, z, p, running, how,
                          float(trend.count(sizes)), n_draws, interval))
    return steps


def _exact(x, g, d, alternative, progress) -> float:
    if np.ptp(x) == 0 or np.ptp(d) == 0:
        return 1.0
    tg = trend.grid(x, g, d)
    support, ways = trend.law(tg, progress)
    t_obs = float(np.sum(tg.e[tg.cls] * tg.z))
    centre = float(tg.z.mean() * np.sum(tg.sizes * tg.e))
    return pvalues.tail_probability(support, ways, t_obs, alternative, center=centre)


def lowest_effective(steps, alpha: float) -> Optional[int]:
    """The lowest dose whose step is rejected with every step above it (None: no dose)."""
    found = None
    for st in steps:                      # from the top dose down
        if st.p_adjusted <= alpha:
            found = st.top
        else:
            break
    return found
