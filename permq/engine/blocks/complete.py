"""Complete blocks: Friedman's chi-square, the F within blocks and Page's L, by dynamic
programming over blocks, enumeration or Monte Carlo."""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache, reduce
import itertools
from math import factorial, gcd, prod
from typing import Optional

import numpy as np

from ...errors import BindError, PlanError
from ...plan.cost import Candidate
from ...plan.sizes import big, words
from ..core.counting import rescale
from ...result import EngineOutcome
from ..core import pvalues
from ..core.grid import MAX_DECIMALS, centred, integer_grid, negligible
from ..core.progress import NO_PROGRESS, Progress
from ..core.scores import midranks
from ..montecarlo.sampling import iter_blocks, parallel_ops
from .shared import (CHUNK_ROWS, DESCRIPTIONS, PAGE_MAX_TREATMENTS, STATISTIC_NAMES,
                     VECTOR_MAX_TREATMENTS, _fraction_sum, _merge_tallies, _name, _outcome,
                     convolve_exact, design_arrays, integer_tail_mask)

# ================================================================ complete blocks

@dataclass(frozen=True)
class Complete:
    test: str
    k: int
    scores: np.ndarray          # b x k: mid-ranks (friedman, page) or values centred within
                                # each block (F, which no block's offset changes), by treatment
    ints: Optional[np.ndarray]  # b x k non-negative integers, or None off a grid
    step: Optional[float]       # scores = per-block constant + step * ints
    t_obs: float                # the reported statistic
    denominator: float          # Friedman: sum of squared rank deviations; F: SST - SSB
    warnings: tuple

    @property
    def b(self) -> int:
        return self.scores.shape[0]

    @property
    def arrangements(self) -> int:
        return factorial(self.k) ** self.b


def check_complete_blocks(groups, blocks, n_groups: Optional[int] = None, test: str = "friedman",
                          block_names=None, group_names=None) -> int:
    """Raise BindError unless every block holds each treatment exactly once; returns k."""
    g = np.asarray(groups, dtype=np.int64)
    bl = np.asarray(blocks, dtype=np.int64)
    k = int(n_groups) if n_groups is not None else int(g.max()) + 1
    what = STATISTIC_NAMES.get(test, test)
    if k < 2:
        raise BindError(f"{what} needs at least two treatments")
    if g.max() >= k:
        raise BindError(f"group code {int(g.max())} is beyond the {k} treatments named")
    for code in np.unique(bl):
        counts = np.bincount(g[bl == code], minlength=k)
        if np.all(counts == 1):
            continue
        missing = [_name(group_names, j, "treatment") for j in np.flatnonzero(counts == 0)]
        repeated = [_name(group_names, j, "treatment") for j in np.flatnonzero(counts > 1)]
        faults = (["it lacks " + ", ".join(missing)] if missing else []) + \
                 (["it has " + ", ".join(repeated) + " more than once"] if repeated else [])
        raise BindError(
            f"{_name(block_names, int(code), 'block')} is incomplete: {'; '.join(faults)}. "
            f"{what} needs every block to hold each of the {k} treatments exactly once "
            "(a randomised complete block design)",
            hint="for two groups, the stratified rank-sum or difference-in-means test applies "
                 "to blocks of any size")
    return k


def block_matrix(values, groups, blocks, n_groups=None, test="friedman",
                 block_names=None, group_names=None) -> np.ndarray:
    """The b x k table of values (rows: blocks in code order; columns: treatments)."""
    v, g, bl = design_arrays(values, groups, blocks)
    k = check_complete_blocks(g, bl, n_groups, test, block_names, group_names)
    codes, rows = np.unique(bl, return_inverse=True)
    table = np.empty((len(codes), k))
    table[rows, g] = v
    return table


def friedman_from_ranks(ranks: np.ndarray) -> tuple[float, float]:
    """(Q, D): Q = (k-1) sum_j (R_j - b(k+1)/2)^2 / D, D = sum_ij (r_ij - (k+1)/2)^2."""
    b, k = ranks.shape
    dev = ranks.sum(axis=0) - b * (k + 1) / 2
    d = float(((ranks - (k + 1) / 2) ** 2).sum())
    return ((k - 1) * float((dev ** 2).sum()) / d if d > 0 else 0.0), d


def f_from_table(y: np.ndarray) -> tuple[float, float, float]:
    """(F, SS treatments, SST - SSB) for the additive two-way model on the b x k table."""
    b, k = y.shape
    grand = y.mean()
    sst = float(((y.mean(axis=0) - grand) ** 2).sum() * b)
    resid_total = float(((y - y.mean(axis=1, keepdims=True)) ** 2).sum())
    sse = max(resid_total - sst, 0.0)
    if negligible(sse, resid_total):
        f = float("inf") if sst > 0 else float("nan")
    else:
        f = (sst / (k - 1)) / (sse / ((k - 1) * (b - 1)))
    return f, sst, resid_total


def prepare_complete(test, values, groups, blocks, n_groups=None, block_names=None,
                     group_names=None) -> Complete:
    y = block_matrix(values, groups, blocks, n_groups, test, block_names, group_names)
    b, k = y.shape
    warnings = []
    if test in ("friedman", "page"):
        ranks = np.vstack([midranks(row) for row in y])
        ints, step = np.round(2 * ranks).astype(np.int64), 0.5
        q, denom = friedman_from_ranks(ranks)
        if test == "friedman" and denom == 0:
            warnings.append("every block is tied throughout: the test has no information")
        t_obs = q if test == "friedman" else float((np.arange(1, k + 1) * ranks.sum(0)).sum())
        return Complete(test, k, ranks, ints, step, t_obs, denom, tuple(warnings))
    if b < 2:
        raise BindError("the within-block F needs at least two blocks")
    ints, step = _table_grid(y)                 # decided on the values as recorded
    y = np.vstack([centred(row) for row in y])
    f, _, resid_total = f_from_table(y)
    if not np.isfinite(f):
        warnings.append("the additive model fits exactly (no residual variation): F is infinite"
                        if f == np.inf else "no variation within blocks: F is undefined")
    return Complete(test, k, y, ints, step, f, resid_total, tuple(warnings))


def _table_grid(y):
    grid = integer_grid(y.ravel())
    if grid is None:
        return None, None
    ints = grid.integers.reshape(y.shape)
    ints = ints - ints.min(axis=1, keepdims=True)
    div = reduce(gcd, (int(x) for x in np.unique(ints) if x), 0) or 1
    return ints // div, div * grid.step


# ---------------------------------------------------------------- complete: statistics

def _centered_ss(totals):
    """sum_j (T_j - mean T)^2 for one vector of treatment totals or for each row of many."""
    totals = np.asarray(totals, dtype=float)
    return ((totals - totals.mean(axis=-1, keepdims=True)) ** 2).sum(axis=-1)


def _ss_scale(scores):
    """A magnitude for the tolerance on sums of squares of treatment totals."""
    return max(1e-4 * float((np.abs(scores).sum(axis=0) ** 2).sum()), 1e-300)


def _statistic_from_ss(prep: Complete, centered):
    """The reported statistic from the centered sum of squares of treatment totals."""
    centered = np.asarray(centered, dtype=float)
    if prep.test == "friedman":
        return (prep.k - 1) * centered / prep.denominator if prep.denominator > 0 else 0 * centered
    sst = centered / prep.b
    sse = prep.denominator - sst     # SST - SSB is the same for every within-block order
    with np.errstate(divide="ignore", invalid="ignore"):
        # F = (SSt / (k-1)) / (SSE / ((k-1)(b-1))) = (b-1) SSt / SSE
        return np.where(~negligible(sse, prep.denominator), (prep.b - 1) * sst / sse,
                        np.where(sst > 0, np.inf, np.nan))


def _page_weights(k):
    return np.arange(1, k + 1, dtype=np.int64)


# ---------------------------------------------------------------- complete: costs

def _distinct_count(row) -> int:
    _, c = np.unique(row, return_counts=True)
    return factorial(len(row)) // prod(factorial(int(x)) for x in c)


def _vector_dp_cost(ints: np.ndarray) -> tuple[float, float, bool, str]:
    b, k = ints.shape
    if k > VECTOR_MAX_TREATMENTS:
        return float("inf"), float("inf"), False, f"more than {VECTOR_MAX_TREATMENTS} treatments"
    if not _indexable(ints):
        return float("inf"), float("inf"), False, "treatment totals too wide to index"
    ops = mem = 0.0
    states, reach = 1.0, 0
    spread = ints - ints.min(axis=1, keepdims=True)
    unit = reduce(gcd, (int(x) for x in np.unique(spread) if x), 0) or 1
    for row in ints:
        p = _distinct_count(row)           # the block's distinct orders (ties repeat none)
        ops += states * p * k * 12
        mem = max(mem, min(states * p, CHUNK_ROWS) * k * 8 * 4 + states * k * 8 * 2)
        reach += int(row.max() - row.min()) // unit
        # Sorted vectors with a fixed sum, entries on a lattice of the given reach.
        states = min(states * _distinct_count(row), (reach + 1) ** (k - 1) / factorial(k) + 1)
    return ops, mem, True, f"about {states:.3g} distinct sorted totals"


def _page_dp_cost(ints: np.ndarray) -> tuple[float, float, bool]:
    b, k = ints.shape
    if k > PAGE_MAX_TREATMENTS:
        return float("inf"), float("inf"), False
    width = float((_page_weights(k) * np.sort(ints, axis=1)).sum(axis=1).max()) + 1
    patterns = len({tuple(np.sort(r)) for r in ints})
    ops = patterns * (2 ** k) * k * width + b * (b * width) * width
    mem = (2 ** k) * width * 8 + b * width * 8 * 3
    return ops, mem, True


def _complete_candidates(prep: Complete, draws: int) -> list[Candidate]:
    count = prep.arrangements
    out = []
    if prep.test == "page":
        ops, mem, ok = _page_dp_cost(prep.ints)
        out.append(Candidate("dp-integer", DESCRIPTIONS["dp-integer"], True, ops, mem, ok,
                             note="doubled mid-ranks are integers" if ok else
                             f"more than {PAGE_MAX_TREATMENTS} treatments", arrangements=count))
    elif prep.ints is not None:
        ops, mem, ok, note = _vector_dp_cost(prep.ints)
        out.append(Candidate("dp-vector", DESCRIPTIONS["dp-vector"], True, ops, mem, ok,
                             note=note, arrangements=count))
    else:
        out.append(Candidate("dp-vector", DESCRIPTIONS["dp-vector"], True, float("inf"),
                             float("inf"), False, arrangements=count,
                             note=f"values are not on a grid of at most {MAX_DECIMALS} decimals"))
    if prep.test == "within-block-f":
        fixed = big(count // factorial(prep.k))   # the first block's order is fixed by symmetry
        rows = fixed / factorial(prep.k)          # totals held while the last block is applied
        out.append(Candidate("enumeration", DESCRIPTIONS["enumeration"], True,
                             fixed * prep.k * 6, rows * prep.k * 8 * 3,
                             arrangements=count,
                             note=f"{words(count)} arrangements "
                                  f"({words(count // factorial(prep.k))} after fixing block 1)"))
    n = prep.b * prep.k
    out.append(Candidate("monte-carlo", DESCRIPTIONS["monte-carlo"], False,
                         parallel_ops(draws * n * 15.0, draws),
                         min(draws, 8192) * prep.k * 8 * 4, arrangements=count,
                         note=f"{draws:,} draws"))
    return out


# ---------------------------------------------------------------- complete: exact runs

@lru_cache(maxsize=256)
def _distinct_permutations(row: tuple) -> tuple[np.ndarray, np.ndarray]:
    """Every ordering of the row's entries, once each, with how many unit orders give it."""
    k = len(row)
    perms = np.array(list(itertools.permutations(range(k))), dtype=np.int64)
    arranged = np.asarray(row, dtype=np.int64)[perms]
    uniq, counts = np.unique(arranged, axis=0, return_counts=True)
    return uniq, counts.astype(float)


def _indexable(ints: np.ndarray) -> bool:
    """Sorted total vectors fit one int64 code, and their sums of squares fit int64."""
    k = ints.shape[1]
    radix = int(ints.max(axis=1).sum()) + 1
    return radix ** k < 2 ** 62 and k * radix ** 2 < 2 ** 62


def _encode(rows: np.ndarray, radix: int) -> np.ndarray:
    code = np.zeros(len(rows), dtype=np.int64)
    for j in range(rows.shape[1]):
        code = code * radix + rows[:, j]
    return code


def _decode(codes: np.ndarray, radix: int, k: int) -> np.ndarray:
    rows = np.empty((len(codes), k), dtype=np.int64)
    rest = codes.copy()
    for j in range(k - 1, -1, -1):
        rows[:, j] = rest % radix
        rest //= radix
    return rows


def _merge_codes(codes: np.ndarray, counts: np.ndarray):
    uniq, inverse = np.unique(codes, return_inverse=True)
    return uniq, np.bincount(inverse, weights=counts)


def vector_dp(ints: np.ndarray, progress: Progress = NO_PROGRESS):
    """Distinct sorted treatment-total vectors over all within-block orders, with counts.

    Sorting each vector is exact for statistics symmetric in the treatments: every block's
    orders are equally likely, so the totals are exchangeable across treatments.
    """
    b, k = ints.shape
    radix = int(ints.max(axis=1).sum()) + 1
    states, counts = np.zeros((1, k), dtype=np.int64), np.ones(1)
    for i, row in enumerate(ints):
        perms, pc = _distinct_permutations(tuple(int(x) for x in row))
        step = max(1, CHUNK_ROWS // len(perms))
        codes, weights = [], []
        for s in range(0, len(states), step):
            new = (states[s:s + step, None, :] + perms[None, :, :]).reshape(-1, k)
            new.sort(axis=1)
            c = (counts[s:s + step, None] * pc[None, :]).ravel()
            u, w = _merge_codes(_encode(new, radix), c)
            codes.append(u)
            weights.append(w)
        merged, counts = _merge_codes(np.concatenate(codes), np.concatenate(weights))
        rescale(counts)                    # exact powers of two: ratios are unchanged
        states = _decode(merged, radix, k)
        progress.step((i + 1) / b, "counting over blocks")
    return states, counts


def _quadratic_dp(prep: Complete, progress) -> EngineOutcome:
    if prep.ints is None or not _indexable(prep.ints):
        raise PlanError("the values are not on a narrow enough decimal grid, so the dynamic "
                        "programme does not apply; use enumeration or Monte Carlo")
    states, counts = vector_dp(prep.ints, progress)
    ss = (states ** 2).sum(axis=1)
    ss_obs = int((prep.ints.sum(axis=0) ** 2).sum())
    p = counts[ss >= ss_obs].sum() / counts.sum()
    uniq, inverse = np.unique(ss, return_inverse=True)
    w = np.bincount(inverse, weights=counts)
    total = int(prep.ints.sum())
    centered = prep.step ** 2 * (uniq.astype(float) - total ** 2 / prep.k)
    support = _statistic_from_ss(prep, centered)
    return _outcome(prep.test, prep.t_obs, p, "dp-vector", prep.arrangements, support,
                    w / w.sum(), prep.warnings)


def linear_permutation_counts(q, c) -> np.ndarray:
    """n[s] = number of the k! orders pi with sum_j c_j * q_pi(j) = s (q, c >= 0 integers).

    Dynamic programme over the subsets of units: position j = |mask| takes a unit not in mask.
    """
    q = [int(x) for x in q]
    c = [int(x) for x in c]
    k = len(q)
    width = sum(a * b for a, b in zip(sorted(c), sorted(q))) + 1
    dp = np.zeros((1 << k, width))
    dp[0, 0] = 1.0
    for mask in range(1 << k):
        j = bin(mask).count("1")
        if j == k or not dp[mask].any():
            continue
        row = dp[mask]
        for i in range(k):
            if not mask >> i & 1:
                shift = c[j] * q[i]
                dp[mask | 1 << i, shift:] += row[:width - shift]
    return dp[-1]


def _page_dp(prep: Complete, alternative, progress) -> EngineOutcome:
    if prep.k > PAGE_MAX_TREATMENTS:
        raise PlanError(f"the exact Page programme handles at most {PAGE_MAX_TREATMENTS} "
                        "treatments; use Monte Carlo")
    weights = _page_weights(prep.k)
    cache, acc = {}, np.ones(1)
    for i, row in enumerate(prep.ints):
        key = tuple(sorted(int(x) for x in row))
        if key not in cache:
            cache[key] = linear_permutation_counts(key, weights)
        acc = convolve_exact(acc, cache[key])
        rescale(acc)                       # exact powers of two: ratios are unchanged
        progress.step((i + 1) / prep.b, "counting over blocks")
    support = np.flatnonzero(acc)
    counts = acc[support]
    l_obs = int((weights * prep.ints.sum(axis=0)).sum())
    center = _fraction_sum((int(weights.sum()) * int(r.sum()), prep.k) for r in prep.ints)
    mask = integer_tail_mask(support, l_obs, center, alternative)
    p = counts[mask].sum() / counts.sum()
    return _outcome(prep.test, prep.t_obs, p, "dp-integer", prep.arrangements,
                    support * prep.step, counts / counts.sum(), prep.warnings)


def _f_enumeration(prep: Complete, progress) -> EngineOutcome:
    """Every within-block order, with block 1's order fixed (F is symmetric in treatments).

    On a grid the comparisons use the sum of squared integer treatment totals (exact)."""
    exact = prep.ints is not None and _indexable(prep.ints)
    y = prep.ints.astype(float) if exact else prep.scores
    perms = np.array(list(itertools.permutations(range(prep.k))), dtype=np.int64)
    totals = y[0][None, :]
    for row in y[1:-1]:
        totals = (totals[:, None, :] + row[perms][None, :, :]).reshape(-1, prep.k)
    quadratic = (lambda t: (t ** 2).sum(axis=-1)) if exact else _centered_ss
    obs = quadratic(y.sum(axis=0))
    scale = _ss_scale(y)
    hits, vals, counts = 0, [], []
    last = y[-1][perms] if prep.b > 1 else np.zeros((1, prep.k))
    for i, arranged in enumerate(last):
        ss = quadratic(totals + arranged[None, :])
        if exact:
            hits += int(np.count_nonzero(ss >= obs))
            v, c = np.unique(ss, return_counts=True)
        else:
            hits += pvalues.exceedances(ss, obs, "higher", scale=scale)
            v, c = _merge_tallies(ss, np.ones(len(ss)), scale)
        vals.append(v)
        counts.append(c.astype(float))
        progress.step((i + 1) / len(last), "enumerating")
    enumerated = len(totals) * len(last)
    v, c = _merge_tallies(np.concatenate(vals), np.concatenate(counts), scale)
    if exact:
        v = prep.step ** 2 * (v - float(prep.ints.sum()) ** 2 / prep.k)
    return _outcome(prep.test, prep.t_obs, hits / enumerated, "enumeration", prep.arrangements,
                    _statistic_from_ss(prep, v), c / c.sum(), prep.warnings)


# ---------------------------------------------------------------- complete: Monte Carlo

def _complete_monte_carlo(prep: Complete, alternative, draws, seed, progress):
    exact = prep.ints is not None and _indexable(prep.ints)
    scores = prep.ints.astype(float) if exact else prep.scores
    k = prep.k
    weights = _page_weights(k).astype(float)
    if prep.test != "page":
        alternative = "higher"
    if exact:       # integer statistics: L itself, or the sum of squared treatment totals
        t_obs = float(weights @ scores.sum(axis=0) if prep.test == "page"
                      else (scores.sum(axis=0) ** 2).sum())
        num, den = int(weights.sum()) * int(prep.ints.sum()), k
    elif prep.test == "page":
        t_obs = float(weights @ scores.sum(axis=0))
        center = float(weights.sum() * scores.sum() / k)
        scale = max(abs(t_obs), 1.0)
    else:
        t_obs = float(_centered_ss(scores.sum(axis=0)))
        center, scale = 0.0, _ss_scale(scores)

    def work(size, rng):
        totals = np.zeros((size, k))
        for row in scores:
            totals += row[np.argsort(rng.random((size, k)), axis=1)]
        if exact:
            t = totals @ weights if prep.test == "page" else (totals ** 2).sum(axis=1)
            return pvalues.integer_exceedances(t, t_obs, alternative, num, den)
        t = totals @ weights if prep.test == "page" else _centered_ss(totals)
        return pvalues.exceedances(t, t_obs, alternative, center=center, scale=scale)

    hits = sum(iter_blocks(seed, draws, work, progress))   # all cores, same p for any number
    p, interval = pvalues.monte_carlo_p(hits, draws)
    return _outcome(prep.test, prep.t_obs, p, "monte-carlo", prep.arrangements,
                    warnings=prep.warnings, draws=draws, p_interval=interval, seed=seed)
