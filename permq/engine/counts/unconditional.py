"""Exact unconditional tests that two binomial proportions are equal: Barnard's and Boschloo's.

x1 of n1 and x2 of n2 are independent binomial counts; under the null p1 = p2 = pi, pi
unknown. Each test orders the (n1 + 1)(n2 + 1) possible outcomes by a statistic, and its
p-value is the largest, over pi, of the probability of the outcomes at least as extreme as the
observed one (`nuisance.polynomial_sup`); it keeps its level for every pi.

- Barnard (1945): the score statistic z = (p1^ - p2^) / sqrt(p^ (1 - p^)(1/n1 + 1/n2)), p^ the
  pooled proportion (z = 0 when p1^ = p2^). "higher": z >= z_obs; "lower": z <= z_obs;
  two-sided: |z| >= |z_obs| (relative tolerance 1e-9).
- Boschloo (1970): Fisher's exact p-value as the statistic: "higher" orders by Fisher's
  P(X1 >= x1 | x1 + x2), "lower" by P(X1 <= x1 | x1 + x2), two-sided by Fisher's two-sided p
  (sum of the hypergeometric probabilities no larger than the observed one's, relative
  tolerance 1e-7); extreme is a Fisher p no larger than the observed one (relative tolerance
  1e-7). Fisher's test keeps its level given every total, so P(Fisher p <= f) <= f for every
  pi, and Boschloo's p-value never exceeds Fisher's: the test is uniformly more powerful.

Monte Carlo: common random draws of (X1, X2) at 50 values of pi (the same uniforms at every
pi, by inversion), the rejection share at each, and the largest of the (b + 1) / (m + 1);
taking the largest of 50 estimates biases it up slightly (never down).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core.limits import DEFAULT_DRAWS
from ..core.progress import NO_PROGRESS, Progress
from . import nuisance

TESTS = ("barnard", "boschloo")
ALGORITHM = "every outcome of the two binomials, supremum over the common proportion"
MC_ALGORITHM = "Monte Carlo: common random draws at 50 values of the common proportion"
STAT_RTOL = 1e-9
PROB_RTOL = 1e-7
MC_POINTS = 50
NAMES = {"barnard": "score z (pooled) of p1 - p2",
         "boschloo": "Fisher's exact p-value (the ordering statistic)"}
RULES = {"barnard": "two-sided: outcomes with |z| >= |z observed|; p = the largest over the "
                    "common proportion",
         "boschloo": "two-sided: outcomes whose Fisher two-sided p is no larger than the "
                     "observed one's; p = the largest over the common proportion"}


@dataclass(frozen=True)
class Binomials:
    x1: int
    n1: int
    x2: int
    n2: int

    def __post_init__(self):
        if self.n1 < 1 or self.n2 < 1:
            raise ValueError("each sample needs at least one trial")
        if not (0 <= self.x1 <= self.n1 and 0 <= self.x2 <= self.n2):
            raise ValueError("a count of successes lies outside 0 .. trials")

    @property
    def table(self) -> np.ndarray:
        """[[x1, n1 - x1], [x2, n2 - x2]]: rows the samples, columns success / failure."""
        return np.array([[self.x1, self.n1 - self.x1], [self.x2, self.n2 - self.x2]], np.int64)


def score_z(n1: int, n2: int) -> np.ndarray:
    """The pooled score statistic for every outcome (a, b), a = 0..n1 rows, b = 0..n2 columns."""
    a = np.arange(n1 + 1, dtype=float)[:, None]
    b = np.arange(n2 + 1, dtype=float)[None, :]
    pooled = (a + b) / (n1 + n2)
    var = pooled * (1.0 - pooled) * (1.0 / n1 + 1.0 / n2)
    diff = a / n1 - b / n2
    with np.errstate(divide="ignore", invalid="ignore"):  # var = 0 only where a + b is 0 or N
        z = np.where(var > 0, diff / np.sqrt(np.where(var > 0, var, 1.0)), 0.0)
    return np.where(a * n2 == b * n1, 0.0, z)


def fisher_p(n1: int, n2: int, alternative: str) -> np.ndarray:
    """Fisher's p-value for every outcome (a, b), given its total a + b."""
    from ..counts.logdp import log_comb_row

    la, lb = log_comb_row(n1), log_comb_row(n2)
    out = np.ones((n1 + 1, n2 + 1))
    for s in range(n1 + n2 + 1):
        lo, hi = max(0, s - n2), min(n1, s)
        a = np.arange(lo, hi + 1)
        w = la[a] + lb[s - a]
        pmf = np.exp(w - w.max())
        pmf /= pmf.sum()
        if alternative == "higher":
            p = np.cumsum(pmf[::-1])[::-1]
        elif alternative == "lower":
            p = np.cumsum(pmf)
        else:
            order = np.sort(pmf)
            cum = np.cumsum(order)
            idx = np.searchsorted(order, pmf * (1.0 + PROB_RTOL), side="right") - 1
            p = cum[idx]
        out[a, s - a] = np.minimum(p, 1.0)
    return out


def region(data: Binomials, test: str, alternative: str):
    """(statistic matrix, boolean matrix of the outcomes at least as extreme, observed value)."""
    if test == "barnard":
        z = score_z(data.n1, data.n2)
        obs = z[data.x1, data.x2]
        tol = STAT_RTOL * max(abs(obs), 1.0)
        if alternative == "higher":
            return z, z >= obs - tol, obs
        if alternative == "lower":
            return z, z <= obs + tol, obs
        return z, np.abs(z) >= abs(obs) - tol, obs
    if test == "boschloo":
        f = fisher_p(data.n1, data.n2, alternative)
        obs = f[data.x1, data.x2]
        return f, f <= obs * (1.0 + PROB_RTOL), obs
    raise ValueError(f"unknown unconditional test {test!r}")


def region_coefficients(mask: np.ndarray, n1: int, n2: int) -> np.ndarray:
    """log c_s, c_s = sum over the region's outcomes with a + b = s of C(n1, a) C(n2, b)."""
    from ..counts.logdp import log_comb_row

    w = log_comb_row(n1)[:, None] + log_comb_row(n2)[None, :]
    w = np.where(mask, w, -np.inf)
    n = n1 + n2
    out = np.full(n + 1, -np.inf)
    a = np.arange(n1 + 1)
    for s in range(n + 1):
        lo, hi = max(0, s - n2), min(n1, s)
        vals = w[a[lo:hi + 1], s - a[lo:hi + 1]]
        top = vals.max()
        if top > -np.inf:
            out[s] = top + math.log(float(np.exp(vals - top).sum()))
    return out


def candidates(data: Binomials, test: str, draws: int) -> list:
    cells = float((data.n1 + 1) * (data.n2 + 1))
    n = data.n1 + data.n2
    ops = 400.0 * cells + 30.0 * (n + 1) * nuisance.grid_size(n) + 4e5
    mc_ops = 12.0 * float(draws) * MC_POINTS
    return [Candidate("enumeration", ALGORITHM, True, ops, 40.0 * cells, arrangements=cells),
            Candidate("monte-carlo", MC_ALGORITHM, False, mc_ops, 8.0 * cells + 8.0 * 8192 * 4)]


def run(data: Binomials, test: str, alternative: str, algorithm: str = "enumeration",
        draws: int = DEFAULT_DRAWS, seed: int = 1, progress: Progress = NO_PROGRESS) -> EngineOutcome:
    stat, mask, obs = region(data, test, alternative)
    if algorithm == "monte-carlo":
        return _monte_carlo(data, test, mask, obs, draws, seed, progress)
    log_c = region_coefficients(mask, data.n1, data.n2)
    p, where = nuisance.polynomial_sup(log_c)
    progress.step(1.0, "unconditional test")
    return EngineOutcome(NAMES[test], float(obs), min(1.0, p), "exact", ALGORITHM,
                         arrangements=float((data.n1 + 1) * (data.n2 + 1)),
                         warnings=(f"the supremum is at a common proportion of {where:.4g}",))


def _monte_carlo(data, test, mask, obs, draws, seed, progress):
    from ..core.pvalues import monte_carlo_p
    from ..montecarlo.sampling import iter_blocks

    pis = nuisance.to_pi(nuisance.theta_grid(0.0, 1.0, MC_POINTS + 2)[1:-1])
    cdf1 = np.cumsum(np.exp(nuisance.log_binomial_rows(data.n1, pis)), axis=1)
    cdf2 = np.cumsum(np.exp(nuisance.log_binomial_rows(data.n2, pis)), axis=1)

    def work(size, rng):
        u1, u2 = rng.random(size), rng.random(size)
        hits = np.empty(pis.size, dtype=np.int64)
        for g in range(pis.size):
            a = np.minimum(np.searchsorted(cdf1[g], u1 * cdf1[g, -1], side="right"), data.n1)
            b = np.minimum(np.searchsorted(cdf2[g], u2 * cdf2[g, -1], side="right"), data.n2)
            hits[g] = np.count_nonzero(mask[a, b])
        return hits

    hits = sum(iter_blocks(seed, draws, work, progress, "unconditional test: sampling"))
    g = int(np.argmax(hits))
    p, ci = monte_carlo_p(int(hits[g]), draws)
    return EngineOutcome(NAMES[test], float(obs), p, "monte-carlo", MC_ALGORITHM, draws=draws,
                         p_interval=ci, seed=seed,
                         warnings=(f"the largest rejection share is at a common proportion of "
                                   f"{pis[g]:.4g}",))
