"""One proportion: the exact binomial test and the Clopper-Pearson interval.

The data are two counts, (successes, failures). Under the null the number of successes is
binomial(n, p0).

- "higher": p = P(X >= k); "lower": p = P(X <= k).
- "two-sided": the sum of the probabilities of counts no more probable than the observed one,
  with relative tolerance 1e-7 (the probability rule).

The interval is Clopper-Pearson's: the beta quantiles that invert the two one-sided tests, each
at alpha / 2 (one bound at alpha for a one-sided alternative).
"""
from __future__ import annotations

import numpy as np
from ...lazy import stats

from ...plan.cost import Candidate
from ...result import Estimate, EngineOutcome
from ..core.pvalues import clip
from ..core.progress import NO_PROGRESS, Progress
from .stats import PROBABILITY_RTOL

ALGORITHM = "binomial distribution of the count of successes"
STATISTIC_NAME = "count of successes"
TWO_SIDED_RULE = ("p = sum of the probabilities of counts no more probable than the observed "
                  "one (relative tolerance 1e-7)")
INTERVAL_WORDS = "Clopper-Pearson (exact binomial)"


def counts(table) -> tuple[int, int]:
    """(successes, trials) from (successes, failures)."""
    t = np.asarray(table).ravel()
    if t.size != 2 or np.any(t < 0) or np.any(t != np.round(t)):
        raise ValueError("one proportion needs two non-negative whole counts: successes, failures")
    return int(t[0]), int(t[0] + t[1])


def binomial_p(k: int, n: int, p0: float, alternative: str):
    """(p-value, support, probabilities) of the exact binomial test."""
    if not 0.0 < p0 < 1.0:
        raise ValueError("the null proportion must lie strictly between 0 and 1")
    ks = np.arange(n + 1)
    probs = stats.binom.pmf(ks, n, p0)
    if alternative == "higher":
        p = stats.binom.sf(k - 1, n, p0)
    elif alternative == "lower":
        p = stats.binom.cdf(k, n, p0)
    elif alternative == "two-sided":
        p = probs[probs <= probs[k] * (1.0 + PROBABILITY_RTOL)].sum()
    else:
        raise ValueError(f"unknown alternative {alternative!r}")
    return clip(p), ks, probs


def candidates(table, statistic: str = "binomial") -> list[Candidate]:
    _, n = counts(table)
    return [Candidate("binomial", ALGORITHM, True, 20.0 * (n + 1), 16.0 * (n + 1),
                      arrangements=float(n + 1), reference="outcomes")]


def run(table, statistic: str = "binomial", alternative: str = "two-sided",
        algorithm: str = "binomial", draws=None, seed=None, progress: Progress = NO_PROGRESS,
        p0: float = 0.5) -> EngineOutcome:
    """Exact binomial test of the proportion of successes against p0."""
    if statistic != "binomial":
        raise ValueError(f"one proportion is tested with the binomial statistic, not {statistic!r}")
    k, n = counts(table)
    if n == 0:
        raise ValueError("no trials: the proportion cannot be tested")
    p, ks, probs = binomial_p(k, n, p0, alternative)
    progress.step(1.0, "binomial")
    return EngineOutcome(STATISTIC_NAME, float(k), p, "exact", ALGORITHM,
                         arrangements=float(n + 1), null_support=ks.astype(float),
                         null_probs=probs)


def clopper_pearson(k: int, n: int, level: float = 0.95, alternative: str = "two-sided"):
    alpha = (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0)
    lo, hi = 0.0, 1.0
    if alternative in ("two-sided", "higher") and k > 0:
        lo = float(stats.beta.ppf(alpha, k, n - k + 1))
    if alternative in ("two-sided", "lower") and k < n:
        hi = float(stats.beta.ppf(1.0 - alpha, k + 1, n - k))
    return lo, hi


def proportion(table, level: float = 0.95, alternative: str = "two-sided") -> Estimate:
    """The observed proportion with its Clopper-Pearson interval."""
    k, n = counts(table)
    if n == 0:
        raise ValueError("no trials: the proportion cannot be estimated")
    return Estimate("proportion of successes", k / n, clopper_pearson(k, n, level, alternative),
                    level, INTERVAL_WORDS)
