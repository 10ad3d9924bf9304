"""Groups compared with covariates in the statistic: the randomisation test on covariate-
adjusted residuals (Rosenbaum 2002, "Covariance adjustment in randomized experiments and
observational studies", Stat. Sci. 17:286).

The response is regressed on the covariates alone (with an intercept, never on the groups):
r = My, M the residual maker of [1, Z]. With no effect of the groups, y and Z are what they
would have been under any assignment, so r is fixed and the group labels are exchangeable:
any statistic of (r, labels) has an exact permutation law over the C(N, n1) (or
N! / prod n_g!) assignments. The statistics:

- means, two groups: S = the first group's sum of r, reported as the difference in mean
  residuals S N / (n1 n2) (the residuals sum to zero, so E0 S = 0);
- ranks, two groups: the Wilcoxon rank sum of r (engine/twosample.py on r);
- three or more groups: the permutation F or Kruskal-Wallis H of r (engine/ksample.py on r).

Estimate and interval (means, two groups). Under a constant effect tau of the first group,
y - tau z is fixed (z: the first group's indicator), so the test is inverted over tau. For an
assignment with indicator z', T(tau) - T_obs(tau) = a - tau c with a = (z' - z)'My and
c = (z' - z)'Mz: each assignment counts as extreme on a half-line of tau (either way, as c
may take either sign) or everywhere or nowhere (c = 0). The p-values are step functions of
tau and the confidence set is read off exactly at the breakpoints a / c. T(tau) = E0 T at
tau = z'My / z'Mz, the least-squares (ANCOVA) coefficient, which is the estimate. The set is
an interval in practice; if it were not, its hull is given with a warning.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from math import comb
from typing import Optional

import numpy as np

from ..errors import DataError
from ..plan.cost import Candidate
from ..result import EngineOutcome
from .core import pvalues
from .core.limits import INTERVAL_DRAWS
from .core.enumeration import combinations_chunks
from .core.progress import NO_PROGRESS, Progress
from .montecarlo.draws import random_u32, subset_sums
from .montecarlo.sampling import iter_blocks

NAME = "difference in mean covariate-adjusted residuals"
DESCRIPTIONS = {"enumeration": "complete enumeration",
                "monte-carlo": "Monte Carlo sampling of arrangements"}


@dataclass(frozen=True)
class Reduced:
    """The response and the first group's indicator, each made orthogonal to [1, Z]."""

    residuals: np.ndarray        # My
    indicator: np.ndarray        # Mz (two groups)
    basis: np.ndarray            # Q: orthonormal columns spanning [1, Z]


def reduce(values, groups, covariates) -> Reduced:
    y = np.asarray(values, dtype=float)
    g = np.asarray(groups)
    n = len(y)
    design = np.column_stack([np.ones(n), np.asarray(covariates, dtype=float).reshape(n, -1)])
    u, s, _ = np.linalg.svd(design, full_matrices=False)
    q = u[:, s > 1e-10 * s[0]]
    z = (g == 0).astype(float)
    mz = z - q @ (q.T @ z)
    if float(mz @ mz) <= 1e-12 * float(z @ z):
        raise DataError("the groups are a linear combination of the covariates: there is "
                        "nothing left to compare once they are adjusted for")
    r = y - q @ (q.T @ y)
    spread = float(((y - y.mean()) ** 2).sum())
    if spread == 0:
        raise DataError("the response is constant here: there is nothing to compare")
    if float(r @ r) <= 1e-20 * spread:
        raise DataError("the response is a linear combination of the covariates: nothing is "
                        "left to compare once they are adjusted for")
    return Reduced(r, mz, q)


def pooled(red: Reduced, groups) -> tuple[np.ndarray, np.ndarray, int]:
    """(residuals, indicator residuals) with the first group first, and its size."""
    first = np.asarray(groups) == 0
    order = np.r_[np.flatnonzero(first), np.flatnonzero(~first)]
    return red.residuals[order], red.indicator[order], int(first.sum())


# ---------------------------------------------------------------- two groups, means

def candidates(red: Reduced, groups, draws: int) -> list[Candidate]:
    r, _, n1 = pooled(red, groups)
    N = len(r)
    total = float(comb(N, n1))
    return [
        Candidate("enumeration", DESCRIPTIONS["enumeration"], True,
                  total * (10 + 2.5 * np.log2(max(total, 2.0))), total * 8 * 6,
                  arrangements=total, note=f"{total:.3g} arrangements"),
        Candidate("monte-carlo", DESCRIPTIONS["monte-carlo"], False, draws * N * 24.0,
                  min(draws, 8192) * N * 8 * 4, arrangements=total, note=f"{draws} draws"),
    ]


def run(red: Reduced, groups, alternative: str, algorithm: str, level: float,
        draws: Optional[int] = None, seed: Optional[int] = None,
        progress: Progress = NO_PROGRESS) -> tuple[EngineOutcome, float, tuple, tuple]:
    """(outcome, estimate, interval, warnings) for the difference of two groups."""
    r, rz, n1 = pooled(red, groups)
    N = len(r)
    s_obs, c_obs = float(r[:n1].sum()), float(rz[:n1].sum())
    scale = max(abs(s_obs), float(np.abs(r).max()))
    factor = N / (n1 * (N - n1))
    total = comb(N, n1)
    if algorithm == "enumeration":
        b, a, c = 0, [], []
        done = 0
        for s, cs in subset_sums_listed(r, rz, n1):
            b += pvalues.exceedances(s, s_obs, alternative, 0.0, scale)
            a.append(s - s_obs)
            c.append(cs - c_obs)
            done += len(s)
            progress.step(done / total, "enumerating")
        out = EngineOutcome(NAME, s_obs * factor, pvalues.clip(b / total), "exact",
                            DESCRIPTIONS["enumeration"], arrangements=float(total))
        a, c, identity, count = np.concatenate(a), np.concatenate(c), 0.0, float(total)
    elif algorithm == "monte-carlo":
        def work(size, rng):
            u = random_u32(rng, size, n1)
            s, _ = subset_sums(r, n1, u, sums_only=True)
            cs, _ = subset_sums(rz, n1, u, sums_only=True)
            return pvalues.exceedances(s, s_obs, alternative, 0.0, scale), s - s_obs, cs - c_obs

        b, a, c, used = 0, [], [], 0
        for exceed, da, dc in iter_blocks(seed, draws, work, progress):
            b += exceed
            if used < INTERVAL_DRAWS:
                a.append(da)
                c.append(dc)
                used += len(da)
        p, p_int = pvalues.monte_carlo_p(b, draws)
        out = EngineOutcome(NAME, s_obs * factor, p, "monte-carlo", DESCRIPTIONS["monte-carlo"],
                            arrangements=float(total), draws=draws, p_interval=p_int, seed=seed)
        # the observed assignment counts once more, as the (b + 1) / (m + 1) rule does
        a, c, identity, count = np.concatenate(a), np.concatenate(c), 1.0, float(used + 1)
    else:
        raise ValueError(f"unknown algorithm {algorithm!r}")
    estimate = s_obs / c_obs
    interval, connected = confidence_set(a, c, identity, count, level, alternative,
                                         tol=1e-9 * scale)
    notes = () if connected else ("the confidence set is not an interval; its hull is given",)
    return out, estimate, interval, notes


def subset_sums_listed(u, v, k: int, chunk: int = 1 << 20):
    """(sum of u, sum of v) over every k-subset of the items, in blocks: the items are cut
    in two halves, and each block pairs the j-subsets of one half with the (k - j)-subsets of
    the other, so the sums are outer sums of two short lists."""
    n = len(u)
    half = n // 2
    left, right = np.arange(half), np.arange(half, n)
    for j in range(max(0, k - len(right)), min(k, len(left)) + 1):
        li = _subsets(left, j)
        ri = _subsets(right, k - j)
        lu, lv = u[li].sum(axis=1), v[li].sum(axis=1)
        ru, rv = u[ri].sum(axis=1), v[ri].sum(axis=1)
        rows = max(1, chunk // max(1, len(ru)))
        for start in range(0, len(lu), rows):
            yield ((lu[start:start + rows, None] + ru[None, :]).ravel(),
                   (lv[start:start + rows, None] + rv[None, :]).ravel())


def _subsets(items: np.ndarray, j: int) -> np.ndarray:
    if j == 0:
        return np.zeros((1, 0), dtype=np.int64)
    return np.concatenate(list(combinations_chunks(len(items), j)))[:, :j] + items[0]


def confidence_set(a, c, identity: float, count: float, level: float, alternative: str,
                   tol: float = 0.0) -> tuple[tuple, bool]:
    """The set of tau the test does not reject, from a - tau c of every arrangement: its hull
    (lo, hi) and whether it is one interval. `identity` arrangements more count at every tau
    (the observed one, for Monte Carlo); `count` is the size of the reference set."""
    a, c = np.asarray(a, float), np.asarray(c, float)
    alpha = 1.0 - level
    side = alpha / 2 if alternative == "two-sided" else alpha
    flat = np.abs(c) <= 1e-12 * max(1.0, float(np.abs(c).max(initial=0.0)))
    hi0 = identity + np.count_nonzero(flat & (a >= -tol))
    lo0 = identity + np.count_nonzero(flat & (a <= tol))
    j = a[~flat] / c[~flat]
    down = np.sort(j[c[~flat] < 0])     # counts for 'higher' on tau >= j, for 'lower' on tau <= j
    up = np.sort(j[c[~flat] > 0])       # counts for 'higher' on tau <= j, for 'lower' on tau >= j
    cuts = np.unique(np.r_[down, up])
    if cuts.size == 0:
        points = np.array([0.0])
    else:
        mids = (cuts[:-1] + cuts[1:]) / 2
        points = np.empty(2 * cuts.size + 1)
        points[0], points[-1] = cuts[0] - 1.0, cuts[-1] + 1.0
        points[1::2] = cuts
        points[2:-1:2] = mids

    def at_most(v, t):
        return np.searchsorted(v, t, side="right")

    def at_least(v, t):
        return v.size - np.searchsorted(v, t, side="left")

    p_hi = (hi0 + at_most(down, points) + at_least(up, points)) / count
    p_lo = (lo0 + at_least(down, points) + at_most(up, points)) / count
    keep = np.ones(points.size, dtype=bool)
    if alternative in ("two-sided", "higher"):
        keep &= p_hi > side
    if alternative in ("two-sided", "lower"):
        keep &= p_lo > side
    if not keep.any():
        return (np.nan, np.nan), True
    inside = np.flatnonzero(keep)
    first, last = inside[0], inside[-1]
    lo = -np.inf if first == 0 and cuts.size else float(points[first])
    hi = np.inf if last == points.size - 1 and cuts.size else float(points[last])
    if cuts.size == 0:
        lo, hi = -np.inf, np.inf
    connected = bool(keep[first:last + 1].all())
    return (lo, hi), connected


# ---------------------------------------------------------------- other statistics

def on_residuals(outcome: EngineOutcome, name: str) -> EngineOutcome:
    """An engine's outcome on the residuals, named as such."""
    return replace(outcome, statistic_name=name)
