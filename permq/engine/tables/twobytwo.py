"""2 x 2 tables: Fisher's exact test and the conditional odds ratio.

Given both margins, the top-left count n11 follows the hypergeometric distribution
P(n11 = k) = comb(R1, k) comb(R2, C1 - k) / comb(N, C1). Its probabilities are computed from
exact integers (one rounding each) up to N = EXACT_N, from log-gamma beyond.

- "higher": the odds ratio is above 1, i.e. n11 larger: p = P(n11 >= observed).
- "lower": p = P(n11 <= observed).
- "two-sided": the sum of the probabilities of tables no more probable than the observed one,
  with relative tolerance 1e-7.

The odds ratio estimate is the conditional maximum-likelihood estimate (the value of psi at
which the noncentral hypergeometric mean equals the observed n11); its interval inverts the two
one-sided tests, each at alpha / 2 (common practice).
"""
from __future__ import annotations

from math import comb

import numpy as np
from ...lazy import brentq
from ...lazy import gammaln, logsumexp

from ...plan.cost import Candidate
from ...result import Estimate, EngineOutcome
from ..core.pvalues import clip
from ..core.progress import NO_PROGRESS, Progress
from .stats import PROBABILITY_RTOL

EXACT_N = 20000
ALGORITHM = "hypergeometric distribution of the top-left count"
STATISTIC_NAME = "top-left count n11"
TWO_SIDED_RULE = ("p = sum of the probabilities of tables no more probable than the observed "
                  "one (relative tolerance 1e-7)")
ESTIMATE_NAME = "odds ratio (conditional maximum likelihood)"
INTERVAL_WORDS = "exact conditional: inverts the two one-sided Fisher tests, alpha/2 each"


def as_2x2(table) -> np.ndarray:
    t = np.asarray(table)
    if t.shape != (2, 2) or np.any(t < 0) or np.any(t != np.round(t)):
        raise ValueError("a 2 x 2 table needs four non-negative whole counts")
    return t.astype(np.int64)


def margins(table):
    t = as_2x2(table)
    r1, r2 = int(t[0].sum()), int(t[1].sum())
    c1 = int(t[:, 0].sum())
    return int(t[0, 0]), r1, r2, c1


def support(table):
    """(k values, probabilities) of the top-left count given both margins."""
    _, r1, r2, c1 = margins(table)
    n = r1 + r2
    ks = np.arange(max(0, c1 - r2), min(r1, c1) + 1)
    if n <= EXACT_N:
        total = comb(n, c1)
        k = int(ks[0])
        w = comb(r1, k) * comb(r2, c1 - k)     # exact integers, k to k + 1 by their ratio
        probs = np.empty(ks.size)
        for idx in range(ks.size):
            probs[idx] = w / total
            w = w * (r1 - k) * (c1 - k) // ((k + 1) * (r2 - c1 + k + 1))
            k += 1
    else:
        probs = np.exp(_log_weights(ks, r1, r2, c1) - (gammaln(n + 1.0) - gammaln(c1 + 1.0)
                                                       - gammaln(n - c1 + 1.0)))
    return ks, probs


def candidates(table, statistic: str = "fisher") -> list[Candidate]:
    """One exact method; its reference set is the tables with the observed margins."""
    ks, _ = support(table)
    return [Candidate("hypergeometric", ALGORITHM, True, float(ks.size) * 20.0,
                      float(ks.size) * 16.0, arrangements=float(ks.size))]


def run(table, statistic: str = "fisher", alternative: str = "two-sided",
        algorithm: str = "hypergeometric", draws=None, seed=None,
        progress: Progress = NO_PROGRESS) -> EngineOutcome:
    """Fisher's exact test for a 2 x 2 table (draws and seed are not needed: it is exact)."""
    if statistic != "fisher":
        raise ValueError(f"a 2 x 2 table is tested here with the fisher statistic, not {statistic!r}")
    k, *_ = margins(table)
    ks, probs = support(table)
    p = tail_p(ks, probs, k, alternative)
    progress.step(1.0, "2 x 2 table")
    return EngineOutcome(STATISTIC_NAME, float(k), p, "exact", ALGORITHM,
                         arrangements=float(ks.size),
                         null_support=ks.astype(float), null_probs=probs)


def tail_p(ks, probs, k, alternative) -> float:
    if alternative == "higher":
        return clip(probs[ks >= k].sum())
    if alternative == "lower":
        return clip(probs[ks <= k].sum())
    if alternative != "two-sided":
        raise ValueError(f"unknown alternative {alternative!r}")
    observed = probs[ks == k][0]
    return clip(probs[probs <= observed * (1.0 + PROBABILITY_RTOL)].sum())


def _log_weights(ks, r1, r2, c1):
    ks = np.asarray(ks, dtype=float)
    return (gammaln(r1 + 1.0) - gammaln(ks + 1.0) - gammaln(r1 - ks + 1.0)
            + gammaln(r2 + 1.0) - gammaln(c1 - ks + 1.0) - gammaln(r2 - c1 + ks + 1.0))


def _noncentral(ks, base, log_psi):
    """Probabilities of the noncentral hypergeometric distribution with odds ratio e^log_psi."""
    w = base + ks * log_psi
    return np.exp(w - logsumexp(w))


def _solve(f, target):
    """log psi where the increasing function f(log psi) equals target."""
    lo, hi = -1.0, 1.0
    while f(lo) > target:
        lo *= 2.0
    while f(hi) < target:
        hi *= 2.0
    return brentq(lambda z: f(z) - target, lo, hi, xtol=1e-12, rtol=1e-14, maxiter=500)


def odds_ratio(table, level: float = 0.95, alternative: str = "two-sided") -> Estimate:
    """Conditional MLE of the odds ratio with its exact conditional interval."""
    k, r1, r2, c1 = margins(table)
    ks = np.arange(max(0, c1 - r2), min(r1, c1) + 1)
    if ks.size == 1:
        return Estimate(ESTIMATE_NAME, float("nan"), (0.0, float("inf")), level,
                        INTERVAL_WORDS + "; a margin is zero, so the data say nothing")
    base = _log_weights(ks, r1, r2, c1)
    kf = ks.astype(float)

    def mean(z):
        return float(np.dot(kf, _noncentral(kf, base, z)))

    def upper_tail(z):     # P(X >= k), increasing in psi
        return float(_noncentral(kf, base, z)[ks >= k].sum())

    def lower_tail(z):     # -P(X <= k), increasing in psi
        return -float(_noncentral(kf, base, z)[ks <= k].sum())

    if k == ks[0]:
        value = 0.0
    elif k == ks[-1]:
        value = float("inf")
    else:
        value = float(np.exp(_solve(mean, float(k))))
    alpha = (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0)
    lo, hi = 0.0, float("inf")
    if alternative in ("two-sided", "higher") and k > ks[0]:
        lo = float(np.exp(_solve(upper_tail, alpha)))
    if alternative in ("two-sided", "lower") and k < ks[-1]:
        hi = float(np.exp(_solve(lower_tail, -alpha)))
    return Estimate(ESTIMATE_NAME, value, (lo, hi), level, INTERVAL_WORDS)
