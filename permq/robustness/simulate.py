"""Rejection rates of both tests under each law of the panel, by simulation.

For each law, `datasets` data sets are drawn in blocks of BLOCK from `sampling.blocks`
(law j of the panel uses the seed 1000 * seed + j, so one seed reproduces the whole panel).
Each block is tested twice with the same errors (common random numbers): under the null
(y = errors) and at the shift (y = pattern + errors). The permutation test of every data set
uses all the design's arrangements when there are at most `arrangements.EXACT_LIMIT` of them
(exact, as the user's own analysis); otherwise PERMUTATIONS Monte Carlo arrangements, drawn
afresh for every block and shared by its data sets, with p = (b + 1) / (m + 1), a test
whose level is at most the nominal level under exchangeability.

Laws run on worker threads (one law a task; the cores are shared out this way, and every law
has its own seed, so the numbers do not depend on the number of workers); the calling thread
reports progress and takes a cancel between blocks.

Standard errors: binomial, sqrt(r (1 - r) / datasets), for independent data sets; with
Monte Carlo arrangements the data sets of a block share their arrangements, so the standard
error is the larger of the binomial one and the one from the spread of the block rates.
"""
from __future__ import annotations

import threading
from concurrent.futures import ThreadPoolExecutor, wait
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..engine.montecarlo import sampling
from ..engine.core.progress import NO_PROGRESS
from . import coverage, widths as W
from . import laws as L
from .arrangements import exact_reference, sampled_reference
from .batch import normal_p, permutation_p, scores
from .problem import Problem

PERMUTATIONS = 999
BLOCK = 40


@dataclass(frozen=True)
class Rate:
    value: float
    se: float


@dataclass(frozen=True)
class LawRates:
    law: L.ErrorLaw
    normal_null: Rate
    permutation_null: Rate
    normal_power: Rate
    permutation_power: Rate
    not_exact: Optional[str]      # why the permutation test is not exact under this law
    misses: Optional[tuple] = None    # intervals (coverage.misses): exact above, below;
                                      # normal theory above, below (Rates), or None
    widths: Optional[tuple] = None    # widths.summary: (mean exact / normal-theory width,
                                      # its se, data sets with both finite, unbounded ones)


@dataclass(frozen=True)
class Simulation:
    rates: tuple
    datasets: int
    alpha: float
    exact: bool                   # every arrangement listed
    arrangements: int             # listed (exact) or drawn per block (Monte Carlo)
    seed: int


def factors(problem: Problem, law: L.ErrorLaw) -> np.ndarray:
    if law.spread == "x":
        return L.x_factors(problem.x)
    if law.spread == "groups":
        if problem.kind in ("paired", "one-sample"):
            return L.unit_factors(problem.n)
        return L.group_factors(problem.codes)
    return np.ones(problem.n)


def errors(problem: Problem, law: L.ErrorLaw, rng, size: int, f: np.ndarray) -> np.ndarray:
    """(size, N) errors under the null for this design."""
    if law.spread == "clusters":
        return L.clustered_errors(rng, size, problem.clusters, problem.unit_sizes)
    if problem.kind == "paired":    # the two members of a pair: their difference is symmetric
        return (law.errors(rng, size, f) - law.errors(rng, size, f)) / np.sqrt(2.0)
    e = law.errors(rng, size, f)
    if problem.kind == "one-sample":
        e = e - L.centre(law.key, problem.check.centre) * f
    return e


def simulate(problem: Problem, pattern: np.ndarray, datasets: int, alpha: float, seed: int,
             progress=NO_PROGRESS, permutations: int = PERMUTATIONS,
             panel: Optional[tuple] = None, workers: Optional[int] = None,
             cover_level: Optional[float] = None, cover_exact: bool = True) -> Simulation:
    """`cover_level`: also count the intervals' misses on the null data sets (coverage.py);
    `cover_exact`: the analysis has an exact interval to count them for."""
    panel = panel or L.panel_for(problem)
    exact = exact_reference(problem)
    tracker = Tracker(len(panel) * datasets)

    def one_law(j):
        return _law_counts(problem, panel[j], pattern, datasets, alpha, 1000 * seed + j, exact,
                           permutations, tracker, cover_level, cover_exact)

    workers = max(1, min(workers or sampling.default_workers(), len(panel)))
    counts = run_parallel(one_law, len(panel), workers, tracker, progress)
    with_widths = cover_level is not None and W.applies(problem)
    out = []
    for law, c in zip(panel, counts):
        rates = [rates_from_counts(c[:, i], c[:, 4], exact is None) for i in range(4)]
        misses = None if cover_level is None else tuple(
            rates_from_counts(c[:, i], c[:, 4], exact is None) for i in range(5, 9))
        out.append(LawRates(law, *rates,
                            not_exact=L.breaks_exactness(law, problem.kind, problem.check.centre,
                                                            problem.form, problem.unit_sizes),
                            misses=misses,
                            widths=W.summary(c[:, 9:13].sum(axis=0)) if with_widths else None))
    return Simulation(tuple(out), datasets, alpha, exact is not None,
                      exact.count if exact is not None else permutations, seed)


def _law_counts(problem, law, pattern, datasets, alpha, seed, exact, permutations, tracker,
                cover_level=None, cover_exact=True):
    """Rejections per block: columns normal/permutation under the null, then at the shift,
    the block's size, then (with `cover_level`) the intervals' misses on the null data sets."""
    f = factors(problem, law)
    rows = []
    done = 0
    for _, size, rng in sampling.blocks(seed, datasets, BLOCK):
        tracker.check()
        e = errors(problem, law, rng, size, f)
        ref = exact if exact is not None else sampled_reference(problem, rng, permutations)
        row = []
        for y in (e, e + pattern):
            a = scores(problem, y)
            row.append(int(np.count_nonzero(normal_p(problem, y, a) <= alpha + 1e-12)))
            row.append(int(np.count_nonzero(permutation_p(problem, a, ref) <= alpha + 1e-12)))
            if y is e:
                null_scores = a
        extra = [] if cover_level is None else coverage.misses(problem, e, null_scores, ref,
                                                               cover_level, cover_exact)
        if cover_level is not None and W.applies(problem):
            extra += (W.ratios(problem, e, null_scores, ref, cover_level)
                      if W.wanted(problem, done) else [0.0, 0.0, 0, 0])
        rows.append(row + [size] + extra)
        done += size
        tracker.add(size)
    return np.array(rows)


class _Stopped(Exception):
    pass


class Tracker:
    """Data sets done, across the worker threads, and the request to stop."""

    def __init__(self, total: int):
        self.total = total
        self.done = 0
        self.stop = threading.Event()
        self._lock = threading.Lock()

    def add(self, n: int) -> None:
        with self._lock:
            self.done += n

    def check(self) -> None:
        if self.stop.is_set():
            raise _Stopped()

    def fraction(self) -> float:
        return self.done / self.total


def run_parallel(task, n_tasks: int, workers: int, tracker: Tracker, progress) -> list:
    """task(j) for j < n_tasks on worker threads; the calling thread reports progress and
    takes a cancel (Progress.step raising, or Ctrl-C), which stops the workers at their
    next block."""
    with ThreadPoolExecutor(max_workers=workers) as pool:
        futures = [pool.submit(task, j) for j in range(n_tasks)]
        try:
            while True:
                finished, pending = wait(futures, timeout=0.1)
                progress.step(tracker.fraction(), "robustness: simulating")
                for fut in finished:
                    if fut.exception() is not None:
                        raise fut.exception()
                if not pending:
                    break
        except BaseException:
            tracker.stop.set()
            for fut in futures:
                fut.cancel()
            wait(futures)
            raise
    return [fut.result() for fut in futures]


def rates_from_counts(counts: np.ndarray, sizes: np.ndarray, clustered: bool) -> Rate:
    total = sizes.sum()
    r = counts.sum() / total
    se = float(np.sqrt(r * (1 - r) / total))
    nb = len(counts)
    if clustered and nb > 1:
        resid = counts - r * sizes
        se = max(se, float(np.sqrt(nb / (nb - 1) * (resid ** 2).sum()) / total))
    return Rate(float(r), se)
