"""Two groups within blocks of any size: the stratified rank sum and the stratified sum of
values, by dynamic programming per block convolved across blocks, enumeration or Monte Carlo."""
from __future__ import annotations

from dataclasses import dataclass
from functools import reduce
import itertools
from math import comb, gcd, prod
from typing import Optional

import numpy as np

from ...errors import BindError, PlanError
from ...plan.cost import Candidate
from ...plan.sizes import big, words
from ...result import EngineOutcome
from ..core import pvalues
from ..core.counting import counts_by_size, rescale, top_row_work
from ..core.grid import MAX_DECIMALS, centred, integer_grid
from ..core.limits import EXACT_COUNT_LIMIT
from ..core.scores import midranks
from ..montecarlo.sampling import iter_blocks, parallel_ops
from .shared import (DESCRIPTIONS, STATISTIC_NAMES, _fraction_sum, _merge_tallies, _name,
                     _outcome, convolve_exact, design_arrays, integer_tail_mask)

# ================================================================ stratified two-sample

@dataclass(frozen=True)
class StratifiedBlock:
    code: int
    scores: np.ndarray        # ranks within the block, or values
    in_group0: np.ndarray     # bool
    ints: Optional[np.ndarray]  # non-negative integer scores (shifted, divided by the gcd)
    work: np.ndarray          # what enumeration and Monte Carlo sum: ints, else centred scores

    @property
    def n(self) -> int:
        return len(self.scores)

    @property
    def m(self) -> int:
        return int(self.in_group0.sum())


@dataclass(frozen=True)
class Stratified:
    test: str
    blocks: tuple
    t_obs: float              # the reported statistic
    w_obs: float              # the same sum of the blocks' work scores
    center: float             # E0 of the work sum
    scale: float              # a bound on the work sum, for the tolerance off a grid
    step: Optional[float]     # statistic = offset + step * (integer sum), when on a grid
    offset: Optional[float]
    warnings: tuple

    @property
    def arrangements(self) -> int:
        return prod(comb(b.n, b.m) for b in self.blocks)

    @property
    def on_grid(self) -> bool:
        return self.step is not None


def prepare_stratified(test, values, groups, blocks, block_names=None) -> Stratified:
    v, g, bl = design_arrays(values, groups, blocks)
    if g.max() > 1:
        raise BindError(f"{STATISTIC_NAMES[test]} compares two groups; found {int(g.max()) + 1} "
                        "group codes (use Friedman's test or the within-block F for more)")
    used, lone = [], []
    for code in np.unique(bl):
        sel = bl == code
        (used if len(np.unique(g[sel])) == 2 else lone).append((int(code), v[sel], g[sel] == 0))
    warnings = ()
    if lone:
        names = ", ".join(_name(block_names, c, "block") for c, _, _ in lone)
        warnings = (f"{names}: only one group present, so the block contributes nothing to the "
                    "test and is left out",)
    if not used:
        raise BindError("no block contains both groups, so there is nothing to compare "
                        "within blocks")
    scores = [midranks(x) if test == "stratified-ranks" else x for _, x, _ in used]
    ints, base, unit = _stratified_integers(test, [x for _, x, _ in used], scores)
    step = offset = None
    if ints is not None:
        lows = [int(q.min()) for q in ints]
        shifted = [q - low for q, low in zip(ints, lows)]
        div = reduce(gcd, (int(x) for q in shifted for x in np.unique(q) if x), 0) or 1
        ints = [q // div for q in shifted]
        step = div * unit
        offset = sum(int(m.sum()) * (base + unit * low) for (_, _, m), low in zip(used, lows))
        if sum(int(q.sum()) for q in ints) >= EXACT_COUNT_LIMIT:
            ints, step, offset = None, None, None
    parts = tuple(StratifiedBlock(c, s_, m, None if ints is None else ints[i],
                                  centred(s_) if ints is None else ints[i].astype(float))
                  for i, ((c, _, m), s_) in enumerate(zip(used, scores)))
    t_obs = float(sum(b.scores[b.in_group0].sum() for b in parts))
    w_obs = float(sum(b.work[b.in_group0].sum() for b in parts))
    center = float(sum(b.m * b.work.mean() for b in parts))
    scale = float(sum(b.m * np.abs(b.work).max() for b in parts))
    return Stratified(test, parts, t_obs, w_obs, center, max(scale, 1e-300), step, offset,
                      warnings)


def _stratified_integers(test, raw, scores):
    """Per-block integer scores with score = base + unit * integer, or (None, None, None)."""
    if test == "stratified-ranks":
        return [np.round(2 * s).astype(np.int64) for s in scores], 0.0, 0.5
    grid = integer_grid(np.concatenate(raw))
    if grid is None:
        return None, None, None
    cuts = np.cumsum([len(x) for x in raw])[:-1]
    return np.split(grid.integers, cuts), grid.origin, grid.step


def _stratified_candidates(prep: Stratified, draws: int) -> list[Candidate]:
    count = prep.arrangements
    total = big(count)
    out = []
    if prep.on_grid:
        ops, mem, acc = 0.0, 0.0, 1.0
        for b in prep.blocks:
            width = float(np.sort(b.ints)[::-1][:b.m].sum()) + 1
            ops += top_row_work(b.ints, b.m)
            ops += acc * min(width, comb(b.n, b.m)) * 2
            acc += width - 1
            mem = max(mem, (b.m + 1) * width * 8, acc * 8 * 3)
        note = ("mid-ranks within blocks (doubled, integers)" if prep.test == "stratified-ranks"
                else f"data on a grid of {prep.step:g}")
        out.append(Candidate("dp-integer", DESCRIPTIONS["dp-integer"], True, ops, mem,
                             note=note, arrangements=count))
    else:
        out.append(Candidate("dp-integer", DESCRIPTIONS["dp-integer"], True, float("inf"),
                             float("inf"), feasible=False,
                             note=f"values are not on a grid of at most {MAX_DECIMALS} decimals",
                             arrangements=count))
    running, ops = 1.0, 0.0
    for b in prep.blocks:
        running *= comb(b.n, b.m)
        ops += running * 4 + comb(b.n, b.m) * b.m
    out.append(Candidate("enumeration", DESCRIPTIONS["enumeration"], True, ops, total * 8 * 4,
                         arrangements=count,
                         note=f"{words(count)} arrangements"))
    n = sum(b.n for b in prep.blocks)
    out.append(Candidate("monte-carlo", DESCRIPTIONS["monte-carlo"], False,
                         parallel_ops(draws * n * 15.0, draws),
                         min(draws, 8192) * max(b.n for b in prep.blocks) * 8 * 4,
                         arrangements=count, note=f"{draws:,} draws"))
    return out


def _stratified_dp(prep: Stratified, alternative, progress) -> EngineOutcome:
    if not prep.on_grid:
        raise PlanError("the values are not on a decimal grid, so the integer dynamic "
                        "programme does not apply; use enumeration or Monte Carlo")
    acc = np.ones(1)
    s_obs, pairs = 0, []
    for i, b in enumerate(prep.blocks):
        acc = convolve_exact(acc, counts_by_size(b.ints, b.m, only_top=True)[b.m])
        rescale(acc)                       # exact powers of two: ratios are unchanged
        s_obs += int(b.ints[b.in_group0].sum())
        pairs.append((b.m * int(b.ints.sum()), b.n))
        progress.step((i + 1) / len(prep.blocks), "counting within blocks")
    support = np.flatnonzero(acc)
    counts = acc[support]
    mask = integer_tail_mask(support, s_obs, _fraction_sum(pairs), alternative)
    p = counts[mask].sum() / counts.sum()
    return _outcome(prep.test, prep.t_obs, p, "dp-integer", prep.arrangements,
                    prep.offset + prep.step * support, counts / counts.sum(), prep.warnings)


def _block_subset_sums(b: StratifiedBlock):
    idx = np.array(list(itertools.combinations(range(b.n), b.m)), dtype=np.int64)
    sums = b.work[idx].sum(axis=1)
    return np.unique(sums, return_counts=True)


def _work_tail(prep: Stratified, vals, counts, alternative) -> float:
    """The share of arrangements at least as extreme: exactly on a grid."""
    if prep.on_grid:
        pairs = [(b.m * int(b.ints.sum()), b.n) for b in prep.blocks]
        mask = integer_tail_mask(np.rint(vals).astype(np.int64), int(round(prep.w_obs)),
                                 _fraction_sum(pairs), alternative)
        return float(counts[mask].sum() / counts.sum())
    return pvalues.tail_probability(vals, counts, prep.w_obs, alternative, center=prep.center,
                                    scale=prep.scale)


def _reported(prep: Stratified, work_sums):
    """The reported statistic for sums of the work scores."""
    if prep.on_grid:
        return prep.offset + prep.step * np.asarray(work_sums, dtype=float)
    return prep.t_obs + (np.asarray(work_sums, dtype=float) - prep.w_obs)


def _stratified_enumeration(prep: Stratified, alternative, progress) -> EngineOutcome:
    vals, counts = np.zeros(1), np.ones(1)
    for i, b in enumerate(prep.blocks):
        u, c = _block_subset_sums(b)
        vals = (vals[:, None] + u[None, :]).ravel()
        counts = (counts[:, None] * c[None, :]).ravel()
        vals, inverse = np.unique(vals, return_inverse=True)   # merges identical values only
        counts = np.bincount(inverse, weights=counts)
        progress.step((i + 1) / len(prep.blocks), "enumerating")
    p = _work_tail(prep, vals, counts, alternative)
    support, probs = _merge_tallies(vals, counts, prep.scale)
    support = _reported(prep, support)
    return _outcome(prep.test, prep.t_obs, p, "enumeration", prep.arrangements, support,
                    probs / probs.sum(), prep.warnings)


def _stratified_monte_carlo(prep: Stratified, alternative, draws, seed, progress):
    if prep.on_grid:
        pairs = [(b.m * int(b.ints.sum()), b.n) for b in prep.blocks]
        centre = _fraction_sum(pairs)

    def work(size, rng):
        t = np.zeros(size)
        for b in prep.blocks:
            order = np.argsort(rng.random((size, b.n)), axis=1)[:, :b.m]
            t += b.work[order].sum(axis=1)
        if prep.on_grid:
            return pvalues.integer_exceedances(t, prep.w_obs, alternative, centre.numerator,
                                               centre.denominator)
        return pvalues.exceedances(t, prep.w_obs, alternative, center=prep.center,
                                   scale=prep.scale)

    hits = sum(iter_blocks(seed, draws, work, progress))   # all cores, same p for any number
    p, interval = pvalues.monte_carlo_p(hits, draws)
    return _outcome(prep.test, prep.t_obs, p, "monte-carlo", prep.arrangements,
                    warnings=prep.warnings, draws=draws, p_interval=interval, seed=seed)
