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

from typing import Optional

import numpy as np

from ..plan.cost import Candidate
from ..result import EngineOutcome
from .core import pvalues
from .core.counting import counts_all_subsets, counts_by_size, layer_bytes
from .core.enumeration import sign_patterns_chunks
from .core.grid import integer_grid
from .core.jumps import collect_sampled, interval_from_jumps
from .core.limits import EXACT_COUNT_LIMIT, INTERVAL_DRAWS
from .montecarlo.draws import flip_sums, random_bits
from .montecarlo.sampling import BLOCK, iter_blocks
from .core.progress import NO_PROGRESS, Progress
from .core.scores import midranks

ENUMERATION_MAX_ITEMS = 62      # sign patterns are listed as the bits of one int64 code

STATISTIC_NAMES = {
    "means": "mean difference",
    "ranks": "signed-rank sum W+ (mid-ranks)",
    "signs": "number of positive differences",
}


def flip_scores(family: str, d) -> tuple[np.ndarray, np.ndarray]:
    """(scores r >= 0 of the non-zero differences, their signs as bool positive)."""
    d = np.asarray(d, dtype=float)
    nonzero = d != 0
    if family == "means":
        r = np.abs(d)
    elif family == "ranks":
        r = midranks(np.abs(d))      # zeros keep their ranks (Pratt) ...
    elif family == "signs":
        r = np.ones_like(d)
    else:
        raise KeyError(family)
    return r[nonzero], d[nonzero] > 0  # ... and are then left out of the flips


def statistic_from_positive_sum(family: str, p_sum, r, n_all: int):
    """Reported statistic from P = sum of scores with positive sign."""
    if family == "means":
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

def candidates(family: str, d, draws: int) -> list[Candidate]:
    r, _ = flip_scores(family, d)
    n = len(r)
    total = float(2 ** n)
    out = []
    g = _anchored_grid(r)
    if g is not None:
        width = float(g[0].sum()) + 1
        ops = n * width
        mem = layer_bytes(1, width)
        if family == "means":  # the exact interval needs counts by size too
            full = integer_grid(np.asarray(d, dtype=float))
            w2 = float(full.integers.sum()) + 1 if full is not None else float("inf")
            ops += len(d) * (len(d) + 1) * w2 / 2
            mem += layer_bytes(len(d) + 1, w2)
        out.append(Candidate("dp-integer", "dynamic programming on integer scores", True, ops, mem,
                             arrangements=total, note="scores on an integer grid"))
    else:
        out.append(Candidate("dp-integer", "dynamic programming on integer scores", True,
                             float("inf"), float("inf"), feasible=False, arrangements=total,
                             note="scores do not lie on a decimal grid"))
    out.append(Candidate("enumeration", "complete enumeration", True, total * n * 3,
                         (1 << min(n, 16)) * n * 8 * 2, arrangements=total,
                         feasible=n <= ENUMERATION_MAX_ITEMS, note=f"{total:.3g} sign patterns"))
    out.append(Candidate("monte-carlo", "Monte Carlo sampling of sign patterns", False,
                         draws * n * 6.0, min(draws, BLOCK) * n * 8 * 3, arrangements=total,
                         note=f"{draws:,} draws"))
    return out


# ---------------------------------------------------------------- run

def run(family: str, d, alternative: str, algorithm: str, level: float,
        draws: Optional[int] = None, seed: Optional[int] = None,
        progress: Progress = NO_PROGRESS) -> tuple[EngineOutcome, Optional[tuple]]:
    """The sign-flip p-value, and for `means` the exact interval for the mean difference."""
    d = np.asarray(d, dtype=float)
    r, pos = flip_scores(family, d)
    n_all = len(d)
    t_obs = float(statistic_from_positive_sum(family, r[pos].sum(), r, n_all))
    name = STATISTIC_NAMES[family]
    if algorithm == "dp-integer":
        out = _p_dp(family, name, r, pos, n_all, t_obs, alternative, progress)
        interval = _mean_interval_dp(d, level, alternative) if family == "means" else None
    elif algorithm == "enumeration":
        out, interval = _enumerate(family, name, d, r, pos, t_obs, alternative, level, progress)
    else:
        out, interval = _monte_carlo(family, name, d, r, pos, t_obs, alternative, level, draws,
                                     seed, progress)
    return out, interval


def _p_dp(family, name, r, pos, n_all, t_obs, alternative, progress):
    q, step = _anchored_grid(r)
    counts = counts_all_subsets(q, progress)
    support = np.flatnonzero(counts)
    counts = counts[support]
    p_obs = int(q[pos].sum())
    total_q = int(q.sum())
    mask = pvalues.integer_tail_mask(2 * support - total_q, 2 * p_obs - total_q, alternative)
    p = pvalues.clip(counts[mask].sum() / counts.sum())
    n = len(r)
    warn = () if 2.0 ** n < EXACT_COUNT_LIMIT else (
        "counts exceed 2^53 and are held in double precision (relative error below 1e-12)",)
    return EngineOutcome(name, t_obs, p, "exact", "dynamic programming on integer scores",
                         arrangements=2.0 ** n,
                         null_support=statistic_from_positive_sum(family, support * step, r, n_all),
                         null_probs=counts / counts.sum(), warnings=warn)


def _mean_interval_dp(d, level, alternative):
    """Exact interval for the mean difference: jumps S_F / k over all subsets F (k = |F| >= 1)."""
    grid = integer_grid(d)
    n = len(d)
    table = counts_by_size(grid.integers, n)
    values, counts = [], []
    for k in range(1, n + 1):
        row = table[k]
        nz = np.flatnonzero(row)
        values.append(grid.origin + grid.differences(nz) / k)
        counts.append(row[nz])
    return interval_from_jumps(np.concatenate(values), np.concatenate(counts), 1.0, 2.0 ** n,
                               level, alternative)


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
    """The scores as exact integers when they lie on a grid (sums are then exact), else r."""
    g = _anchored_grid(r)
    return (g[0].astype(float), True) if g is not None else (np.asarray(r, float), False)


def _enumerate(family, name, d, r, pos, t_obs, alternative, level, progress):
    n = len(r)
    total = 2 ** n
    w, exact = _flip_scores_exact(r)
    p_obs = w[pos].sum()
    b, done = 0, 0
    for signs in sign_patterns_chunks(n):
        s = signs.astype(float) @ w
        b += _tail(s, p_obs, w.sum(), alternative, exact)
        done += len(signs)
        progress.step(done / total, "enumerating")
    out = EngineOutcome(name, t_obs, pvalues.clip(b / total), "exact", "complete enumeration",
                        arrangements=float(total))
    interval = None
    if family == "means":
        interval = _mean_interval_enumerate(np.asarray(d, float), level, alternative)
    return out, interval


def _mean_interval_enumerate(d, level, alternative):
    n = len(d)
    vals = []
    for signs in sign_patterns_chunks(n):
        k = signs.sum(axis=1)
        s = signs.astype(float) @ d
        keep = k > 0
        vals.append(s[keep] / k[keep])
    v = np.concatenate(vals)
    return interval_from_jumps(v, np.ones(v.size), 1.0, 2.0 ** n, level, alternative)


def _monte_carlo(family, name, d, r, pos, t_obs, alternative, level, draws, seed, progress):
    """One random sign for every difference in every draw (one bit of the generator's output
    each; zeros included, so the mean's interval can use the same draws); the test flips the
    non-zero ones. Compiled, with a numpy path that gives the same numbers (draws.flip_sums)."""
    d = np.asarray(d, dtype=float)
    nonzero = d != 0
    w, exact = _flip_scores_exact(r)
    p_obs = w[pos].sum()
    means = family == "means"
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
                        arrangements=2.0 ** len(r), draws=draws, p_interval=p_int, seed=seed)
    interval = None
    if means:
        interval = interval_from_jumps(v, None, identity, float(used + 1), level,
                                       alternative)
    return out, interval
