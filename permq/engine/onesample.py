"""Paired differences and one sample against a value: sign-flip permutation statistics.

Under the null each difference d_i is symmetric about zero, so every pattern of signs is
equally likely. Families: means (sign-flip test of the mean difference), ranks (Wilcoxon
signed-rank with mid-ranks), signs (the sign test).

Zero differences (documented rule): they carry no sign, so they are left out of the sign
flips. For the signed-rank test they keep their place in the ranking of |d| (Pratt, 1959), so
the ranks of the other differences do not depend on whether zeros were recorded; the sign
test drops them. The reference set has 2^(number of non-zero differences) sign patterns.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Optional

import numpy as np

from ..plan.cost import Candidate
from ..result import EngineOutcome
from .core import pvalues
from .core.counting import counts_all_subsets, counts_by_size, layer_bytes
from .core.enumeration import sign_patterns_chunks
from ..plan.sizes import big, words
from .core.grid import integer_grid
from .core.jumps import JumpStream, collect_sampled, interval_from_jumps
from .core.limits import EXACT_COUNT_LIMIT, INTERVAL_DRAWS
from .core.tally import BYTES_PER_VALUE as TALLY_BYTES, DEFAULT_LIMIT as TALLY_LIMIT, Tally
from .montecarlo.draws import flip_sums, random_bits
from .montecarlo.sampling import c_loops_present, iter_blocks, parallel_ops, sampled_bytes
from .core.progress import NO_PROGRESS, Progress
from .core.scores import midranks

ENUMERATION_MAX_ITEMS = 62      # sign patterns are listed as the bits of one int64 code

@dataclass(frozen=True)
class FlipRule:
    """How a one-sample family scores the differences' sizes; its statistic is the sum of the
    positive differences' scores (or, for `mean`, the mean difference, with the exact
    interval of the mean)."""

    key: str
    statistic_name: str
    scores: Callable[[np.ndarray], np.ndarray]   # |d| -> scores
    mean: bool = False


RULES = {
    "means": FlipRule("means", "mean difference", lambda a: a, mean=True),
    "ranks": FlipRule("ranks", "signed-rank sum W+ (mid-ranks)", midranks),
    "signs": FlipRule("signs", "number of positive differences", np.ones_like),
}


def rule_of(rule) -> FlipRule:
    """A rule, or the name of one of this engine's rules."""
    return RULES[rule] if isinstance(rule, str) else rule


def flip_scores(rule, d) -> tuple[np.ndarray, np.ndarray]:
    """(scores r >= 0 of the non-zero differences, their signs as bool positive)."""
    d = np.asarray(d, dtype=float)
    nonzero = d != 0
    r = np.asarray(rule_of(rule).scores(np.abs(d)), dtype=float)   # zeros keep their ranks
    return r[nonzero], d[nonzero] > 0  # (Pratt) and are then left out of the flips


def statistic_from_positive_sum(rule, p_sum, r, n_all: int):
    """Reported statistic from P = sum of scores with positive sign."""
    if rule_of(rule).mean:
        return (2 * np.asarray(p_sum) - r.sum()) / n_all
    return np.asarray(p_sum, dtype=float)


def _anchored_grid(r):
    """Integer scores with origin 0 (a sum over a variable number of items needs it), or None
    off a grid or when their total would pass the exact integers of double precision."""
    grid = integer_grid(np.append(r, 0.0))
    if grid is None or grid.origin != 0.0 or float(grid.integers.sum()) >= EXACT_COUNT_LIMIT:
        return None
    return grid.integers[:-1], grid.step


# ---------------------------------------------------------------- cost

def candidates(rule, d, draws: int) -> list[Candidate]:
    rule = rule_of(rule)
    r, _ = flip_scores(rule, d)
    n = len(r)
    count = 2 ** n
    total = big(count)
    out = []
    g = _anchored_grid(r)
    if g is not None:
        width = float(g[0].sum()) + 1
        ops = n * width
        mem = 2 * layer_bytes(1, width)          # the counts and numpy's overlap copy
        if rule.mean:  # the exact interval needs counts by size too
            full = integer_grid(np.asarray(d, dtype=float))
            w2 = float(full.integers.sum()) + 1 if full is not None else float("inf")
            ops += len(d) * (len(d) + 1) * w2 / 2
            mem += 2 * layer_bytes(len(d) + 1, w2)
        out.append(Candidate("dp-integer", "dynamic programming on integer scores", True, ops, mem,
                             arrangements=count, note="scores on an integer grid"))
    else:
        out.append(Candidate("dp-integer", "dynamic programming on integer scores", True,
                             float("inf"), float("inf"), feasible=False, arrangements=count,
                             note="scores do not lie on a decimal grid"))
    patterns = (1 << min(n, 16)) * n * 8 * 4
    law = min(total, TALLY_LIMIT) * TALLY_BYTES
    jumps = 0.5 * total * 8 * 3 if rule.mean else 0.0
    out.append(Candidate("enumeration", "complete enumeration", True, total * n * 3,
                         patterns + law + jumps, arrangements=count,
                         feasible=n <= ENUMERATION_MAX_ITEMS, note=f"{words(count)} sign patterns"))
    # the C loops take the signs from the generator's words; other paths hold a block of them;
    # each draw costs a tally and its bits beside its n flips (measured at n = 9: half the time)
    held = 0.0 if c_loops_present() else 8.0
    memory = sampled_bytes(draws, n, held, 24.0 if rule.mean else 0.0)
    out.append(Candidate("monte-carlo", "Monte Carlo sampling of sign patterns", False,
                         parallel_ops(draws * (n * 6.0 + 48.0), draws), memory, arrangements=count,
                         note=f"{draws:,} draws"))
    return out


# ---------------------------------------------------------------- run

def run(rule, d, alternative: str, algorithm: str, level: float,
        draws: Optional[int] = None, seed: Optional[int] = None,
        progress: Progress = NO_PROGRESS) -> tuple[EngineOutcome, Optional[tuple]]:
    """The sign-flip p-value, and for `means` the exact interval for the mean difference."""
    d = np.asarray(d, dtype=float)
    rule = rule_of(rule)
    r, pos = flip_scores(rule, d)
    n_all = len(d)
    t_obs = float(statistic_from_positive_sum(rule, r[pos].sum(), r, n_all))
    name = rule.statistic_name
    if algorithm == "dp-integer":
        out = _p_dp(rule, name, r, pos, n_all, t_obs, alternative, progress)
        interval = _mean_interval_dp(d, level, alternative) if rule.mean else None
    elif algorithm == "enumeration":
        out, interval = _enumerate(rule, name, d, r, pos, t_obs, alternative, level, progress)
    else:
        out, interval = _monte_carlo(rule, name, d, r, pos, t_obs, alternative, level, draws,
                                     seed, progress)
    return out, interval


def _p_dp(rule, name, r, pos, n_all, t_obs, alternative, progress):
    q, step = _anchored_grid(r)
    counts = counts_all_subsets(q, progress)
    support = np.flatnonzero(counts)
    counts = counts[support]
    p_obs = int(q[pos].sum())
    total_q = int(q.sum())
    mask = pvalues.integer_tail_mask(2 * support - total_q, 2 * p_obs - total_q, alternative)
    p = pvalues.clip(counts[mask].sum() / counts.sum())
    n = len(r)
    warn = () if 2 ** n < EXACT_COUNT_LIMIT else (
        "counts exceed 2^53 and are held in double precision (relative error below 1e-12)",)
    return EngineOutcome(name, t_obs, p, "exact", "dynamic programming on integer scores",
                         arrangements=2 ** n,
                         null_support=statistic_from_positive_sum(rule, support * step, r, n_all),
                         null_probs=counts / counts.sum(), warnings=warn)


def _mean_interval_dp(d, level, alternative):
    """Exact interval for the mean difference: jumps S_F / k over all subsets F (k = |F| >= 1)."""
    grid = integer_grid(d)
    n = len(d)
    table, e = counts_by_size(grid.integers, n, with_exponent=True)
    values, counts = [], []
    for k in range(1, n + 1):
        row = table[k]
        nz = np.flatnonzero(row)
        values.append(grid.origin + grid.differences(nz) / k)
        counts.append(row[nz])
    counts = np.concatenate(counts)
    identity = float(np.ldexp(1.0, -e))       # the empty set: no sign flipped (counts x 2^-e)
    return interval_from_jumps(np.concatenate(values), counts, identity,
                               float(counts.sum()) + identity, level, alternative)


def _tail(sampled_p, p_obs, total_r, alternative, exact: bool):
    """Patterns at least as extreme, on T = 2P - R (centred at zero): exactly for integer
    scores, else with the relative tolerance."""
    t = 2 * np.asarray(sampled_p, dtype=float) - total_r
    t_obs = 2 * p_obs - total_r
    if exact:
        return pvalues.integer_exceedances(t, t_obs, alternative)
    return pvalues.exceedances(t, t_obs, alternative, center=0.0,
                               scale=max(abs(t_obs), total_r))


def _flip_scores_exact(r):
    """(w, exact, unit): the scores as exact integers when they lie on a grid (sums are then
    exact; r = unit * w), else r itself with unit 1."""
    g = _anchored_grid(r)
    if g is None:
        return np.asarray(r, float), False, 1.0
    return g[0].astype(float), True, g[1]


def _enumerate(rule, name, d, r, pos, t_obs, alternative, level, progress):
    """Every sign pattern in chunks: exceedances counted and the law tallied as they come."""
    n = len(r)
    total = 2 ** n
    w, exact, unit = _flip_scores_exact(r)
    p_obs = w[pos].sum()
    tally = Tally(max(1.0, float(w.sum())), TALLY_LIMIT)
    b, done = 0, 0
    for signs in sign_patterns_chunks(n):
        s = signs.astype(float) @ w
        b += _tail(s, p_obs, w.sum(), alternative, exact)
        tally.add(s)
        done += len(signs)
        progress.step(done / total, "enumerating")
    support, counts = tally.law()
    out = EngineOutcome(name, t_obs, pvalues.clip(b / total), "exact", "complete enumeration",
                        arrangements=total,
                        null_support=None if support is None else
                        statistic_from_positive_sum(rule, support * unit, r, len(d)),
                        null_probs=None if counts is None else counts / counts.sum())
    interval = None
    if rule.mean:
        interval = _mean_interval_enumerate(np.asarray(d, float), level, alternative)
    return out, interval


def _mean_interval_enumerate(d, level, alternative):
    """Jumps S_F / |F| over every non-empty subset F, streamed (only the extreme ones kept)."""
    n = len(d)
    jumps = JumpStream(1.0, float(2 ** n), level, alternative)
    for signs in sign_patterns_chunks(n):
        k = signs.sum(axis=1)
        s = signs.astype(float) @ d
        keep = k > 0
        jumps.add(s[keep] / k[keep])
    return jumps.interval()


def _monte_carlo(rule, name, d, r, pos, t_obs, alternative, level, draws, seed, progress):
    """One random sign for every difference in every draw (one bit of the generator's output
    each; zeros included, so the mean's interval can use the same draws); the test flips the
    non-zero ones. Compiled, with a numpy path that gives the same numbers (draws.flip_sums)."""
    d = np.asarray(d, dtype=float)
    nonzero = d != 0
    w, exact, _ = _flip_scores_exact(r)
    p_obs = w[pos].sum()
    means = rule.mean
    scores = np.zeros(len(d))            # the test's scores in place; zeros carry none
    scores[nonzero] = w

    def work(size, rng):
        s, sf, k = flip_sums(scores, random_bits(rng, size, len(d)), d if means else None)
        b = _tail(s, p_obs, w.sum(), alternative, exact)
        if not means:
            return b, None, 0
        keep = k > 0
        return b, sf[keep] / k[keep], int((~keep).sum())

    b, v, identity, used = collect_sampled(iter_blocks(seed, draws, work, progress), means,
                                              INTERVAL_DRAWS)
    p, p_int = pvalues.monte_carlo_p(b, draws)
    out = EngineOutcome(name, t_obs, p, "monte-carlo", "Monte Carlo sampling of sign patterns",
                        arrangements=2 ** len(r), draws=draws, p_interval=p_int, seed=seed)
    interval = None
    if means:
        interval = interval_from_jumps(v, None, identity, float(used + 1), level,
                                       alternative)
    return out, interval
