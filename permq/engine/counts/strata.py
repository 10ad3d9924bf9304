"""Stratified 2 x 2 tables: the exact conditional test of a common odds ratio and its estimate.

Each stratum k is a 2 x 2 table [[a, b], [c, d]] (rows: the first and second group; columns:
event, no event). Given all its margins, a_k follows the hypergeometric law, and under a
common odds ratio psi the sum T = sum_k a_k has P(T = t) proportional to c(t) psi^t, where
c is the convolution of the strata's hypergeometric weights (Birch 1964). Hence:

- the exact test of psi = 1: the law of T given every stratum's margins; two-sided by the
  probability rule (sum of P(T = t) over values no more probable than the observed one), so
  that one stratum gives Fisher's exact test;
- the conditional MLE of psi and its exact interval (Mehta, Patel & Gray 1985), from
  `conditional`; at an end of the support (every stratum at its extreme) the median unbiased
  estimate instead;
- Monte Carlo: each stratum's a_k drawn from its hypergeometric law, T summed; the ordering is
  the exact probability of T (cheap to have), so the two methods answer the same question.

Strata with a zero margin carry no information about psi (their a_k is fixed) and are left
out of the law; the result says how many.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ...plan.cost import Candidate
from ...result import EngineOutcome, Estimate
from ..core.limits import DEFAULT_DRAWS
from ..core.progress import NO_PROGRESS, Progress
from . import conditional as cond
from .logdp import log_convolve, log_hypergeometric, trim

ALGORITHM = "convolution of the strata's hypergeometric laws"
MC_ALGORITHM = "Monte Carlo: hypergeometric draws in every stratum"
STATISTIC_NAME = "sum over strata of the first group's events"
ESTIMATE_NAME = "common odds ratio (conditional maximum likelihood)"
MUE_NAME = "common odds ratio (median unbiased: the conditional MLE is infinite)"
INTERVAL_WORDS = ("exact conditional: inverts the two one-sided tests of the common odds "
                  "ratio, alpha/2 each")


@dataclass(frozen=True)
class Stratum:
    r1: int          # first group's size
    r2: int          # second group's size
    c1: int          # events in the stratum
    observed: int    # first group's events
    lo: int          # lowest possible first-group count given the margins
    logw: np.ndarray  # log hypergeometric weights, lo .. hi

    @property
    def informative(self) -> bool:
        return self.logw.size > 1


def as_strata(tables) -> list:
    t = np.asarray(tables)
    if t.ndim != 3 or t.shape[1:] != (2, 2) or np.any(t < 0) or np.any(t != np.round(t)):
        raise ValueError("stratified tables need K x 2 x 2 non-negative whole counts")
    out = []
    for k in t.astype(np.int64):
        r1, r2, c1 = int(k[0].sum()), int(k[1].sum()), int(k[:, 0].sum())
        lo, logw = log_hypergeometric(r1, r2, c1)
        out.append(Stratum(r1, r2, c1, int(k[0, 0]), lo, logw))
    return out


def informative(strata) -> list:
    return [s for s in strata if s.informative]


def law(strata) -> cond.Law:
    """The null law of T = sum of the first group's events over the informative strata."""
    used = informative(strata)
    if not used:
        raise ValueError("no stratum has both groups and both outcomes")
    offset, logw = 0, np.zeros(1)
    for s in used:
        offset, logw = trim(offset + s.lo, log_convolve(logw, s.logw))
    support = np.arange(offset, offset + logw.size, dtype=float)
    return cond.Law(support, logw, float(sum(s.observed for s in used)))


def support_size(strata) -> int:
    return 1 + sum(s.logw.size - 1 for s in informative(strata))


def candidates(strata, draws: int) -> list:
    used = informative(strata)
    width = support_size(strata)
    ops = 12.0 * sum(s.logw.size for s in used) * width + 50.0 * width
    mc_ops = 30.0 * float(draws) * max(len(used), 1)
    return [Candidate("convolution", ALGORITHM, True, ops, 16.0 * width,
                      arrangements=float(width)),
            Candidate("monte-carlo", MC_ALGORITHM, False, mc_ops, 8.0 * 8192 * 4)]


def run(strata, alternative: str = "two-sided", algorithm: str = "convolution",
        draws: int = DEFAULT_DRAWS, seed: int = 1, progress: Progress = NO_PROGRESS) -> EngineOutcome:
    """The exact (or Monte Carlo) test of a common odds ratio of 1."""
    the_law = law(strata)
    probs = the_law.probabilities()
    if algorithm == "monte-carlo":
        return _monte_carlo(strata, the_law, probs, alternative, draws, seed, progress)
    p = cond.tail(the_law, alternative, "probability")
    progress.step(1.0, "strata")
    return EngineOutcome(STATISTIC_NAME, the_law.observed, p, "exact", ALGORITHM,
                         arrangements=float(the_law.support.size),
                         null_support=the_law.support, null_probs=probs)


def _monte_carlo(strata, the_law, probs, alternative, draws, seed, progress):
    from ..core.pvalues import monte_carlo_p
    from ..montecarlo.sampling import iter_blocks

    used = informative(strata)
    low = int(the_law.support[0])
    observed = int(round(the_law.observed))
    p_obs = probs[observed - low] * (1.0 + cond.PROBABILITY_RTOL)

    def work(size, rng):
        t = np.zeros(size, dtype=np.int64)
        for s in used:
            t += rng.hypergeometric(s.c1, s.r1 + s.r2 - s.c1, s.r1, size)
        if alternative == "higher":
            return int(np.count_nonzero(t >= observed))
        if alternative == "lower":
            return int(np.count_nonzero(t <= observed))
        return int(np.count_nonzero(probs[t - low] <= p_obs))

    hits = sum(iter_blocks(seed, draws, work, progress, "strata: sampling", workers=1))
    p, ci = monte_carlo_p(hits, draws)
    return EngineOutcome(STATISTIC_NAME, the_law.observed, p, "monte-carlo", MC_ALGORITHM,
                         draws=draws, p_interval=ci, seed=seed,
                         null_support=the_law.support, null_probs=probs)


def common_odds_ratio(strata, level: float = 0.95, alternative: str = "two-sided") -> Estimate:
    """The conditional MLE of the common odds ratio (median unbiased at an end of the
    support) with its exact conditional interval."""
    the_law = law(strata)
    if the_law.support.size == 1:
        return Estimate(ESTIMATE_NAME, math.nan, (0.0, math.inf), level,
                        INTERVAL_WORDS + "; no stratum varies, so the data say nothing")
    b = cond.cmle(the_law)
    name = ESTIMATE_NAME
    if not math.isfinite(b):
        b, name = cond.median_unbiased(the_law), MUE_NAME
    lo, hi = cond.interval(the_law, level, alternative)
    return Estimate(name, _exp(b), (_exp(lo), _exp(hi)), level, INTERVAL_WORDS)


def _exp(b: float) -> float:
    if b == -math.inf:
        return 0.0
    if b == math.inf or b > 709:
        return math.inf
    return math.exp(b)
