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

from ..errors import PlanError
from ..plan.cost import Candidate
from ..result import EngineOutcome
from .core import pvalues
from .core.counting import convolve_counts, counts_by_size, layer_bytes
from .core.enumeration import combinations_chunks
from .core.grid import Grid, integer_grid, reference_value
from .core.jumps import collect_sampled, interval_from_jumps
from .core.limits import EXACT_COUNT_LIMIT, INTERVAL_DRAWS
from .montecarlo.draws import random_u32, subset_sums
from .core.progress import NO_PROGRESS, Progress
from .montecarlo.sampling import iter_blocks
from .core.scores import median_scores, midranks, normal_scores


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
                             note=note, arrangements=total))
    else:
        out.append(Candidate("dp-integer", "dynamic programming on integer scores", True,
                             float("inf"), float("inf"), feasible=False,
                             note="scores do not lie on a decimal grid", arrangements=total))
    # listing runs at about 3 microseconds an arrangement (itertools, gathers, sums); every
    # sum is kept (and for means the moved count and jump too)
    out.append(Candidate("enumeration", "complete enumeration", True, total * (n1 * 8 + 600),
                         min(total, 1e5) * n1 * 8 * 3 + total * 8 * (3 if rule.mean_difference else 1),
                         arrangements=total,
                         note=f"{total:.3g} arrangements"))
    out.append(Candidate("monte-carlo", "Monte Carlo sampling of arrangements", False,
                         draws * N * 12.0, min(draws, 8192) * N * 8 * 4, arrangements=total,
                         note=f"{draws:,} draws"))
    return out


# ---------------------------------------------------------------- run

@dataclass(frozen=True)
class Scores:
    """The pooled scores as base + unit * w: w the grid's integers (exact sums) when the scores
    lie on a grid, else the scores centred on one of their values."""

    a: np.ndarray
    w: np.ndarray
    base: float
    unit: float
    grid: Optional[Grid]

    @property
    def exact(self) -> bool:
        return self.grid is not None


def _scores(a) -> Scores:
    grid = integer_grid(a)
    if grid is not None and float(grid.integers.sum()) < EXACT_COUNT_LIMIT:
        return Scores(a, grid.integers.astype(float), grid.origin, grid.step, grid)
    ref = reference_value(a)
    return Scores(a, a - ref, ref, 1.0, None)


def _statistic(rule: ScoreRule, sc: Scores, s_w, n1: int):
    """The reported statistic for a group-1 sum s_w of w (differences of means need no base)."""
    s_w = np.asarray(s_w, dtype=float)
    if rule.mean_difference:
        n2 = len(sc.w) - n1
        return sc.unit * (s_w / n1 - (sc.w.sum() - s_w) / n2)
    return n1 * sc.base + sc.unit * s_w


def run(rule, x, y, alternative: str, algorithm: str, level: float,
        draws: Optional[int] = None, seed: Optional[int] = None,
        progress: Progress = NO_PROGRESS) -> tuple[EngineOutcome, Optional[tuple]]:
    """The permutation p-value, and for `means` the exact interval for the shift x - y."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    fam = rule_of(rule)
    sc = _scores(scores_for(fam, x, y))
    n1 = len(x)
    t_obs = float(_statistic(fam, sc, sc.w[:n1].sum(), n1))
    if algorithm == "dp-integer":
        return _run_dp(fam, x, y, sc, alternative, level, t_obs, progress)
    if algorithm == "enumeration":
        return _run_enumeration(fam, x, y, sc, alternative, level, t_obs, progress)
    return _run_monte_carlo(fam, x, y, sc, alternative, level, t_obs, draws, seed, progress)


def _tail_count(sc: Scores, sums, s_obs, n1, alternative) -> int:
    """How many group-1 sums of w are at least as extreme as s_obs: exactly on a grid."""
    N = len(sc.w)
    if sc.exact:
        return pvalues.integer_exceedances(sums, s_obs, alternative, int(sc.w.sum()) * n1, N)
    center = n1 * sc.w.mean()
    return pvalues.exceedances(sums, s_obs, alternative, center=center,
                               scale=max(abs(s_obs - center), float(np.abs(sc.w).max())))


def _run_dp(fam, x, y, sc, alternative, level, t_obs, progress):
    n1, N = len(x), len(sc.w)
    grid = sc.grid
    if grid is None:
        raise PlanError("the scores do not lie on a decimal grid; use enumeration or Monte Carlo")
    q = grid.integers
    table = counts_by_size(q, n1, progress)
    counts = table[n1]
    support = np.flatnonzero(counts)
    counts = counts[support]
    s_obs = int(q[:n1].sum())
    mask = pvalues.integer_tail_mask(support, s_obs, alternative, int(q.sum()) * n1, N)
    p = pvalues.clip(counts[mask].sum() / counts.sum())
    total = comb(N, n1)
    warn = () if total < EXACT_COUNT_LIMIT else (
        "counts exceed 2^53 and are held in double precision (relative error below 1e-12)",)
    stat_support = _statistic(fam, sc, support, n1)
    out = EngineOutcome(fam.statistic_name, t_obs, p, "exact",
                        "dynamic programming on integer scores", arrangements=float(total),
                        null_support=stat_support, null_probs=counts / counts.sum(), warnings=warn)
    interval = None
    if fam.mean_difference:
        interval = _shift_interval_dp(q[:n1], q[n1:], grid, level, alternative, total)
    return out, interval


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
        values.append(grid.differences(w[nz]) / u)
        counts.append(conv[nz])
    return interval_from_jumps(np.concatenate(values), np.concatenate(counts), 1.0, float(total),
                               level, alternative)


def _run_enumeration(fam, x, y, sc, alternative, level, t_obs, progress):
    n1, N = len(x), len(sc.w)
    total = comb(N, n1)
    w = sc.w
    s_obs = w[:n1].sum()
    sums, us, ws = [], [], []
    done = 0
    for idx in combinations_chunks(N, n1):
        s = w[idx].sum(axis=1)
        sums.append(s)
        if fam.mean_difference:
            in2 = idx >= n1
            u = in2.sum(axis=1)
            g2_in = np.where(in2, w[idx], 0.0).sum(axis=1)
            g1_out = s_obs - (s - g2_in)
            us.append(u)
            ws.append(g1_out - g2_in)
        done += len(idx)
        progress.step(done / total, "enumerating")
    sums = np.concatenate(sums)
    p = pvalues.clip(_tail_count(sc, sums, s_obs, n1, alternative) / total)
    uniq, cnt = _tally(sums)
    out = EngineOutcome(fam.statistic_name, t_obs, p, "exact", "complete enumeration",
                        arrangements=float(total),
                        null_support=_statistic(fam, sc, uniq, n1), null_probs=cnt / total)
    interval = None
    if fam.mean_difference:
        u = np.concatenate(us)
        jump = np.concatenate(ws)
        moved = u > 0
        interval = interval_from_jumps(sc.unit * jump[moved] / u[moved], np.ones(moved.sum()),
                                       float((~moved).sum()), float(total), level, alternative)
    return out, interval


def _tally(values):
    v = np.sort(values)
    if v.size == 0:
        return v, v
    scale = max(float(np.abs(v).max()), 1e-300)
    new = np.empty(v.size, dtype=bool)
    new[0] = True
    new[1:] = np.diff(v) > pvalues.RTOL * scale
    starts = np.flatnonzero(new)
    return v[starts], np.diff(np.append(starts, v.size)).astype(float)


def _run_monte_carlo(fam, x, y, sc, alternative, level, t_obs, draws, seed, progress):
    n1, N = len(x), len(sc.w)
    w = sc.w
    s_obs = w[:n1].sum()
    means = fam.mean_difference

    def work(size, rng):
        s, u = subset_sums(w, n1, random_u32(rng, size, n1), sums_only=not means)
        b = _tail_count(sc, s, s_obs, n1, alternative)
        if not means:
            return b, None, 0
        # jump of each arrangement: (group-1 sum moved out - group-2 sum moved in) / u, which
        # is (observed group-1 sum - this arrangement's) / u
        moved = u > 0
        jumps = sc.unit * (s_obs - s)[moved] / u[moved]
        return b, jumps, int((~moved).sum())

    b, vals, identity, used = collect_sampled(iter_blocks(seed, draws, work, progress), means,
                                              INTERVAL_DRAWS)
    p, p_int = pvalues.monte_carlo_p(b, draws)
    out = EngineOutcome(fam.statistic_name, t_obs, p, "monte-carlo",
                        "Monte Carlo sampling of arrangements", arrangements=float(comb(N, n1)),
                        draws=draws, p_interval=p_int, seed=seed)
    interval = None
    if means:   # the observed arrangement counts once more (identity starts at 1)
        interval = interval_from_jumps(vals, None, identity, float(used + 1),
                                       level, alternative)
    return out, interval
