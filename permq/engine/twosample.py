"""Two independent samples: linear permutation statistics S = sum of group-1 scores.

Families: means (Pitman's permutation test on the difference in means), ranks (Wilcoxon
rank-sum with mid-ranks), normal-scores (van der Waerden), medians (Mood's median test).
Each reported statistic is an increasing affine function of S, so the p-value is had from the
null distribution of S over all C(N, n1) ways to choose group 1, conditional on ties.
"""
from __future__ import annotations

from dataclasses import dataclass
from math import comb
from typing import Callable, Optional

import numpy as np

from ..plan.cost import Candidate
from ..result import EngineOutcome
from .core import pvalues
from .core.counting import EXACT_COUNT_LIMIT, convolve_counts, counts_by_size, layer_bytes
from .core.enumeration import combinations_chunks
from .core.jumps import collect_sampled, interval_from_jumps
from .montecarlo.draws import random_u32, subset_sums
from .core.progress import NO_PROGRESS, Progress
from .montecarlo.sampling import iter_blocks
from .core.scores import Grid, integer_grid, median_scores, midranks, normal_scores

MAX_DP_BYTES = 2.0e9
# the Monte Carlo interval uses the first draws up to this many (memory stays bounded)
MAX_INTERVAL_DRAWS = 2_000_000


@dataclass(frozen=True)
class ScoreRule:
    """How a two-sample family scores the pooled values; its statistic is the first group's
    score sum (or, for `mean_difference`, the difference in means, with the exact interval
    for a shift). A family may bring its own rule (families/scale.py does)."""

    key: str
    statistic_name: str
    scores: Callable[[np.ndarray], np.ndarray]   # pooled values (first group first) -> scores
    mean_difference: bool = False


RULES = {
    "means": ScoreRule("means", "difference in means", lambda a: a, mean_difference=True),
    "ranks": ScoreRule("ranks", "rank sum of the first group (mid-ranks)", midranks),
    "normal-scores": ScoreRule("normal-scores", "normal-scores sum of the first group",
                               normal_scores),
    "medians": ScoreRule("medians", "count of the first group above the pooled median",
                         median_scores),
}


def rule_of(rule) -> ScoreRule:
    """A rule, or the name of one of this engine's rules."""
    return RULES[rule] if isinstance(rule, str) else rule


def scores_for(rule, x, y) -> np.ndarray:
    return rule_of(rule).scores(np.concatenate([x, y]).astype(float))


def statistic_from_sum(rule, s, a, n1: int):
    """The reported statistic for group-1 score sum(s) s."""
    if rule_of(rule).mean_difference:
        n2 = len(a) - n1
        return np.asarray(s) / n1 - (a.sum() - np.asarray(s)) / n2
    return np.asarray(s, dtype=float)


# ---------------------------------------------------------------- cost

def candidates(rule, x, y, draws: int) -> list[Candidate]:
    rule = rule_of(rule)
    a = scores_for(rule, x, y)
    n1, N = len(x), len(a)
    total = float(comb(N, n1))
    out = []
    grid = integer_grid(a)
    if grid is not None:
        width = float(np.sort(grid.integers)[::-1][:n1].sum()) + 1
        ops = N * (n1 + 1) * width / 2
        mem = layer_bytes(n1 + 1, width)
        if rule.mean_difference:   # the exact interval counts each group on its own as well
            ops *= 2
            mem *= 2
        note = ("scores are integers" if not rule.mean_difference
                else f"data on a grid of {grid.step:g} ({grid.decimals} decimals)")
        out.append(Candidate("dp-integer", "dynamic programming on integer scores", True, ops, mem,
                             feasible=mem <= MAX_DP_BYTES, note=note, arrangements=total))
    else:
        out.append(Candidate("dp-integer", "dynamic programming on integer scores", True,
                             float("inf"), float("inf"), feasible=False,
                             note="scores do not lie on a decimal grid", arrangements=total))
    # listing runs at about 3 microseconds an arrangement (itertools, gathers, sums)
    out.append(Candidate("enumeration", "complete enumeration", True, total * (n1 * 8 + 600),
                         min(total, 2e5) * n1 * 8 * 3, arrangements=total,
                         note=f"{total:.3g} arrangements"))
    out.append(Candidate("monte-carlo", "Monte Carlo sampling of arrangements", False,
                         draws * N * 12.0, min(draws, 8192) * N * 8 * 4, arrangements=total,
                         note=f"{draws:,} draws"))
    return out


# ---------------------------------------------------------------- run

def run(rule, x, y, alternative: str, algorithm: str, level: float,
        draws: Optional[int] = None, seed: Optional[int] = None,
        progress: Progress = NO_PROGRESS) -> tuple[EngineOutcome, Optional[tuple]]:
    """The permutation p-value, and for `means` the exact interval for the shift x - y."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    fam = rule_of(rule)
    a = scores_for(fam, x, y)
    n1 = len(x)
    t_obs = float(statistic_from_sum(fam, a[:n1].sum(), a, n1))
    if algorithm == "dp-integer":
        return _run_dp(fam, x, y, a, alternative, level, t_obs, progress)
    if algorithm == "enumeration":
        return _run_enumeration(fam, x, y, a, alternative, level, t_obs, progress)
    return _run_monte_carlo(fam, x, y, a, alternative, level, t_obs, draws, seed, progress)


def _run_dp(fam, x, y, a, alternative, level, t_obs, progress):
    n1, N = len(x), len(a)
    grid = integer_grid(a)
    q = grid.integers
    table = counts_by_size(q, n1, progress)
    counts = table[n1]
    support = np.flatnonzero(counts)
    counts = counts[support]
    s_obs = int(q[:n1].sum())
    p = _integer_tail(support, counts, s_obs, int(q.sum()) * n1, N, alternative)
    total = comb(N, n1)
    warn = () if total < EXACT_COUNT_LIMIT else (
        "counts exceed 2^53 and are held in double precision (relative error below 1e-12)",)
    stat_support = statistic_from_sum(fam, n1 * grid.origin + grid.step * support, a, n1)
    out = EngineOutcome(fam.statistic_name, t_obs, p, "exact",
                        "dynamic programming on integer scores", arrangements=float(total),
                        null_support=stat_support, null_probs=counts / counts.sum(), warnings=warn)
    interval = None
    if fam.mean_difference:
        interval = _shift_interval_dp(q[:n1], q[n1:], grid, level, alternative, total)
    return out, interval


def _integer_tail(support, counts, s_obs, center_num, center_den, alternative) -> float:
    """Exact integer comparisons: two-sided |den*s - num| >= |den*s_obs - num|."""
    if alternative == "higher":
        mask = support >= s_obs
    elif alternative == "lower":
        mask = support <= s_obs
    else:
        dev = np.abs(support.astype(np.int64) * center_den - center_num)
        mask = dev >= abs(s_obs * center_den - center_num)
    return pvalues.clip(counts[mask].sum() / counts.sum())


def _shift_interval_dp(q1, q2, grid: Grid, level, alternative, total):
    """Exact interval for delta in x - delta vs y, from the jumps (u moved, w = Q1_u - Q2_u)."""
    n1, n2 = len(q1), len(q2)
    top = min(n1, n2)
    t1 = counts_by_size(q1, top)
    t2 = counts_by_size(q2, top)
    values, counts = [], []
    for u in range(1, top + 1):
        c1, c2 = t1[u], t2[u]
        c1 = np.trim_zeros(c1, "b")
        c2 = np.trim_zeros(c2, "b")
        conv = convolve_counts(c1, c2[::-1])
        w = np.arange(len(conv)) - (len(c2) - 1)
        nz = conv > 0
        values.append(grid.step * w[nz] / u)
        counts.append(conv[nz])
    return interval_from_jumps(np.concatenate(values), np.concatenate(counts), 1.0, float(total),
                               level, alternative)


def _run_enumeration(fam, x, y, a, alternative, level, t_obs, progress):
    n1, N = len(x), len(a)
    total = comb(N, n1)
    center = n1 * a.mean()
    s_obs = a[:n1].sum()
    sums, us, ws = [], [], []
    x_sum = a[:n1].sum()
    done = 0
    for idx in combinations_chunks(N, n1):
        s = a[idx].sum(axis=1)
        sums.append(s)
        if fam.mean_difference:
            in2 = idx >= n1
            u = in2.sum(axis=1)
            g2_in = np.where(in2, a[idx], 0.0).sum(axis=1)
            g1_out = x_sum - (s - g2_in)
            us.append(u)
            ws.append(g1_out - g2_in)
        done += len(idx)
        progress.step(done / total, "enumerating")
    sums = np.concatenate(sums)
    b = pvalues.exceedances(sums, s_obs, alternative, center=center,
                            scale=max(abs(s_obs - center), np.abs(a).max()))
    p = pvalues.clip(b / total)
    uniq, cnt = _tally(sums)
    out = EngineOutcome(fam.statistic_name, t_obs, p, "exact", "complete enumeration",
                        arrangements=float(total),
                        null_support=statistic_from_sum(fam, uniq, a, n1), null_probs=cnt / total)
    interval = None
    if fam.mean_difference:
        u = np.concatenate(us)
        w = np.concatenate(ws)
        moved = u > 0
        interval = interval_from_jumps(w[moved] / u[moved], np.ones(moved.sum()),
                                       float((~moved).sum()), float(total), level, alternative)
    return out, interval


def _tally(values):
    v = np.sort(values)
    if v.size == 0:
        return v, v
    scale = max(1.0, float(np.abs(v).max()))
    new = np.empty(v.size, dtype=bool)
    new[0] = True
    new[1:] = np.diff(v) > 1e-9 * scale
    starts = np.flatnonzero(new)
    return v[starts], np.diff(np.append(starts, v.size)).astype(float)


def _run_monte_carlo(fam, x, y, a, alternative, level, t_obs, draws, seed, progress):
    n1, N = len(x), len(a)
    s_obs = a[:n1].sum()
    center = n1 * a.mean()
    scale = max(abs(s_obs - center), float(np.abs(a).max()))
    means = fam.mean_difference

    def work(size, rng):
        s, u = subset_sums(a, n1, random_u32(rng, size, n1), sums_only=not means)
        b = pvalues.exceedances(s, s_obs, alternative, center=center, scale=scale)
        if not means:
            return b, None, 0
        # jump of each arrangement: (group-1 sum moved out - group-2 sum moved in) / u, which
        # is (observed group-1 sum - this arrangement's) / u
        moved = u > 0
        jumps = (s_obs - s)[moved] / u[moved]
        return b, jumps, int((~moved).sum())

    b, vals, identity, used = collect_sampled(iter_blocks(seed, draws, work, progress), means,
                                              MAX_INTERVAL_DRAWS)
    p, p_int = pvalues.monte_carlo_p(b, draws)
    out = EngineOutcome(fam.statistic_name, t_obs, p, "monte-carlo",
                        "Monte Carlo sampling of arrangements", arrangements=float(comb(N, n1)),
                        draws=draws, p_interval=p_int, seed=seed)
    interval = None
    if means:   # the observed arrangement counts once more (identity starts at 1)
        interval = interval_from_jumps(vals, None, identity, float(used + 1),
                                       level, alternative)
    return out, interval
