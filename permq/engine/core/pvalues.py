"""The p-value rules, written once and used by every engine.

- Exact: sum the probabilities of arrangements whose statistic is at least as extreme as the
  observed one; "at least as extreme" uses a relative tolerance of 1e-9 so that floating-point
  noise never splits ties.
- Two-sided for linear statistics: P(|T - E0 T| >= |t - E0 T|).
- Monte Carlo: p = (b + 1) / (m + 1) with b exceedances in m draws, and a 99% Clopper-Pearson
  interval for the p-value that complete enumeration would give.
- Integer statistics (scores on an integer grid: values recorded to a few decimals, doubled
  mid-ranks) are compared exactly, without a tolerance; two-sided with a fractional centre
  num / den compares |den * S - num| in integers.
- Tables: a table is as extreme as the observed one when its probability is at most the
  observed one's with relative tolerance PROBABILITY_RTOL.
- Every p-value is clipped to [0, 1].

Intervals that invert a test read their ends by the rule in `confidence`.
"""
from __future__ import annotations

import numpy as np
from ...normal.tails import beta_ppf

RTOL = 1e-9
PROBABILITY_RTOL = 1e-7

TWO_SIDED_LINEAR = "two-sided p = P(|T - E0 T| >= |t - E0 T|) under the null"
TWO_SIDED_QUADRATIC = "the statistic is already two-sided: p = P(T >= t) under the null"


def tolerance(t_obs: float, scale: float = 1.0) -> float:
    return RTOL * max(abs(t_obs), abs(scale), 1e-300)


def tail_probability(support, probs, t_obs, alternative, center=0.0, scale=None) -> float:
    """p-value from a discrete null distribution (support values, probabilities)."""
    support = np.asarray(support, dtype=float)
    probs = np.asarray(probs, dtype=float)
    scale = scale if scale is not None else float(np.max(np.abs(support - center), initial=0.0))
    tol = tolerance(t_obs - center, scale)
    if alternative == "higher":
        mask = support >= t_obs - tol
    elif alternative == "lower":
        mask = support <= t_obs + tol
    else:
        mask = np.abs(support - center) >= abs(t_obs - center) - tol
    return clip(probs[mask].sum() / probs.sum())


def exceedances(sampled, t_obs, alternative, center=0.0, scale=None) -> int:
    sampled = np.asarray(sampled, dtype=float)
    if scale is None:
        scale = abs(t_obs - center)
    tol = tolerance(t_obs - center, scale)
    if alternative == "higher":
        return int(np.count_nonzero(sampled >= t_obs - tol))
    if alternative == "lower":
        return int(np.count_nonzero(sampled <= t_obs + tol))
    return int(np.count_nonzero(np.abs(sampled - center) >= abs(t_obs - center) - tol))


def integer_tail_mask(support, s_obs, alternative, center_num=0, center_den=1) -> np.ndarray:
    """Exact tail of an integer statistic S: higher S >= s, lower S <= s, two-sided
    |den S - num| >= |den s - num| (centre num / den, integers; no tolerance)."""
    support = np.asarray(support)
    if alternative == "higher":
        return support >= s_obs
    if alternative == "lower":
        return support <= s_obs
    num, den = int(center_num), int(center_den)
    obs = abs(den * int(s_obs) - num)
    if np.max(np.abs(support), initial=0) * den + abs(num) < 2 ** 62:
        return np.abs(support.astype(np.int64) * den - num) >= obs
    return np.array([abs(den * int(v) - num) >= obs for v in support], dtype=bool)


def integer_exceedances(sampled, s_obs, alternative, center_num=0, center_den=1) -> int:
    """How many integer statistics (held as exact floats) are at least as extreme as s_obs."""
    s = np.rint(np.asarray(sampled, dtype=float)).astype(np.int64)
    return int(np.count_nonzero(integer_tail_mask(s, int(round(s_obs)), alternative,
                                                  center_num, center_den)))


def monte_carlo_p(b: int, m: int, level: float = 0.99) -> tuple[float, tuple]:
    """(b + 1) / (m + 1) and a Clopper-Pearson interval for the underlying exact p."""
    p = (b + 1) / (m + 1)
    alpha = 1 - level
    lo = 0.0 if b == 0 else beta_ppf(alpha / 2, b, m - b + 1)
    hi = 1.0 if b == m else beta_ppf(1 - alpha / 2, b + 1, m - b)
    return clip(p), (lo, hi)


def clip(p: float) -> float:
    return float(min(1.0, max(0.0, p)))
