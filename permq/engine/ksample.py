"""Exact and Monte Carlo engines for three or more unordered groups.

Every statistic here is a quadratic one: it is an increasing function of the between-group
sum of squares of some scores a_i,

    SSB = sum_g S_g^2 / n_g - (sum_i a_i)^2 / N,     S_g = sum of the scores in group g,

so that every exact p-value is P(SSB >= ssb_obs) under random assignment of the N items to
groups of the observed sizes (each of the N! / (n_1! ... n_k!) assignments equally likely):

- "means": the values themselves; one-way F = (SSB/(k-1)) / ((SST-SSB)/(N-k)).
- "ranks": mid-ranks; Kruskal-Wallis H = (N-1) SSB / SST, which is the usual H divided by the
  tie correction 1 - sum(t^3 - t) / (N^3 - N) (common practice).
- "normal-scores": van der Waerden scores Phi^-1(r / (N+1)) of the mid-ranks r;
  statistic (N-1) SSB / SST.
- "medians": 1 above the pooled median, 0 otherwise (values equal to the median count as
  not above); statistic N SSB / SST, the Pearson chi-square of the 2 x k table of counts.

The statistic is already two-sided: any alternative is read as its upper tail.

Algorithms (keys as in `Candidate.algorithm`):
- "enumeration": list every assignment (`enumerate_group_sums`).
- "dp-sums": scores on an integer grid (doubled mid-ranks always are; values recorded to a few
  decimals are) are counted, not listed: tie blocks are added one at a time and the state is
  the vector of (count, score sum) per group; groups of equal size are interchangeable for a
  quadratic statistic, so states that differ only by permuting them are merged.
- "dp-hypergeometric": the median test's tables of counts above the median, probabilities
  from the multivariate hypergeometric law, one group at a time.
- "monte-carlo": random assignments in seeded blocks (`sample_group_sums`).
"""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from functools import lru_cache, reduce
from typing import Callable, Iterator, Optional

import numpy as np

from ..errors import DataError, PlanError
from ..plan.cost import Candidate
from ..plan.sizes import big
from ..result import EngineOutcome
from . import ksample_dense
from .core import pvalues
from .core.counting import multinomial, multinomial_weights
from .core.grid import Grid, centred, integer_grid, is_constant
from .core.limits import DEFAULT_DRAWS, NULL_KEEP_MAX
from .core.scores import median_scores, midranks, normal_scores
from .montecarlo import sampling
from .montecarlo.draws import group_sums, random_u32
from .core.progress import NO_PROGRESS, Progress

_ROWS = 1 << 18                  # rows handled at once when listing or counting
DENSE_WORDS = "dynamic programming on dense tables of group score sums (three groups)"


# ----------------------------------------------------------------------------- design

def design(values, groups) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Check the inputs; return (values, groups, sizes) as arrays."""
    x = np.asarray(values, dtype=float).ravel()
    g = np.asarray(groups).ravel()
    if x.size != g.size:
        raise DataError(f"{x.size} values but {g.size} group codes")
    if not np.all(np.isfinite(x)):
        raise DataError("values must be finite numbers (no missing values)")
    if g.size == 0 or not np.issubdtype(g.dtype, np.integer) or g.min() < 0:
        raise DataError("group codes must be integers 0 .. k-1")
    g = g.astype(np.int64)
    sizes = np.bincount(g)
    if sizes.size < 2:
        raise DataError("at least two groups are needed")
    if np.any(sizes == 0):
        empty = ", ".join(str(i) for i in np.flatnonzero(sizes == 0))
        raise DataError(f"group(s) {empty} have no values")
    return x, g, sizes


def ordered_by_group(a: np.ndarray, groups: np.ndarray) -> np.ndarray:
    """Scores laid out group after group (stable), the layout the listing and sampling use."""
    return a[np.argsort(groups, kind="stable")]


# ----------------------------------------------------------------------------- listing

@lru_cache(maxsize=64)
def _combination_tables(r: int, n: int) -> tuple[np.ndarray, np.ndarray]:
    """All n-subsets of range(r) as rows, and their complements."""
    pick = np.array(list(itertools.combinations(range(r), n)), dtype=np.int64).reshape(-1, n)
    mask = np.ones((len(pick), r), dtype=bool)
    mask[np.arange(len(pick))[:, None], pick] = False
    keep = np.nonzero(mask)[1].reshape(len(pick), r - n)
    return pick, keep


def enumerate_group_sums(scores, sizes, progress: Progress = NO_PROGRESS) -> Iterator[np.ndarray]:
    """Yield the group sums of every assignment, in chunks of shape (rows, k, p).

    `scores` is (N,) or (N, p); every one of the N!/(n_1!...n_k!) assignments of the items
    to groups of the given sizes appears exactly once.
    """
    a = np.asarray(scores, dtype=float).reshape(len(scores), -1)
    sizes = [int(n) for n in sizes]
    rem = np.arange(a.shape[0], dtype=np.int64)[None, :]
    sums = np.zeros((1, 0, a.shape[1]))
    total = big(multinomial(sizes))
    done = [0.0]
    for chunk in _expand(a, sizes, 0, rem, sums):
        done[0] += len(chunk)
        progress.step(done[0] / total, "listing assignments")
        yield chunk


def _expand(a, sizes, g, rem, sums):
    if g == len(sizes) - 1:
        yield np.concatenate([sums, a[rem].sum(axis=1)[:, None, :]], axis=1)
        return
    r = rem.shape[1]
    pick, keep = _combination_tables(r, sizes[g])
    step = max(1, _ROWS // len(pick))
    for lo in range(0, len(rem), step):
        part, part_sums = rem[lo:lo + step], sums[lo:lo + step]
        chosen = a[part[:, pick]].sum(axis=2)                      # (m, P, p)
        new_rem = part[:, keep].reshape(-1, r - sizes[g])
        new_sums = np.concatenate([np.repeat(part_sums, len(pick), axis=0),
                                   chosen.reshape(-1, 1, a.shape[1])], axis=1)
        yield from _expand(a, sizes, g + 1, new_rem, new_sums)


# ----------------------------------------------------------------------------- sampling

def sample_group_sums(scores, sizes, seed: int, draws: int,
                      progress: Progress = NO_PROGRESS) -> Iterator[np.ndarray]:
    """Yield group sums of `draws` random assignments, one seeded block at a time: (b, k, p)."""
    a = np.asarray(scores, dtype=float).reshape(len(scores), -1)
    sizes = np.asarray(sizes, dtype=np.int64)
    steps = max(1, a.shape[0] - int(sizes[-1]))    # the last group takes what is left

    def work(size, rng):
        # one shuffle a draw (compiled; the numpy path gives the same sums), every column on it
        r = random_u32(rng, size, steps)
        return np.stack([group_sums(a[:, j], sizes, r) for j in range(a.shape[1])], axis=2)

    # blocks on all cores, in order; a bounded window keeps memory flat
    yield from sampling.iter_blocks(seed, draws, work, progress, "sampling assignments")


# ----------------------------------------------------------------------------- counting

def _compositions(m: int, caps: np.ndarray) -> np.ndarray:
    """All ways (x_1..x_k) to split m tied items over k groups with x_g <= caps_g."""
    k = len(caps)
    rows = []
    for bars in itertools.combinations(range(m + k - 1), k - 1):
        edges = (-1,) + bars + (m + k - 1,)
        x = [edges[i + 1] - edges[i] - 1 for i in range(k)]
        if all(x[i] <= caps[i] for i in range(k)):
            rows.append(x)
    return np.array(rows, dtype=np.int64).reshape(-1, k)


@dataclass
class _States:
    """Sparse DP states: per group counts and score sums, and the number of ways."""

    counts: np.ndarray   # (M, k) int64
    sums: np.ndarray     # (M, k) int64
    ways: np.ndarray     # (M,) float64


def _radix(z: np.ndarray, sizes: np.ndarray) -> Optional[np.ndarray]:
    top = np.sort(z)[::-1]
    smax = np.array([int(top[:n].sum()) for n in sizes], dtype=np.int64)
    radix = (sizes + 1) * (smax + 1)
    lcm = math.lcm(*(int(n) for n in sizes))
    q_max = sum(int(m) ** 2 * (lcm // int(n)) for m, n in zip(smax, sizes))
    if math.prod(int(r) for r in radix) >= 2 ** 62 or q_max >= 2 ** 62:
        return None
    return smax


def _merge(st: _States, sizes, smax, classes) -> _States:
    """Sum the ways of equal states (up to permuting groups of equal size)."""
    pair = st.counts * (smax + 1) + st.sums
    for cl in classes:
        pair[:, cl] = np.sort(pair[:, cl], axis=1)
    radix = (sizes + 1) * (smax + 1)
    key = np.zeros(len(pair), dtype=np.int64)
    for g in range(len(sizes)):
        key = key * radix[g] + pair[:, g]
    _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
    ways = np.bincount(inverse.ravel(), weights=st.ways)
    pair = pair[first]
    return _States(pair // (smax + 1), pair % (smax + 1), ways)


def _add_block(st: _States, value: int, m: int, sizes, smax, classes) -> _States:
    xs = _compositions(m, sizes)
    weights = multinomial_weights(m, xs)
    done, parts, rows = None, [], 0
    for x, w in zip(xs, weights):
        ok = np.all(st.counts + x <= sizes, axis=1)
        if not ok.any():
            continue
        parts.append(_States(st.counts[ok] + x, st.sums[ok] + x * value, st.ways[ok] * w))
        rows += int(ok.sum())
        if rows > 8 * _ROWS:
            done = _merge(_concat(parts + ([done] if done else [])), sizes, smax, classes)
            parts, rows = [], 0
    return _merge(_concat(parts + ([done] if done else [])), sizes, smax, classes)


def _concat(parts: list) -> _States:
    return _States(np.concatenate([p.counts for p in parts]), np.concatenate([p.sums for p in parts]),
                   np.concatenate([p.ways for p in parts]))


def count_sum_squares(z, sizes, progress: Progress = NO_PROGRESS) -> tuple[np.ndarray, np.ndarray]:
    """Exact null distribution of Q = sum_g Z_g^2 * (L / n_g), L = lcm of the sizes.

    z: non-negative integer scores; Z_g: their sum in group g. Returns (Q values as int64,
    numbers of assignments) over all N!/(n_1!...n_k!) assignments.
    """
    z = np.asarray(z, dtype=np.int64)
    sizes = np.asarray(sizes, dtype=np.int64)
    smax = _radix(z, sizes)
    if smax is None:
        raise PlanError("the score sums are too large to count exactly")
    classes = [np.flatnonzero(sizes == v) for v in np.unique(sizes) if np.sum(sizes == v) > 1]
    k = len(sizes)
    st = _States(np.zeros((1, k), np.int64), np.zeros((1, k), np.int64), np.ones(1))
    values, mult = np.unique(z, return_counts=True)
    for i, (v, m) in enumerate(zip(values, mult)):
        st = _add_block(st, int(v), int(m), sizes, smax, classes)
        _rescale_ways(st.ways)
        progress.step((i + 1) / len(values), "counting assignments")
    lcm = int(np.lcm.reduce(sizes))
    q = (st.sums ** 2 * (lcm // sizes)).sum(axis=1)
    support, inverse = np.unique(q, return_inverse=True)
    return support, np.bincount(inverse.ravel(), weights=st.ways)


def _rescale_ways(ways: np.ndarray) -> None:
    """Past 2^800, the ways times a power of two (exact) bringing the largest near 1."""
    top = float(ways.max(initial=0.0))
    if top > 2.0 ** 800:
        ways *= 2.0 ** -math.frexp(top)[1]


def estimate_states(z, sizes) -> float:
    """Rough peak number of counting states (an over-estimate as a rule), before running."""
    z = np.sort(np.asarray(z, dtype=np.int64))
    sizes = np.asarray(sizes, dtype=np.int64)
    N = int(sizes.sum())
    sym = math.prod(math.factorial(int(np.sum(sizes == v))) for v in np.unique(sizes))
    order = np.argsort(sizes)
    best = 1.0
    for i in sorted({max(1, N // 3), N // 2, (2 * N) // 3, (3 * N) // 4}):
        prefix = z[:i]
        _, mult = np.unique(prefix, return_counts=True)
        distinct = reduce(np.convolve, (np.ones(m + 1) for m in mult), np.array([1.0]))
        total = np.array([1.0])
        for j, g in enumerate(order):
            f = np.ones(int(sizes[g]) + 1)
            if j < len(order) - 1:
                top = min(int(sizes[g]), i) + 1
                low = np.concatenate([[0], np.cumsum(prefix)])[:top]          # c smallest
                high = np.concatenate([[0], np.cumsum(prefix[::-1])])[:top]   # c largest
                f[:top] = np.minimum(high - low + 1, distinct[:top])
            f[min(int(sizes[g]), i) + 1:] = 0
            total = np.convolve(total, f)
        if i < len(total):
            best = max(best, float(total[i]))
    return best / sym


def dp_ops(z, sizes) -> tuple[float, float, float]:
    """(estimated peak states, ops, peak bytes) of `count_sum_squares`."""
    sizes = np.asarray(sizes)
    k = len(sizes)
    states = estimate_states(z, sizes)
    _, mult = np.unique(np.asarray(z), return_counts=True)
    branches = sum(math.comb(int(m) + k - 1, k - 1) for m in mult)
    return states, states * branches * (k + 4) * 2.0, states * k * (16.0 * k + 40.0) * 2.0


# ----------------------------------------------------------------------------- median counting

def count_median_tables(sizes, above: int) -> tuple[np.ndarray, np.ndarray]:
    """Exact law of Q = sum_g a_g^2 * (L / n_g) over the tables of counts a_g above the median.

    A table has prod_g C(n_g, a_g) of the C(N, A) equally likely choices of which items lie
    above (multivariate hypergeometric). The groups are taken one at a time, the state being
    (items above placed so far, partial Q) with its number of ways; the last group's count is
    what is left (A less the rest), so it adds no branches. Returns (Q values, ways) with the
    ways in float64: exact integers below 2^53; a group's weights C(n, a) are divided by their
    largest when that passes 2^53 (a common factor, which cancels), and the ways are rescaled
    by powers of two, so no size overflows. Ratios of ways are the probabilities.
    """
    sizes = [int(n) for n in sizes]
    lcm = math.lcm(*sizes)
    used = np.zeros(1, dtype=np.int64)
    q = np.zeros(1, dtype=np.int64)
    ways = np.ones(1)
    for n in sizes[:-1]:
        a = np.arange(0, min(n, above) + 1, dtype=np.int64)
        w = _binomial_weights(n, len(a))
        new_used = (used[:, None] + a[None, :]).ravel()
        keep = new_used <= above
        new_q = (q[:, None] + (a * a * (lcm // n))[None, :]).ravel()[keep]
        new_w = (ways[:, None] * w[None, :]).ravel()[keep]
        new_used = new_used[keep]
        key = new_used * (int(new_q.max(initial=0)) + 1) + new_q
        uniq, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        used, q = new_used[first], new_q[first]
        ways = np.bincount(inverse.ravel(), weights=new_w)
        _rescale_ways(ways)
    last = sizes[-1]
    rest = above - used
    ok = (rest >= 0) & (rest <= last)
    w_last = _binomial_weights(last, last + 1)
    q = q[ok] + rest[ok] ** 2 * (lcm // last)
    ways = ways[ok] * w_last[rest[ok]]
    support, inverse = np.unique(q, return_inverse=True)
    return support, np.bincount(inverse.ravel(), weights=ways)


def _binomial_weights(n: int, count: int) -> np.ndarray:
    """C(n, a) for a = 0 .. count-1 as floats; divided by the largest past 2^53."""
    w = [math.comb(n, a) for a in range(count)]
    top = max(w)
    return np.array([v / top for v in w] if top > 2 ** 53 else w, dtype=float)


def median_counting_cost(sizes, above: int) -> tuple[float, float]:
    """(ops, bytes) of `count_median_tables`: the states before each group times its
    branches (states bounded by the items above placed times the partial Q values)."""
    sizes = [int(n) for n in sizes]
    lcm = math.lcm(*sizes)
    states, ops, peak, q_top = 1.0, 0.0, 1.0, 0
    for n in sizes[:-1]:
        branches = min(n, above) + 1
        ops += states * branches * 12.0
        peak = max(peak, states * branches)
        q_top += n * n * (lcm // n)
        states = min(states * branches, (above + 1.0) * (q_top + 1.0))
    return ops + states * 10.0, peak * 8.0 * 8


# ----------------------------------------------------------------------------- families

ONE_SIDED_NOTE = ("the {stat} is already two-sided (large for any difference among groups); "
                  "alternative '{alt}' was read as its upper tail")


def _f_statistic(ssb, sst, N, k):
    with np.errstate(divide="ignore", invalid="ignore"):
        if N == k:
            return np.full_like(np.asarray(ssb, dtype=float), np.inf)
        return (np.asarray(ssb) / (k - 1)) / ((sst - np.asarray(ssb)) / (N - k))


def scaled_statistic(c: Callable[[int], float]):
    def statistic(ssb, sst, N, k):
        return c(N) * np.asarray(ssb, dtype=float) / sst
    return statistic


def value_grid(x):
    return integer_grid(x)


def _rank_grid(x):
    return integer_grid(midranks(x))


def _exact_integers(raw, sizes) -> Optional[Grid]:
    """The scores' grid when sums of squares of group totals fit exact integers, else None."""
    grid = integer_grid(raw)
    if grid is None or _radix(grid.integers, np.asarray(sizes, dtype=np.int64)) is None:
        return None
    return grid


def _q_of(sums, sizes) -> np.ndarray:
    """Q = sum_g Z_g^2 (L / n_g), L = lcm of the sizes, for rows of integer group sums."""
    z = np.rint(np.asarray(sums, dtype=float)).astype(np.int64)
    lcm = int(np.lcm.reduce(np.asarray(sizes, dtype=np.int64)))
    return (z * z * (lcm // np.asarray(sizes, dtype=np.int64))).sum(axis=-1)


@dataclass(frozen=True)
class QuadraticFamily:
    """One k-sample statistic: its scores, how it follows from SSB, and the ways to get p."""

    key: str
    statistic_name: str
    score: Callable[[np.ndarray], np.ndarray]
    statistic_of: Callable            # (ssb, sst, N, k) -> statistic, increasing in ssb
    grid: Optional[Callable] = None   # integer grid of the scores for counting, or None
    counting: str = "dp-sums"         # the exact counting algorithm this family offers
    counting_words: str = ""

    def candidates(self, values, groups, draws: int = DEFAULT_DRAWS) -> list[Candidate]:
        x, _, sizes = design(values, groups)
        arr = multinomial(sizes)
        out = [enumeration_candidate(arr, len(x), len(sizes))]
        out.append(self._counting_candidate(x, sizes, arr))
        dense = self._dense_candidate(x, sizes, arr)
        if dense is not None:
            out.append(dense)
        out.append(monte_carlo_candidate(len(x), arr, draws))
        return out

    def _dense_candidate(self, x, sizes, arr) -> Optional[Candidate]:
        """Three groups with scores on a grid: dense tables of score sums (ksample_dense)."""
        grid = self.grid(x) if self.grid and ksample_dense.applies(sizes) else None
        if grid is None:
            return None
        cells, peak = ksample_dense.work(grid.integers, sizes)
        fits = math.isfinite(cells)
        return Candidate("dp-dense", DENSE_WORDS, True, cells * 2.0, peak * 8.0 * 2.5 + 1e5,
                         feasible=fits, note="" if fits else "the tables of sums are too large",
                         arrangements=arr)

    def _counting_candidate(self, x, sizes, arr) -> Candidate:
        if self.counting == "dp-hypergeometric":
            ops, memory = median_counting_cost(sizes, int(median_scores(x).sum()))
            return Candidate("dp-hypergeometric", self.counting_words, True, ops, memory,
                             arrangements=arr)
        grid = self.grid(x) if self.grid else None
        if grid is None:
            return Candidate(self.counting, self.counting_words, True, math.inf, math.inf,
                             feasible=False, note="scores are not on a grid", arrangements=arr)
        states, ops, memory = dp_ops(grid.integers, sizes)
        fits = _radix(grid.integers, sizes) is not None
        return Candidate(self.counting, self.counting_words, True, ops, memory, feasible=fits,
                         note=f"about {states:.3g} counting states" if fits else
                         "score sums too wide to index", arrangements=arr)

    def run(self, values, groups, alternative: str, algorithm: str, draws: Optional[int] = None,
            seed: Optional[int] = None, progress: Progress = NO_PROGRESS) -> EngineOutcome:
        x, g, sizes = design(values, groups)
        notes = _alternative_notes(self.statistic_name, alternative)
        if self.key == "medians":
            notes.append("values equal to the pooled median are counted as not above it")
        raw = self.score(x)
        N, k, arr = len(x), len(sizes), multinomial(sizes)
        if is_constant(raw):
            return _all_equal(self, arr, notes)
        a = centred(raw)
        a = a - a.mean()
        sst = float(np.sum(a * a))
        ssb_obs = float(np.sum(np.bincount(g, weights=a, minlength=k) ** 2 / sizes))
        if N == k:
            notes.append("each group has one value: every assignment gives the same statistic")
        run = {"enumeration": self._enumerate, "monte-carlo": self._sample,
               "dp-sums": self._count, "dp-hypergeometric": self._count_medians,
               "dp-dense": self._count}.get(algorithm)
        dense_ok = (algorithm == "dp-dense" and self.grid is not None
                    and ksample_dense.applies(sizes))
        if run is None or (algorithm.startswith("dp-") and algorithm != self.counting
                           and not dense_ok):
            raise PlanError(f"the {self.key} family has no algorithm '{algorithm}'",
                            hint=f"use enumeration, {self.counting} or monte-carlo")
        parts = run(x=x, g=g, sizes=sizes, a=a, sst=sst, ssb_obs=ssb_obs, draws=draws, seed=seed,
                    progress=progress, exact=_exact_integers(raw, sizes),
                    dense=algorithm == "dp-dense")
        stat = float(self.statistic_of(ssb_obs, sst, N, k))
        return EngineOutcome(statistic_name=self.statistic_name, statistic=stat,
                             arrangements=arr if parts["method"] == "exact" else None,
                             warnings=tuple(notes), **parts)

    # -- the algorithms; each returns the EngineOutcome fields it decides

    def _enumerate(self, x, g, sizes, a, sst, ssb_obs, progress, exact, **_):
        N, k = len(x), len(sizes)
        keep = multinomial(sizes) <= NULL_KEEP_MAX
        scores = a if exact is None else exact.integers.astype(float)
        q_obs = None if exact is None else int(_q_of(np.bincount(g, weights=scores, minlength=k),
                                                     sizes))
        hits, seen, kept = 0, 0, []
        for chunk in enumerate_group_sums(scores, sizes, progress):
            if exact is None:
                ssb = np.sum(chunk[:, :, 0] ** 2 / sizes, axis=1)
                hits += pvalues.exceedances(ssb, ssb_obs, "higher", scale=sst)
            else:
                q = _q_of(chunk[:, :, 0], sizes)
                hits += int(np.count_nonzero(q >= q_obs))
                ssb = _ssb_from_q(q, exact, sizes)
            seen += len(ssb)
            if keep:
                kept.append(ssb)
        support = probs = None
        if keep:
            values = np.concatenate(kept)
            rounded, inverse = np.unique(np.round(values / sst, 10), return_inverse=True)
            rep = np.bincount(inverse.ravel(), weights=values) / np.bincount(inverse.ravel())
            support = self.statistic_of(rep, sst, N, k)
            probs = np.bincount(inverse.ravel()) / seen
        return dict(p_value=pvalues.clip(hits / seen), method="exact",
                    algorithm="complete enumeration of every assignment to groups",
                    null_support=support, null_probs=probs)

    def _sample(self, x, g, sizes, a, sst, ssb_obs, draws, seed, progress, exact, **_):
        draws = int(draws or DEFAULT_DRAWS)
        seed = sampling.require_seed(seed)
        k = len(sizes)
        scores = a if exact is None else exact.integers.astype(float)
        q_obs = None if exact is None else int(_q_of(np.bincount(g, weights=scores, minlength=k),
                                                     sizes))
        hits = 0
        for chunk in sample_group_sums(scores, sizes, seed, draws, progress):
            if exact is None:
                ssb = np.sum(chunk[:, :, 0] ** 2 / sizes, axis=1)
                hits += pvalues.exceedances(ssb, ssb_obs, "higher", scale=sst)
            else:
                hits += int(np.count_nonzero(_q_of(chunk[:, :, 0], sizes) >= q_obs))
        p, interval = pvalues.monte_carlo_p(hits, draws)
        return dict(p_value=p, method="monte-carlo", draws=draws, p_interval=interval, seed=seed,
                    algorithm="Monte Carlo: random assignments to groups")

    def _count(self, x, g, sizes, progress, dense=False, **_):
        grid = self.grid(x) if self.grid else None
        if grid is None:
            raise PlanError(f"exact counting needs {self.key} scores on a grid", hint="use enumeration")
        z = grid.integers
        if dense:
            support, ways = ksample_dense.count_three(z, sizes, progress)
        else:
            support, ways = count_sum_squares(z, sizes, progress)
        lcm = int(np.lcm.reduce(sizes))
        zg = np.bincount(g, weights=z, minlength=len(sizes)).round().astype(np.int64)
        q_obs = int(sum(int(s) ** 2 * (lcm // int(n)) for s, n in zip(zg, sizes)))
        p = float(ways[support >= q_obs].sum() / ways.sum())
        words = DENSE_WORDS if dense else self.counting_words
        return dict(p_value=pvalues.clip(p), method="exact", algorithm=words,
                    **self._law(support / lcm, ways, z, sizes))

    def _law(self, q, ways, z, sizes) -> dict:
        if len(q) > NULL_KEEP_MAX:
            return {}
        N = float(len(z))
        zc = np.asarray(z, dtype=float)
        ssb = q - zc.sum() ** 2 / N
        sst = float(np.sum((zc - zc.mean()) ** 2))
        support = self.statistic_of(np.maximum(ssb, 0.0), sst, len(z), len(sizes))
        return dict(null_support=np.asarray(support, dtype=float), null_probs=ways / ways.sum())

    def _count_medians(self, x, g, sizes, progress, **_):
        above = median_scores(x).astype(np.int64)
        support, ways = count_median_tables(sizes, int(above.sum()))
        progress.step(1.0, "counting tables")
        lcm = math.lcm(*(int(n) for n in sizes))
        counts = np.bincount(g, weights=above, minlength=len(sizes)).round().astype(int)
        q_obs = sum(int(c) ** 2 * (lcm // int(n)) for c, n in zip(counts, sizes))
        p = float(ways[support >= q_obs].sum() / ways.sum())
        law = self._law(support.astype(float) / lcm, ways, above, sizes)
        return dict(p_value=pvalues.clip(p), method="exact", algorithm=self.counting_words, **law)


def _ssb_from_q(q, grid: Grid, sizes) -> np.ndarray:
    """The between-group sum of squares of the scores from Q of their grid integers."""
    z = grid.integers
    lcm = int(np.lcm.reduce(np.asarray(sizes, dtype=np.int64)))
    return np.maximum(grid.step ** 2 * (q / lcm - float(z.sum()) ** 2 / len(z)), 0.0)


def _alternative_notes(name: str, alternative: str) -> list:
    if alternative in ("higher", "lower"):
        return [ONE_SIDED_NOTE.format(stat=name, alt=alternative)]
    if alternative != "two-sided":
        raise PlanError(f"unknown alternative '{alternative}'", hint="higher, lower or two-sided")
    return []


def _all_equal(family: QuadraticFamily, arr: int, notes: list) -> EngineOutcome:
    notes = notes + [f"all {family.key} scores are equal: the {family.statistic_name} is undefined "
                     "and every assignment is alike, so p = 1"]
    return EngineOutcome(statistic_name=family.statistic_name, statistic=float("nan"), p_value=1.0,
                         method="exact", algorithm="none needed: every assignment gives the same data",
                         arrangements=arr, warnings=tuple(notes))


def enumeration_candidate(arr: int, N: int, k: int) -> Candidate:
    return Candidate("enumeration", "complete enumeration of every assignment to groups", True,
                     big(arr) * (N + 2 * k) * 2.0, float(_ROWS) * N * 8 * 4,
                     arrangements=arr)


def monte_carlo_candidate(N: int, arr: int, draws: int = DEFAULT_DRAWS, per_item: float = 6.0,
                          description: str = "Monte Carlo: random assignments to groups") -> Candidate:
    return Candidate("monte-carlo", description, False, float(draws) * N * per_item,
                     float(sampling.BLOCK) * N * 8 * 3, note=f"cost for {draws:,} draws",
                     arrangements=arr)


MEANS = QuadraticFamily(
    "means", "F", score=lambda x: np.asarray(x, dtype=float), statistic_of=_f_statistic,
    grid=value_grid,
    counting_words="dynamic programming over tie blocks and group sums (values on a decimal grid)")
RANKS = QuadraticFamily(
    "ranks", "Kruskal-Wallis H", score=midranks, statistic_of=scaled_statistic(lambda N: N - 1),
    grid=_rank_grid,
    counting_words="dynamic programming over groups and rank sums (doubled mid-ranks, exact integers)")
NORMAL_SCORES = QuadraticFamily(
    "normal-scores", "van der Waerden normal-scores statistic", score=normal_scores,
    statistic_of=scaled_statistic(lambda N: N - 1), grid=None,
    counting_words="dynamic programming over group score sums")
MEDIANS = QuadraticFamily(
    "medians", "median test chi-square", score=median_scores, statistic_of=scaled_statistic(lambda N: N),
    counting="dp-hypergeometric",
    counting_words="exact counting of tables of counts above the median "
                   "(multivariate hypergeometric, one group at a time)")

FAMILIES = {f.key: f for f in (MEANS, RANKS, NORMAL_SCORES, MEDIANS)}
