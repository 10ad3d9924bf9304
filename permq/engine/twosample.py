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
from ..plan.sizes import big, words
from .core.counting import convolve_counts, counts_by_size, layer_bytes, top_row_work
from .core.enumeration import CHUNK, combinations_chunks
from .core.grid import Grid, integer_grid, reference_value
from .core.jumps import JumpStream, collect_sampled, interval_from_jumps
from .core.limits import EXACT_COUNT_LIMIT, INTERVAL_DRAWS
from .core.tally import BYTES_PER_VALUE as TALLY_BYTES, DEFAULT_LIMIT as TALLY_LIMIT, Tally
from .montecarlo.draws import subset_sums_drawn
from .core.progress import NO_PROGRESS, Progress
from .montecarlo.sampling import c_loops_present, iter_blocks, parallel_ops, sampled_bytes
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
    m = min(n1, N - n1)          # counting and listing take subsets of the smaller group
    count = comb(N, n1)
    total = big(count)
    out = []
    grid = integer_grid(a)
    if grid is not None:
        width = float(np.sort(grid.integers)[::-1][:m].sum()) + 1
        ops = top_row_work(grid.integers, m)
        mem = 2 * layer_bytes(m + 1, width)          # the table and numpy's overlap copy
        if rule.mean_difference:   # the exact interval counts each group on its own as well
            ops += N * (m + 1) * width / 2
            mem *= 2
        note = ("scores are integers" if not rule.mean_difference
                else f"data on a grid of {grid.step:g} ({grid.decimals} decimals)")
        out.append(Candidate("dp-integer", "dynamic programming on integer scores", True, ops, mem,
                             note=note, arrangements=count))
    else:
        out.append(Candidate("dp-integer", "dynamic programming on integer scores", True,
                             float("inf"), float("inf"), feasible=False,
                             note="scores do not lie on a decimal grid", arrangements=count))
    # listing runs at about 3 microseconds an arrangement (itertools, gathers, sums)
    out.append(Candidate("enumeration", "complete enumeration", True, total * (m * 8 + 600),
                         _enumeration_bytes(rule.mean_difference, m, total), arrangements=count,
                         note=f"{words(count)} arrangements"))
    # the C loops hold no random integers; the other paths a block of them for the first group
    # (4 bytes an item a draw); for means every draw's jump is kept for the interval
    held = 0.0 if c_loops_present() else 4.0
    memory = sampled_bytes(draws, n1, held, 24.0 if rule.mean_difference else 0.0)
    # a draw takes n1 steps of a partial shuffle (the first group, as named), then its tail test
    out.append(Candidate("monte-carlo", "Monte Carlo sampling of arrangements", False,
                         parallel_ops(draws * (n1 * 12.0 + 250.0), draws), memory,
                         arrangements=count,
                         note=f"{draws:,} draws"))
    return out


def _enumeration_bytes(mean_difference: bool, m: int, total: float) -> float:
    """A chunk of subsets and its sums, the law's tally, and for means the interval's kept
    jumps (a share alpha of the arrangements at most, a side)."""
    chunk = min(total, CHUNK) * (m * 8 * 4 + 64)
    law = min(total, TALLY_LIMIT) * TALLY_BYTES
    jumps = 0.5 * total * 8 * 3 if mean_difference else 0.0
    return chunk + law + jumps


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


def observed(rule, x, y) -> float:
    """The reported statistic of the data as they are (what `run` reports)."""
    fam = rule_of(rule)
    sc = _scores(scores_for(fam, np.asarray(x, float), np.asarray(y, float)))
    return float(_statistic(fam, sc, sc.w[:len(x)].sum(), len(x)))


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
    """Counts of the smaller group's score sums; group 1's sum is the total less group 2's."""
    n1, N = len(x), len(sc.w)
    m = min(n1, N - n1)
    grid = sc.grid
    if grid is None:
        raise PlanError("the scores do not lie on a decimal grid; use enumeration or Monte Carlo")
    q = grid.integers
    counts = counts_by_size(q, m, progress, only_top=True)[m]
    support = np.flatnonzero(counts)
    counts = counts[support]
    if m < n1:                                   # counted group 2: S1 = Q - S2
        support, counts = int(q.sum()) - support[::-1], counts[::-1]
    s_obs = int(q[:n1].sum())
    mask = pvalues.integer_tail_mask(support, s_obs, alternative, int(q.sum()) * n1, N)
    p = pvalues.clip(counts[mask].sum() / counts.sum())
    total = comb(N, n1)
    warn = () if total < EXACT_COUNT_LIMIT else (
        "counts exceed 2^53 and are held in double precision (relative error below 1e-12)",)
    stat_support = _statistic(fam, sc, support, n1)
    out = EngineOutcome(fam.statistic_name, t_obs, p, "exact",
                        "dynamic programming on integer scores", arrangements=total,
                        null_support=stat_support, null_probs=counts / counts.sum(), warnings=warn)
    interval = None
    if fam.mean_difference:
        interval = _shift_interval_dp(q[:n1], q[n1:], grid, level, alternative)
    return out, interval


def _shift_interval_dp(q1, q2, grid: Grid, level, alternative):
    """Exact interval for delta in x - delta vs y, from the jumps (u moved, w = Q1_u - Q2_u).

    The counts come as true counts times 2^-e (e > 0 only past 2^960); the identity and the
    total are put on the same scale, so the shares are exact."""
    n1, n2 = len(q1), len(q2)
    top = min(n1, n2)
    t1, e1 = counts_by_size(q1, top, with_exponent=True)
    t2, e2 = counts_by_size(q2, top, with_exponent=True)
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
    counts = np.concatenate(counts)
    identity = float(np.ldexp(1.0, -(e1 + e2)))      # u = 0: the observed split itself
    return interval_from_jumps(np.concatenate(values), counts, identity,
                               float(counts.sum()) + identity, level, alternative)


def _run_enumeration(fam, x, y, sc, alternative, level, t_obs, progress):
    """Every subset of the smaller group, listed in chunks: exceedances counted, the law
    tallied and the interval's jumps streamed as they come (memory stays bounded)."""
    n1, N = len(x), len(sc.w)
    m = min(n1, N - n1)
    total = comb(N, n1)
    w = sc.w
    s_obs = w[:n1].sum()
    sum_all, x_sum = w.sum(), s_obs
    tally = Tally(max(1.0, float(np.abs(w).sum())), TALLY_LIMIT)
    jumps = JumpStream(1.0, float(total), level, alternative) if fam.mean_difference else None
    b, done = 0, 0
    for idx in combinations_chunks(N, m):
        picked = w[idx]
        raw = picked.sum(axis=1)
        s = raw if m == n1 else sum_all - raw    # listed group 2: S1 = total - S2
        b += _tail_count(sc, s, s_obs, n1, alternative)
        tally.add(s)
        if jumps is not None:
            # u items change sides each way; jump = (group 1's items out - group 2's in) / u
            if m == n1:                          # listed: the new group 1
                from2 = idx >= n1
                moved = from2.sum(axis=1)
                g2_in = np.where(from2, picked, 0.0).sum(axis=1)
                g1_out = x_sum - (s - g2_in)
            else:                                # listed: the new group 2
                from1 = idx < n1
                moved = from1.sum(axis=1)
                g1_out = np.where(from1, picked, 0.0).sum(axis=1)
                g2_in = (sum_all - x_sum) - (raw - g1_out)
            keep = moved > 0
            jumps.add(sc.unit * (g1_out - g2_in)[keep] / moved[keep])
        done += len(idx)
        progress.step(done / total, "enumerating")
    p = pvalues.clip(b / total)
    uniq, cnt = tally.law()
    out = EngineOutcome(fam.statistic_name, t_obs, p, "exact", "complete enumeration",
                        arrangements=total,
                        null_support=None if uniq is None else _statistic(fam, sc, uniq, n1),
                        null_probs=None if cnt is None else cnt / cnt.sum())
    return out, (jumps.interval() if jumps is not None else None)


def _run_monte_carlo(fam, x, y, sc, alternative, level, t_obs, draws, seed, progress):
    n1, N = len(x), len(sc.w)
    w = sc.w
    s_obs = w[:n1].sum()
    means = fam.mean_difference

    def work(size, rng):
        s, u = subset_sums_drawn(w, n1, rng, size, sums_only=not means)
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
                        "Monte Carlo sampling of arrangements", arrangements=comb(N, n1),
                        draws=draws, p_interval=p_int, seed=seed)
    interval = None
    if means:   # the observed arrangement counts once more (identity starts at 1)
        interval = interval_from_jumps(vals, None, identity, float(used + 1),
                                       level, alternative)
    return out, interval
