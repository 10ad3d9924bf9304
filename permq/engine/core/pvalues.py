"""The p-value rules, written once and used by every engine.

- Exact: sum the probabilities of arrangements whose statistic is at least as extreme as the
  observed one; "at least as extreme" uses a relative tolerance of 1e-9 so that floating-point
  noise never splits ties.
- Two-sided for linear statistics: P(|T - E0 T| >= |t - E0 T|).
- Monte Carlo: p = (b + 1) / (m + 1) with b exceedances in m draws, and a 99% Clopper-Pearson
  interval for the p-value that complete enumeration would give.
- Every p-value is clipped to [0, 1].
"""
from __future__ import annotations

import numpy as np
from ...normal.tails import beta_ppf

RTOL = 1e-9

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


def monte_carlo_p(b: int, m: int, level: float = 0.99) -> tuple[float, tuple]:
    """(b + 1) / (m + 1) and a Clopper-Pearson interval for the underlying exact p."""
    p = (b + 1) / (m + 1)
    alpha = 1 - level
    lo = 0.0 if b == 0 else beta_ppf(alpha / 2, b, m - b + 1)
    hi = 1.0 if b == m else beta_ppf(1 - alpha / 2, b + 1, m - b)
    return clip(p), (lo, hi)


def clip(p: float) -> float:
    return float(min(1.0, max(0.0, p)))
