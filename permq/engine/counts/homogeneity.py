"""Zelen's exact test that stratified 2 x 2 tables share one odds ratio.

Given every stratum's margins and the total T = sum_k a_k (the sufficient statistic of a
common odds ratio), the strata's first-group counts (a_1, ..., a_K) have a law that does not
depend on the common odds ratio: P(a | T = t) = prod_k h_k(a_k) / P(T = t), h_k the
hypergeometric law of stratum k (Zelen 1971). The p-value sums this probability over the
configurations no more probable than the observed one (relative tolerance 1e-7).

Exact: a network over the strata. A node is (strata done, partial sum s); the paths into it
carry their log-probability so far. The remaining strata's largest and smallest possible
log-probability to the target sum (max-plus and min-plus convolutions) decide a path at once
when every completion is extreme (its mass is added whole, from the sum-convolution of the
remaining strata) or none is (it is dropped); only the undecided paths go on, merged when
their log-probabilities agree.

Monte Carlo: configurations drawn from the same conditional law, stratum by stratum, each
value with probability h_k(a) P(rest = t - s - a) (exact backward weights).
"""
from __future__ import annotations

import math

import numpy as np

from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core.limits import DEFAULT_DRAWS
from ..core.progress import NO_PROGRESS, Progress
from .conditional import PROBABILITY_RTOL
from .logdp import NEG, log_convolve
from .strata import informative

ALGORITHM = "network over the strata given the total (probabilities ordered)"
MC_ALGORITHM = "Monte Carlo: configurations drawn given the total"
STATISTIC_NAME = "probability of the strata's counts given their total"
RULE = ("the test is two-sided by nature: p = sum of the probabilities of configurations "
        "no more probable than the observed one, given the total (relative tolerance 1e-7)")
TOL = math.log1p(PROBABILITY_RTOL)
MERGE = 1e-10   # log-probabilities this close are one node value


def _max_plus(a, b):
    out = np.full(a.size + b.size - 1, NEG)
    for x, w in enumerate(b):
        np.maximum(out[x:x + a.size], a + w, out=out[x:x + a.size])
    return out


def _min_plus(a, b):
    out = np.full(a.size + b.size - 1, np.inf)
    for x, w in enumerate(b):
        np.minimum(out[x:x + a.size], a + w, out=out[x:x + a.size])
    return out


class _Suffix:
    """For strata k .. K-1: lowest sum, and over sums: log mass, max and min log-probability."""

    def __init__(self, used):
        self.lo = [0] * (len(used) + 1)
        self.mass = [np.zeros(1)] * (len(used) + 1)
        self.high = [np.zeros(1)] * (len(used) + 1)
        self.low = [np.zeros(1)] * (len(used) + 1)
        for k in range(len(used) - 1, -1, -1):
            s = used[k]
            self.lo[k] = self.lo[k + 1] + s.lo
            self.mass[k] = log_convolve(self.mass[k + 1], s.logw)
            self.high[k] = _max_plus(self.high[k + 1], s.logw)
            self.low[k] = _min_plus(self.low[k + 1], s.logw)

    def index(self, k, r):
        """Index of remaining sum r in the arrays of strata k..; -1 when out of reach."""
        i = r - self.lo[k]
        return np.where((i >= 0) & (i < self.mass[k].size), i, -1)


def _setup(strata):
    used = informative(strata)
    if len(used) < 2:
        raise ValueError("the homogeneity of odds ratios needs two strata that vary")
    target = int(sum(s.observed for s in used))
    observed = float(sum(s.logw[s.observed - s.lo] for s in used))
    return used, target, observed


def states_estimate(strata) -> float:
    used = informative(strata)
    total, paths, width = 0.0, 1.0, 1
    for s in used:
        paths *= s.logw.size
        width += s.logw.size - 1
        total += min(paths, width * 2000.0) * s.logw.size
    return total


def candidates(strata, draws: int) -> list:
    used = informative(strata)
    ops = 40.0 * states_estimate(strata)
    mc_ops = 60.0 * float(draws) * max(len(used), 1)
    return [Candidate("network", ALGORITHM, True, ops, 64.0 * states_estimate(strata) / 4 + 1e4),
            Candidate("monte-carlo", MC_ALGORITHM, False, mc_ops, 8.0 * 8192 * 8)]


def run(strata, algorithm: str = "network", draws: int = DEFAULT_DRAWS, seed: int = 1,
        progress: Progress = NO_PROGRESS) -> EngineOutcome:
    used, target, observed = _setup(strata)
    suffix = _Suffix(used)
    total = suffix.mass[0][target - suffix.lo[0]]
    stat = math.exp(observed - total)
    if algorithm == "monte-carlo":
        hits = _sampled_hits(used, suffix, target, observed, draws, seed, progress)
        from ..core.pvalues import monte_carlo_p

        p, ci = monte_carlo_p(hits, draws)
        return EngineOutcome(STATISTIC_NAME, stat, p, "monte-carlo", MC_ALGORITHM, draws=draws,
                             p_interval=ci, seed=seed)
    log_p = _network(used, suffix, target, observed, progress)
    p = 0.0 if log_p == NEG else math.exp(log_p - total)
    count = _configurations(used, target)
    return EngineOutcome(STATISTIC_NAME, stat, min(1.0, max(0.0, p)), "exact", ALGORITHM,
                         arrangements=count)


def _network(used, suffix, target, observed, progress) -> float:
    nodes = {0: (np.zeros(1), np.zeros(1))}     # partial sum -> (log-probabilities, log masses)
    found = NEG
    bound = observed + TOL
    for k, s in enumerate(used):
        xs = np.arange(s.lo, s.lo + s.logw.size)
        grown: dict = {}
        for part, (lp, lm) in nodes.items():
            rest = target - part - xs
            idx = suffix.index(k + 1, rest)
            ok = idx >= 0
            if not ok.any():
                continue
            for x, w, i in zip(xs[ok], s.logw[ok], idx[ok]):
                lp2, lm2 = lp + w, lm + w
                top = lp2 + suffix.high[k + 1][i]
                bottom = lp2 + suffix.low[k + 1][i]
                whole = top <= bound
                if whole.any():
                    found = np.logaddexp(found, _lse(lm2[whole]) + suffix.mass[k + 1][i])
                open_ = ~whole & (bottom <= bound)
                if open_.any():
                    key = int(part + x)
                    grown.setdefault(key, []).append((lp2[open_], lm2[open_]))
        nodes = {key: _merge(parts) for key, parts in grown.items()}
        progress.step((k + 1) / len(used), "homogeneity: network")
    return float(found)


def _merge(parts):
    lp = np.concatenate([p for p, _ in parts])
    lm = np.concatenate([m for _, m in parts])
    order = np.argsort(lp, kind="stable")
    lp, lm = lp[order], lm[order]
    start = np.concatenate(([True], np.diff(lp) > MERGE))
    heads = np.flatnonzero(start)
    merged_lm = np.logaddexp.reduceat(lm, heads) if lm.size else lm
    return lp[heads], merged_lm


def _lse(v) -> float:
    m = float(np.max(v))
    return m + math.log(float(np.exp(v - m).sum()))


def _configurations(used, target) -> float:
    """How many configurations have the observed total (the reference set's size)."""
    count = np.ones(1)
    lo = 0
    for s in used:
        count = np.convolve(count, np.ones(s.logw.size))
        lo += s.lo
    return float(count[target - lo])


def _sampled_hits(used, suffix, target, observed, draws, seed, progress) -> int:
    from ..montecarlo.sampling import iter_blocks

    bound = observed + TOL

    def work(size, rng):
        part = np.zeros(size, dtype=np.int64)
        lp = np.zeros(size)
        for k, s in enumerate(used):
            u = rng.random(size)
            xs = np.arange(s.lo, s.lo + s.logw.size)
            pick = np.empty(size, dtype=np.int64)
            for value in np.unique(part):
                rows = np.flatnonzero(part == value)
                idx = suffix.index(k + 1, target - value - xs)
                w = np.where(idx >= 0, s.logw + suffix.mass[k + 1][np.maximum(idx, 0)], NEG)
                cdf = np.cumsum(np.exp(w - w.max()))
                pick[rows] = np.minimum(np.searchsorted(cdf, u[rows] * cdf[-1], side="right"),
                                        xs.size - 1)
            part += xs[pick]
            lp += s.logw[pick]
        return int(np.count_nonzero(lp <= bound))

    return sum(iter_blocks(seed, draws, work, progress, "homogeneity: sampling"))
