"""The quadratic families (F, Kruskal-Wallis H, normal scores, medians): statistic, exact and
Monte Carlo candidates, and the engine call that runs the planner's choice."""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Optional

import numpy as np

from ...errors import PlanError
from ...plan.cost import Candidate
from ...plan.sizes import big
from ...result import EngineOutcome
from . import dense as dense_tables
from ..tables import halves
from .counting import (count_median_tables, count_sum_squares, dp_ops, largest_sums,
                       median_counting_cost)
from .sums import ROWS, design, enumerate_group_sums, sample_group_sums
from ..core import pvalues
from ..core.counting import multinomial
from ..core.grid import Grid, centred, integer_grid, is_constant
from ..core.limits import DEFAULT_DRAWS, NULL_KEEP_MAX
from ..core.scores import median_scores, midranks, normal_scores
from ..montecarlo import sampling
from ..core.progress import NO_PROGRESS, Progress

DENSE_WORDS = "dynamic programming on dense tables of group score sums (three groups)"
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
    if grid is None or largest_sums(grid.integers, np.asarray(sizes, dtype=np.int64)) is None:
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
        x, g, sizes = design(values, groups)
        arr = multinomial(sizes)
        out = [enumeration_candidate(arr, len(x), len(sizes))]
        out.append(self._counting_candidate(x, sizes, arr))
        dense = self._dense_candidate(x, sizes, arr)
        if dense is not None:
            out.append(dense)
        table = self._table_candidate(x, g, arr)
        if table is not None:
            out.append(table)
        out.append(monte_carlo_candidate(len(x), arr, draws))
        return out

    def _table_candidate(self, x, g, arr) -> Optional[Candidate]:
        """Three or four groups on few distinct values, scores on a grid: the exact law over
        the groups x categories table (tables/halves)."""
        grid = self.grid(x) if self.grid else None
        return None if grid is None else halves.candidate(x, g, grid.integers, arr)

    def _dense_candidate(self, x, sizes, arr) -> Optional[Candidate]:
        """Three groups with scores on a grid: dense tables of score sums (dense.py)."""
        grid = self.grid(x) if self.grid and dense_tables.applies(sizes) else None
        if grid is None:
            return None
        ops, peak = dense_tables.work(grid.integers, sizes)
        fits = math.isfinite(ops)
        return Candidate("dp-dense", DENSE_WORDS, True, ops, peak * 8.0 * 2.5 + 1e5,
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
        fits = largest_sums(grid.integers, sizes) is not None
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
               "dp-dense": self._count, halves.HALVES: self._table}.get(algorithm)
        dense_ok = (algorithm == "dp-dense" and self.grid is not None
                    and dense_tables.applies(sizes))
        table_ok = algorithm == halves.HALVES and self.grid is not None
        if run is None or (algorithm.startswith("dp-") and algorithm != self.counting
                           and not dense_ok) or (algorithm == halves.HALVES and not table_ok):
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
            support, ways = dense_tables.count_three(z, sizes, progress)
        else:
            support, ways = count_sum_squares(z, sizes, progress)
        lcm = int(np.lcm.reduce(sizes))
        zg = np.bincount(g, weights=z, minlength=len(sizes)).round().astype(np.int64)
        q_obs = int(sum(int(s) ** 2 * (lcm // int(n)) for s, n in zip(zg, sizes)))
        p = float(ways[support >= q_obs].sum() / ways.sum())
        words = DENSE_WORDS if dense else self.counting_words
        return dict(p_value=pvalues.clip(p), method="exact", algorithm=words,
                    **self._law(support / lcm, ways, z, sizes))

    def _table(self, x, g, sizes, progress, **_):
        z = self.grid(x).integers
        p = halves.p_value(x, g, z, progress)
        law = halves.null_law(x, g, z, NULL_KEEP_MAX)
        out = dict(p_value=pvalues.clip(p), method="exact", algorithm=halves.WORDS)
        return out if law is None else {**out, **self._law(law[0], law[1], z, sizes)}

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
                     big(arr) * (N + 2 * k) * 2.0, float(ROWS) * N * 8 * 4,
                     arrangements=arr)


def monte_carlo_candidate(N: int, arr: int, draws: int = DEFAULT_DRAWS, per_item: float = 6.0,
                          description: str = "Monte Carlo: random assignments to groups",
                          item_bytes: float = 6.0) -> Candidate:
    # a block of assignments and its group sums; every draw's statistic is kept
    return Candidate("monte-carlo", description, False,
                     sampling.parallel_ops(float(draws) * N * per_item, draws),
                     sampling.sampled_bytes(draws, N, item_bytes, 40.0),
                     note=f"cost for {draws:,} draws",
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
