"""Exact and Monte Carlo engines for ordered groups (an ordered alternative).

Groups come in the user's order, codes 0 .. k-1; `alternative` "higher" means the response
rises along that order. Two statistics, both linear, so two-sided p-values follow the rule
P(|T - E0 T| >= |t - E0 T|):

- "ranks": Jonckheere-Terpstra J = sum over group pairs g < h of the number of pairs
  (x in g, y in h) with x < y, ties counting 1/2. 2J is an integer. Exact by counting: the
  tie blocks are taken in increasing order of value, and the state is the vector of group
  counts placed so far with the doubled partial statistic: placing x_h items of the block in
  group h adds x_h (2 * items already in groups before h + items of the block in groups
  before h). E0 J = (N^2 - sum n_g^2) / 4, with or without ties.
- "means": linear trend T = sum_g d_g * (sum of the values in group g), with dose scores d_g
  (1, 2, ... unless given). Exact by counting when the values and the scores lie on decimal
  grids (state: group counts and the integer partial statistic; groups sharing a score are
  merged, which changes no probability), by listing when the design is small, otherwise
  Monte Carlo. The least-squares slope gets an exact interval by inverting the permutation
  test of each slope when every assignment can be listed (`slope_estimate`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..errors import DataError, PlanError
from ..plan.cost import Candidate
from ..plan.sizes import big, words
from ..result import EngineOutcome, Estimate
from .core import pvalues
from .core.confidence import alpha_side, rejected_up_to
from .core.counting import multinomial, multinomial_weights
from .core.grid import centred, integer_grid, is_constant
from .core.limits import DEFAULT_DRAWS, EXACT_COUNT_LIMIT, NULL_KEEP_MAX, NO_LIMITS_GIVEN, Limits
from .montecarlo import sampling
from .ksample import (design, enumerate_group_sums, enumeration_candidate, monte_carlo_candidate,
                      sample_group_sums)
from .ksample.counting import compositions, rescale_ways
from .core.progress import NO_PROGRESS, Progress
from .tables import ranked

# labels x groups cells in one chunk of draws (2^16 ran fastest of 2^14-2^21 in fresh
# processes, and holds 1/32 of what 2^21 did)
_CHUNK_ROWS = 1 << 16
# listing one assignment for the slope interval costs about this many operations per item
_SLOPE_OPS_PER_ITEM = 16.0


# ----------------------------------------------------------------------------- counting

def count_linear(block_values, block_mults, sizes, increment, progress: Progress = NO_PROGRESS):
    """Exact law of an integer statistic built up tie block by tie block.

    `increment(counts, x, value)` gives, for states with group counts `counts` (M, k), the
    integer added when x_g items of the block with this value go to group g. Returns
    (statistic values, numbers of assignments).
    """
    sizes = np.asarray(sizes, dtype=np.int64)
    k = len(sizes)
    counts, t, ways = np.zeros((1, k), np.int64), np.zeros(1, np.int64), np.ones(1)
    radix = np.concatenate([[1], np.cumprod(sizes + 1)[:-1]]).astype(np.int64)
    for i, (v, m) in enumerate(zip(block_values, block_mults)):
        xs = compositions(int(m), sizes)
        parts = []
        for x, w in zip(xs, multinomial_weights(int(m), xs)):
            ok = np.all(counts + x <= sizes, axis=1)
            if ok.any():
                c = counts[ok]
                parts.append((c + x, t[ok] + increment(c, x, v), ways[ok] * w))
        counts, t, ways = _merge(parts, radix, int(np.prod(sizes + 1)))
        rescale_ways(ways)
        progress.step((i + 1) / len(block_values), "counting assignments")
    support, inverse = np.unique(t, return_inverse=True)
    return support, np.bincount(inverse.ravel(), weights=ways)


def _merge(parts, radix, span):
    counts = np.concatenate([p[0] for p in parts])
    t = np.concatenate([p[1] for p in parts])
    ways = np.concatenate([p[2] for p in parts])
    if int(t.max(initial=0)) >= (2 ** 62) // span:
        raise PlanError("the statistic's range is too wide to count exactly")
    key = t * span + counts @ radix
    _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
    return counts[first], t[first], np.bincount(inverse.ravel(), weights=ways)


def count_estimate(sizes, t_max: float, n_blocks_mults) -> tuple[float, float, float]:
    """(peak states, ops, bytes) of `count_linear`: count vectors half way times the range."""
    sizes = np.asarray(sizes, dtype=np.int64)
    k, N = len(sizes), int(sizes.sum())
    poly = np.array([1.0])
    for n in sizes:
        poly = np.convolve(poly, np.ones(int(n) + 1))
    vectors = float(poly[N // 2])
    states = vectors * (0.75 * t_max + 1.0)
    branches = sum(math.comb(int(m) + k - 1, k - 1) for m in n_blocks_mults)
    return states, states * branches * (k + 4) * 2.0, states * (8.0 * k + 24.0) * 3.0


def _blocks_of(z) -> tuple[np.ndarray, np.ndarray]:
    return np.unique(np.asarray(z), return_counts=True)


def _check_alternative(alternative: str) -> None:
    if alternative not in ("higher", "lower", "two-sided"):
        raise PlanError(f"unknown alternative '{alternative}'", hint="higher, lower or two-sided")


# ----------------------------------------------------------------------------- Jonckheere-Terpstra

def _jt_monte_carlo(N: int, k: int, blocks: int, arr, draws: int) -> Candidate:
    """Monte Carlo cost of `_sample`: each draw's labels are shuffled (N items), made one-hot
    (N x k cells) and summed within tie blocks, whose running counts take about eight passes
    (blocks x k cells); a chunk of _CHUNK_ROWS cells of one-hot labels and the blocks' arrays
    of the same rows are held on each worker thread, beside the block's shuffled labels."""
    ops = float(draws) * (N * (4.0 + 3.0 * k) + 8.0 * blocks * k)
    rows = max(1, _CHUNK_ROWS // (N * k))
    chunk = 8.0 * rows * (2.0 * N * k + 5.0 * blocks * k)
    block = 8.0 * min(draws, sampling.BLOCK) * N
    return Candidate("monte-carlo", "Monte Carlo: random assignments to groups", False,
                     sampling.parallel_ops(ops, draws),
                     sampling.concurrent_units(draws) * (chunk + block),
                     note=f"cost for {draws:,} draws", arrangements=arr)


def jt_doubled(values, groups, k: int) -> int:
    """2 J for the observed data (ties count 1/2, so 2J is an integer)."""
    x = np.asarray(values, dtype=float)
    order = np.argsort(x, kind="stable")
    return int(_jt_doubled_rows(np.asarray(groups)[order][None, :], _block_starts(x[order]), k)[0])


def _block_starts(sorted_x) -> np.ndarray:
    return np.flatnonzero(np.concatenate([[True], np.diff(sorted_x) != 0]))


def _jt_doubled_rows(labels, starts, k: int) -> np.ndarray:
    """2J for each row of group labels laid out in increasing order of value (vectorised)."""
    onehot = (labels[:, :, None] == np.arange(k)).astype(np.int64)
    e = np.add.reduceat(onehot, starts, axis=1)                 # (rows, blocks, k)
    before = np.cumsum(e, axis=1) - e                            # items in earlier blocks
    g = 2 * before + e
    lower = np.cumsum(g, axis=2) - g                             # over groups before h
    return np.sum(e * lower, axis=(1, 2))


def _jt_increment(counts, x, value):
    lower = np.cumsum(counts, axis=1) - counts
    xs = np.asarray(x)
    pairs = int((np.cumsum(xs) - xs) @ xs)
    return 2 * (lower @ xs) + pairs


@dataclass(frozen=True)
class JonckheereTerpstra:
    key: str = "ranks"
    statistic_name: str = "Jonckheere-Terpstra J"

    def candidates(self, values, groups, draws: int = DEFAULT_DRAWS) -> list[Candidate]:
        x, _, sizes = design(values, groups)
        arr = multinomial(sizes)
        t_max = float(len(x) ** 2 - np.sum(sizes ** 2))          # largest 2J
        states, ops, memory = count_estimate(sizes, t_max, _blocks_of(x)[1])
        words = "dynamic programming over tie blocks and group counts (doubled statistic, integers)"
        out = [Candidate("dp-counts", words, True, ops, memory,
                         note=f"about {states:.3g} counting states", arrangements=arr)]
        if ranked.offered(x):
            out.append(ranked.candidate(ranked.ordered_table(x, groups), "concordance",
                                        "groups x categories", arr))
        return out + [_jt_monte_carlo(len(x), len(sizes), len(_blocks_of(x)[1]), arr, draws)]

    def run(self, values, groups, alternative: str, algorithm: str, draws: Optional[int] = None,
            seed: Optional[int] = None, progress: Progress = NO_PROGRESS) -> EngineOutcome:
        _check_alternative(alternative)
        x, g, sizes = design(values, groups)
        k, N = len(sizes), len(x)
        j_obs = jt_doubled(x, g, k) / 2.0
        center = (N * N - float(np.sum(sizes ** 2))) / 4.0
        common = dict(statistic_name=self.statistic_name, statistic=j_obs)
        if algorithm == "dp-counts":
            vals, mult = _blocks_of(x)
            support, ways = count_linear(vals, mult, sizes, _jt_increment, progress)
            mask = pvalues.integer_tail_mask(support, int(round(2 * j_obs)), alternative,
                                             N * N - int(np.sum(sizes ** 2)), 2)
            p = pvalues.clip(ways[mask].sum() / ways.sum())
            return EngineOutcome(p_value=p, method="exact", arrangements=multinomial(sizes),
                                 algorithm="dynamic programming over tie blocks and group counts "
                                           "(doubled statistic, integers)",
                                 null_support=support / 2.0, null_probs=ways / ways.sum(), **common)
        if algorithm == ranked.TABLE:
            p, _ = ranked.jonckheere(x, g, alternative, progress)
            return EngineOutcome(p_value=p, method="exact", arrangements=multinomial(sizes),
                                 algorithm=ranked.WORDS.format(what="groups x categories"),
                                 **common)
        if algorithm == "monte-carlo":
            return self._sample(x, sizes, j_obs, center, alternative, draws, seed, progress, common)
        raise PlanError(f"the Jonckheere-Terpstra test has no algorithm '{algorithm}'",
                        hint=f"use dp-counts, {ranked.TABLE} or monte-carlo")

    def _sample(self, x, sizes, j_obs, center, alternative, draws, seed, progress, common):
        draws = int(draws or DEFAULT_DRAWS)
        seed = sampling.require_seed(seed)
        sx = np.sort(x)
        starts, k = _block_starts(sx), len(sizes)
        labels = np.repeat(np.arange(k), sizes)
        num = int(np.sum(sizes)) ** 2 - int(np.sum(sizes ** 2))       # 2 E0 (2J) = num / 2

        def work(size, rng):
            rows = rng.permuted(np.broadcast_to(labels, (size, len(x))), axis=1)
            step = max(1, _CHUNK_ROWS // (len(x) * k))
            found = 0
            for lo in range(0, size, step):
                j2 = _jt_doubled_rows(rows[lo:lo + step], starts, k)
                found += pvalues.integer_exceedances(j2, round(2 * j_obs), alternative, num, 2)
            return found

        # all cores, in fixed random streams: the same p for any number of workers
        hits = sum(sampling.iter_blocks(seed, draws, work, progress, "sampling assignments"))
        p, interval = pvalues.monte_carlo_p(hits, draws)
        return EngineOutcome(p_value=p, method="monte-carlo", draws=draws, p_interval=interval,
                             seed=seed, algorithm="Monte Carlo: random assignments to groups",
                             **common)


# ----------------------------------------------------------------------------- linear trend

def dose_scores(scores, k: int) -> np.ndarray:
    d = np.arange(1.0, k + 1.0) if scores is None else np.asarray(scores, dtype=float).ravel()
    if d.size != k or not np.all(np.isfinite(d)):
        raise DataError(f"{k} groups need {k} finite dose scores, got {d.size}")
    return d


@dataclass(frozen=True)
class TrendSetup:
    """The trend statistic's pieces for one data set.

    T = sum_i d_g(i) x_i is reported; p-values compare W = sum_i e_g(i) w_i, an increasing
    affine function of T over the assignments (T = t_obs + unit * (W - w_obs)): w and e are
    the grid integers of the values and the dose scores when both lie on grids (W is then an
    exact integer), else the values and scores centred on one of their own."""

    x: np.ndarray
    g: np.ndarray
    sizes: np.ndarray
    d: np.ndarray         # dose score per group
    t_obs: float
    w: np.ndarray         # item scores for the comparisons
    e: np.ndarray         # group scores for the comparisons
    exact: bool           # W is an integer, compared exactly
    x_unit: float         # values = offset + x_unit * w
    d_unit: float         # dose scores = offset + d_unit * e
    w_obs: float
    center_num: float     # E0 W = center_num / N
    scale: float          # a bound on |W - E0 W|, for the tolerance off a grid

    @property
    def unit(self) -> float:
        """T - t_obs = unit * (W - w_obs)."""
        return self.x_unit * self.d_unit

    @property
    def ratio_unit(self) -> float:
        """A slope in the data's units per ratio of W-scale sums (values over doses)."""
        return self.x_unit / self.d_unit

    @property
    def center(self) -> float:
        return self.center_num / len(self.x)

    def tail_count(self, t_w, alternative) -> int:
        if self.exact:
            return pvalues.integer_exceedances(t_w, self.w_obs, alternative,
                                               int(self.center_num), len(self.x))
        return pvalues.exceedances(t_w, self.w_obs, alternative, center=self.center,
                                   scale=self.scale)


def trend_setup(values, groups, scores=None) -> TrendSetup:
    x, g, sizes = design(values, groups)
    d = dose_scores(scores, len(sizes))
    t_obs = float(np.sum(d[g] * x))
    zg, dg = integer_grid(x), integer_grid(d)
    exact = zg is not None and dg is not None
    if exact:
        w, e = zg.integers.astype(float), dg.integers.astype(float)
        units = zg.step, dg.step
        exact = float(w.sum()) * float(e.max(initial=0)) < EXACT_COUNT_LIMIT
    if not exact:
        w, e, units = centred(x), centred(d), (1.0, 1.0)
    w_obs = float(np.sum(e[g] * w))
    center_num = float(w.sum() * np.sum(sizes * e))
    scale = float(np.sum(np.abs(w - w.mean())) * np.max(np.abs(e - e.mean())))
    return TrendSetup(x, g, sizes, d, t_obs, w, e, exact, units[0], units[1], w_obs, center_num,
                      max(scale, 1e-300))


def _trend_grids(setup: TrendSetup):
    """Integer grids (values z, merged score classes e, class sizes), or None."""
    zg, dg = integer_grid(setup.x), integer_grid(setup.d)
    if zg is None or dg is None:
        return None
    e_values, cls = np.unique(dg.integers, return_inverse=True)
    class_sizes = np.bincount(cls.ravel(), weights=setup.sizes).astype(np.int64)
    return zg, dg, e_values.astype(np.int64), class_sizes


@dataclass(frozen=True)
class LinearTrend:
    key: str = "means"
    statistic_name: str = "linear trend T = sum of dose score x group total"

    def candidates(self, values, groups, scores=None, draws: int = DEFAULT_DRAWS) -> list[Candidate]:
        st = trend_setup(values, groups, scores)
        arr, N, k = multinomial(st.sizes), len(st.x), len(st.sizes)
        out = [enumeration_candidate(arr, N, k)]
        grids = _trend_grids(st)
        words = "dynamic programming over tie blocks and group counts (values on a decimal grid)"
        if grids is None:
            out.append(Candidate("dp-counts", words, True, math.inf, math.inf, feasible=False,
                                 note="values or dose scores are not on a decimal grid",
                                 arrangements=arr))
        else:
            zg, _, e, cls = grids
            t_max = float(e.max() * zg.integers.sum())
            states, ops, memory = count_estimate(cls, t_max, _blocks_of(zg.integers)[1])
            out.append(Candidate("dp-counts", words, True, ops, memory,
                                 note=f"about {states:.3g} counting states",
                                 arrangements=arr))
        if ranked.offered(st.x):
            t, u, v = ranked.trend_table(st.x, st.g, st.d)
            out.append(ranked.candidate(t, "trend", "groups x values", arr, u, v))
        out.append(monte_carlo_candidate(N, arr, draws))
        return out

    def run(self, values, groups, alternative: str, algorithm: str, draws: Optional[int] = None,
            seed: Optional[int] = None, progress: Progress = NO_PROGRESS,
            scores=None) -> EngineOutcome:
        _check_alternative(alternative)
        st = trend_setup(values, groups, scores)
        common = dict(statistic_name=self.statistic_name, statistic=st.t_obs)
        if is_constant(st.d) or is_constant(st.x):
            return EngineOutcome(p_value=1.0, method="exact", arrangements=multinomial(st.sizes),
                                 algorithm="none needed: every assignment gives the same statistic",
                                 warnings=("all dose scores or all values are equal: no trend "
                                           "can be seen, p = 1",), **common)
        if algorithm == "dp-counts":
            return self._count(st, alternative, progress, common)
        if algorithm == "enumeration":
            return self._enumerate(st, alternative, progress, common)
        if algorithm == ranked.TABLE:
            p, _ = ranked.linear_trend(st.x, st.g, st.d, alternative, progress)
            return EngineOutcome(p_value=p, method="exact", arrangements=multinomial(st.sizes),
                                 algorithm=ranked.WORDS.format(what="groups x values"), **common)
        if algorithm == "monte-carlo":
            return self._sample(st, alternative, draws, seed, progress, common)
        raise PlanError(f"the trend test has no algorithm '{algorithm}'",
                        hint=f"use dp-counts, enumeration, {ranked.TABLE} or monte-carlo")

    def _count(self, st: TrendSetup, alternative, progress, common):
        grids = _trend_grids(st)
        if grids is None:
            raise PlanError("exact counting needs values and dose scores on decimal grids",
                            hint="use enumeration or monte-carlo")
        zg, dg, e, cls = grids
        z = zg.integers
        vals, mult = _blocks_of(z)
        support, ways = count_linear(vals, mult, cls, lambda c, x, v: int(v) * int(x @ e), progress)
        # T = sum_i d_g(i) x_i = const + dg.step * zg.step * T', T' = sum_i e_g(i) z_i
        e_item = dg.integers[st.g]
        t_obs_int = int(np.sum(e_item * z))
        mask = pvalues.integer_tail_mask(support, t_obs_int, alternative,
                                         int(z.sum()) * int(np.sum(st.sizes * dg.integers)),
                                         len(z))
        p = pvalues.clip(ways[mask].sum() / ways.sum())
        t_values = st.t_obs + dg.step * zg.step * (support.astype(float) - t_obs_int)
        return EngineOutcome(p_value=p, method="exact", arrangements=multinomial(st.sizes),
                             algorithm="dynamic programming over tie blocks and group counts "
                                       "(values on a decimal grid)",
                             null_support=t_values, null_probs=ways / ways.sum(), **common)

    def _enumerate(self, st: TrendSetup, alternative, progress, common):
        hits, seen, kept = 0, 0, []
        keep = multinomial(st.sizes) <= NULL_KEEP_MAX
        for chunk in enumerate_group_sums(st.w, st.sizes, progress):
            t = chunk[:, :, 0] @ st.e
            hits += st.tail_count(t, alternative)
            seen += len(t)
            if keep:
                kept.append(t)
        law = {}
        if keep:
            t = np.concatenate(kept)
            keys, inverse = np.unique(np.round((t - st.center) / st.scale, 10), return_inverse=True)
            n = np.bincount(inverse.ravel())
            rep = np.bincount(inverse.ravel(), weights=t) / n
            law = dict(null_support=st.t_obs + st.unit * (rep - st.w_obs), null_probs=n / seen)
        return EngineOutcome(p_value=pvalues.clip(hits / seen), method="exact",
                             arrangements=multinomial(st.sizes),
                             algorithm="complete enumeration of every assignment to groups",
                             **law, **common)

    def _sample(self, st: TrendSetup, alternative, draws, seed, progress, common):
        draws = int(draws or DEFAULT_DRAWS)
        seed = sampling.require_seed(seed)
        hits = 0
        for chunk in sample_group_sums(st.w, st.sizes, seed, draws, progress):
            hits += st.tail_count(chunk[:, :, 0] @ st.e, alternative)
        p, interval = pvalues.monte_carlo_p(hits, draws)
        return EngineOutcome(p_value=p, method="monte-carlo", draws=draws, p_interval=interval,
                             seed=seed, algorithm="Monte Carlo: random assignments to groups",
                             **common)


# ----------------------------------------------------------------------------- slope interval

def least_squares_slope(x, d_item) -> float:
    dc = d_item - d_item.mean()
    return float(np.sum(dc * (x - x.mean())) / np.sum(dc * dc))


def slope_estimate(values, groups, scores=None, level: float = 0.95, alternative: str = "two-sided",
                   progress: Progress = NO_PROGRESS, limits: Limits = NO_LIMITS_GIVEN) -> Estimate:
    """Least-squares slope of the values on the dose scores, with an exact interval.

    The interval is the set of slopes b0 that the permutation test of "slope = b0" (statistic
    sum_i d_i (y_i - b0 d_i), residuals exchangeable) does not reject at 1 - level (split
    equally between the tails when two-sided; ends by the rule of `confidence`). For each
    assignment the test's comparison is linear in b0, so the set's ends are order statistics
    of ratios, found by listing every assignment; when listing them would not fit the plan's
    limits (`set budget`, `set memory`), no interval is given.
    """
    _check_alternative(alternative)
    st = trend_setup(values, groups, scores)
    d_item = st.d[st.g]
    name = "trend slope (change in mean response per unit of dose score)"
    if is_constant(st.d):
        return Estimate(name, float("nan"), None, level, "no slope: all dose scores are equal")
    b = least_squares_slope(st.x, d_item)
    arr = multinomial(st.sizes)
    if not limits.fits(big(arr) * len(st.x) * _SLOPE_OPS_PER_ITEM, big(arr) * 8.0 * 3):
        return Estimate(name, b, None, level, "least squares; no exact interval: "
                        f"{words(arr)} assignments are too many to list within the budget")
    ratios, fixed = _slope_ratios(st, progress)
    lo, hi = _invert(ratios, fixed, arr, level, alternative)
    method = ("least squares; exact interval by inverting the permutation test of the slope "
              "(complete enumeration" + (", equal tails)" if alternative == "two-sided" else ")"))
    return Estimate(name, b, (lo, hi), level, method)


def _slope_ratios(st: TrendSetup, progress):
    """Ratios A/B (in the data's units) for every assignment with B < 0, and the number with
    B = 0.

    A = W - w_obs on the values and B the same on the dose scores themselves (their integers
    on grids, else centred: A and B do not move with either's offset); the test of slope b0
    counts an assignment in its upper tail when A - b0 B >= 0, ties included.
    """
    w, e, unit = st.w, st.e, st.ratio_unit
    exact = st.exact and float(np.max(np.abs(e))) ** 2 * len(st.x) < EXACT_COUNT_LIMIT
    if not exact:           # B's squares would pass the exact integers: centred instead
        w, e, unit = centred(st.x), centred(st.d), 1.0
    e_item = e[st.g]
    w_obs = float(np.sum(e_item * w))
    both = np.column_stack([w, e_item])
    b_obs = float(np.sum(e_item * e_item))
    tol = 0.0 if exact else pvalues.tolerance(b_obs)
    ratios, fixed = [], 0
    for chunk in enumerate_group_sums(both, st.sizes, progress):
        a = chunk[:, :, 0] @ e - w_obs
        bb = chunk[:, :, 1] @ e - b_obs
        moved = bb < -tol
        fixed += int(np.count_nonzero(~moved))
        ratios.append(a[moved] / bb[moved])
    return np.sort(np.concatenate(ratios)) * unit, fixed


def _invert(ratios, fixed, arr, level, alternative):
    """Ends of {b0 : p(b0) > alpha_side} in each tail, from the sorted ratios: p_higher(b0) =
    (fixed + #{ratios <= b0}) / arr, p_lower(b0) = (fixed + #{ratios >= b0}) / arr."""
    need = rejected_up_to(alpha_side(level, alternative), arr) - fixed + 1
    m = len(ratios)
    if need <= 0:
        lo, hi = -math.inf, math.inf
    elif need > m:
        lo, hi = math.inf, -math.inf
    else:
        lo, hi = float(ratios[need - 1]), float(ratios[m - need])
    if alternative == "higher":
        hi = math.inf
    elif alternative == "lower":
        lo = -math.inf
    return lo, hi


JONCKHEERE_TERPSTRA = JonckheereTerpstra()
LINEAR_TREND = LinearTrend()

# ordered + ranks: Jonckheere-Terpstra; ordered + means: linear trend in dose scores
FAMILIES = {"ranks": JONCKHEERE_TERPSTRA, "means": LINEAR_TREND}
