"""Event rates over an exposure (person-years, machine-hours): Poisson counts.

One rate: x events in exposure t, X ~ Poisson(lambda t). The exact test of lambda = lambda0
sums Poisson(lambda0 t) probabilities: "higher" P(X >= x), "lower" P(X <= x), two-sided the
probabilities no larger than the observed one's (relative tolerance 1e-7). The interval is
Garwood's (1936), the chi-square form of the two one-sided Poisson tests:
[chi2(alpha/2; 2x) / 2t, chi2(1 - alpha/2; 2x + 2) / 2t].

Two rates: x1 events in t1 and x2 in t2. Given the total n = x1 + x2, X1 is binomial(n, pi)
with pi = R t1 / (R t1 + t2), R = lambda1 / lambda2 the rate ratio: the exact conditional test
of R = 1 is the binomial test of pi0 = t1 / (t1 + t2) (two-sided by the probability rule), and
its Clopper-Pearson interval for pi, mapped through R = pi t2 / ((1 - pi) t1), is the exact
interval for the rate ratio.

Monte Carlo draws the same laws (Poisson, or binomial given the total), for `sampled`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ...plan.cost import Candidate
from ...result import EngineOutcome, Estimate
from ..core.limits import DEFAULT_DRAWS
from ..core.progress import NO_PROGRESS, Progress
from .conditional import PROBABILITY_RTOL

ONE_ALGORITHM = "Poisson distribution of the count of events"
TWO_ALGORITHM = "binomial law of the first group's events given the total"
MC_ALGORITHM = "Monte Carlo draws of the same law"
RULE = ("p = sum of the probabilities of counts no more probable than the observed one "
        "(relative tolerance 1e-7)")
GARWOOD = "Garwood (exact Poisson, chi-square form)"
RATIO_WORDS = "exact conditional: Clopper-Pearson for the binomial given the total, mapped to the ratio"


@dataclass(frozen=True)
class Rates:
    counts: tuple       # one or two event counts
    exposures: tuple    # their exposures (> 0)
    reference: float = 1.0   # one rate: the null rate; two: the null rate ratio

    @property
    def two(self) -> bool:
        return len(self.counts) == 2


def _poisson_pmf(ks, mu):
    from scipy.stats import poisson

    return poisson.pmf(ks, mu)


def poisson_p(x: int, mu: float, alternative: str) -> float:
    from scipy.stats import poisson

    if alternative == "higher":
        return float(min(1.0, poisson.sf(x - 1, mu)))
    if alternative == "lower":
        return float(min(1.0, poisson.cdf(x, mu)))
    f = float(poisson.pmf(x, mu)) * (1.0 + PROBABILITY_RTOL)
    # the counts more probable than the observed one form a run around the mode
    mode = int(math.floor(mu))
    lo = mode
    while lo > 0 and poisson.pmf(lo - 1, mu) > f:
        lo -= 1
    hi = mode
    while poisson.pmf(hi + 1, mu) > f:
        hi += 1
    inside = float(poisson.cdf(hi, mu) - (poisson.cdf(lo - 1, mu) if lo > 0 else 0.0))
    if poisson.pmf(mode, mu) <= f:          # the observed count is (one of) the most probable
        inside = 0.0
    return float(min(1.0, max(0.0, 1.0 - inside)))


def binomial_p(k: int, n: int, p0: float, alternative: str) -> float:
    from scipy.stats import binom

    if alternative == "higher":
        return float(min(1.0, binom.sf(k - 1, n, p0)))
    if alternative == "lower":
        return float(min(1.0, binom.cdf(k, n, p0)))
    probs = binom.pmf(np.arange(n + 1), n, p0)
    return float(min(1.0, probs[probs <= probs[k] * (1.0 + PROBABILITY_RTOL)].sum()))


def candidates(data: Rates, draws: int) -> list:
    if data.two:
        n = sum(data.counts)
        exact = Candidate("binomial", TWO_ALGORITHM, True, 30.0 * (n + 1), 16.0 * (n + 1),
                          arrangements=float(n + 1))
    else:
        mu = data.reference * data.exposures[0]
        width = data.counts[0] + mu + 10 * math.sqrt(mu + 1) + 10
        exact = Candidate("poisson", ONE_ALGORITHM, True, 200.0 * width, 64.0)
    return [exact, Candidate("monte-carlo", MC_ALGORITHM, False, 8.0 * draws, 8.0 * 8192)]


def run(data: Rates, alternative: str, algorithm: str, draws: int = DEFAULT_DRAWS, seed: int = 1,
        progress: Progress = NO_PROGRESS) -> EngineOutcome:
    if data.two:
        x1, x2 = data.counts
        t1, t2 = data.exposures
        n = x1 + x2
        p0 = data.reference * t1 / (data.reference * t1 + t2)
        name = "first group's events given the total"
        if algorithm == "monte-carlo":
            from scipy.stats import binom

            probs = binom.pmf(np.arange(n + 1), n, p0)
            return _monte_carlo(lambda size, rng: rng.binomial(n, p0, size), x1, probs,
                                alternative, draws, seed, progress, name)
        p = binomial_p(x1, n, p0, alternative)
        progress.step(1.0, "rates")
        return EngineOutcome(name, float(x1), p, "exact", TWO_ALGORITHM,
                             arrangements=float(n + 1))
    x = data.counts[0]
    mu = data.reference * data.exposures[0]
    name = "count of events"
    if algorithm == "monte-carlo":
        top = int(max(x, mu + 40 * math.sqrt(mu + 1) + 40))
        probs = _poisson_pmf(np.arange(top + 1), mu)
        return _monte_carlo(lambda size, rng: np.minimum(rng.poisson(mu, size), top), x, probs,
                            alternative, draws, seed, progress, name)
    p = poisson_p(x, mu, alternative)
    progress.step(1.0, "rates")
    return EngineOutcome(name, float(x), p, "exact", ONE_ALGORITHM,
                         arrangements=float(listed_counts(x, mu)))


def listed_counts(x: int, mu: float) -> int:
    """The counts 0 .. top the Poisson law is read over: past top, less than 1e-16 is left."""
    from scipy.stats import poisson

    return int(max(x, poisson.isf(1e-16, mu))) + 2


def _monte_carlo(draw, observed, probs, alternative, draws, seed, progress, name):
    from ..core.pvalues import monte_carlo_p
    from ..montecarlo.sampling import iter_blocks

    bound = probs[observed] * (1.0 + PROBABILITY_RTOL)

    def work(size, rng):
        k = draw(size, rng)
        if alternative == "higher":
            return int(np.count_nonzero(k >= observed))
        if alternative == "lower":
            return int(np.count_nonzero(k <= observed))
        return int(np.count_nonzero(probs[k] <= bound))

    hits = sum(iter_blocks(seed, draws, work, progress, "rates: sampling"))
    p, ci = monte_carlo_p(hits, draws)
    return EngineOutcome(name, float(observed), p, "monte-carlo", MC_ALGORITHM, draws=draws,
                         p_interval=ci, seed=seed)


def garwood(x: int, exposure: float, level: float = 0.95, alternative: str = "two-sided"):
    """Garwood's exact interval for a Poisson rate."""
    from scipy.stats import chi2

    alpha = (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0)
    lo, hi = 0.0, math.inf
    if alternative in ("two-sided", "higher") and x > 0:
        lo = float(chi2.ppf(alpha, 2 * x)) / 2.0 / exposure
    if alternative in ("two-sided", "lower"):
        hi = float(chi2.ppf(1.0 - alpha, 2 * x + 2)) / 2.0 / exposure
    return lo, hi


def estimate(data: Rates, level: float, alternative: str) -> Estimate:
    if not data.two:
        x, t = data.counts[0], data.exposures[0]
        return Estimate("rate (events per unit of exposure)", x / t,
                        garwood(x, t, level, alternative), level, GARWOOD)
    from scipy.stats import beta

    x1, x2 = data.counts
    t1, t2 = data.exposures
    n = x1 + x2
    value = math.inf if x2 == 0 else (math.nan if x1 == 0 and x2 == 0 else (x1 / t1) / (x2 / t2))
    if n == 0:
        return Estimate("rate ratio", math.nan, (0.0, math.inf), level,
                        RATIO_WORDS + "; no events, so the data say nothing")
    alpha = (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0)
    lo_pi, hi_pi = 0.0, 1.0
    if alternative in ("two-sided", "higher") and x1 > 0:
        lo_pi = float(beta.ppf(alpha, x1, n - x1 + 1))
    if alternative in ("two-sided", "lower") and x1 < n:
        hi_pi = float(beta.ppf(1.0 - alpha, x1 + 1, n - x1))

    def ratio(pi):
        if pi >= 1.0:
            return math.inf
        return pi * t2 / ((1.0 - pi) * t1)

    return Estimate("rate ratio", value, (ratio(lo_pi), ratio(hi_pi)), level, RATIO_WORDS)
