"""Censored times under a panel of sampling schemes, and both tests on stacks of data sets.

A scheme draws event times from a law through its cumulative hazard (T = H^-1(E / h), E
exponential, h the unit's hazard multiplier: the hazard ratio for the first group at the
effect, and a baseline that differs between strata, so that strata matter), and censoring
times uniform on (0, c), c set so that the share censored under the null is the scheme's
(the observed share, more, none). Under the null every scheme but one keeps the units
exchangeable within strata given the times and censoring, the condition of the exact test;
the scheme with censoring heavier in the first group breaks it.

`scores` gives each data set's weighted log-rank unit scores from its own risk sets (within
strata), the same scores as engine/events.py unit by unit (tests/test_censored_robustness.py
holds them equal), from pairwise comparisons of the times, so that a stack of data sets is
one array computation; `normal_p` the counterpart's p (chi-square U^2 / V, z for one side,
or U' V^- U on k - 1 df) from the same risk sets.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Optional

import numpy as np

from ...engine.core.inverse import generalized_inverse

CALIBRATION = 4000          # baseline times drawn once to set a scheme's censoring bound
NOT_EXCHANGEABLE = ("the censoring depends on the group (heavier in the first), so under "
                    "the null the labels are not exchangeable given the times and censoring")


def _normal_ppf(q):
    from ...lazy import special
    return special.ndtri(q)


# inverse cumulative hazards of the baseline laws (hazard ratios act on the cumulative hazard)
LAWS = {
    "exponential": lambda e: e,
    "falling": lambda e: e ** 2.0,                 # Weibull, shape 1/2: falling hazard
    "rising": lambda e: np.sqrt(e),                # Weibull, shape 2: rising hazard
    "lognormal": lambda e: np.exp(_normal_ppf(-np.expm1(-e))),   # rises, then falls
}


@dataclass(frozen=True)
class Scheme:
    key: str
    name: str
    words: str
    law: str
    censored: float               # share censored under the null (first group: `first`)
    first: Optional[float] = None  # the first group's share when it differs
    tied: bool = False            # times rounded up to a coarse grid
    not_exact: Optional[str] = None

    def inverse(self) -> Callable:
        return LAWS[self.law]


def panel(share: float) -> list:
    """The schemes at the observed share censored."""
    s = float(share)
    heavy = min(0.8, s + 0.3)
    pct = lambda v: f"{v:.0%}"
    return [
        Scheme("exponential", "exponential", f"exponential times (constant hazard), uniform "
               f"censoring, {pct(s)} censored as observed", "exponential", s),
        Scheme("falling-hazard", "falling hazard", f"Weibull times of shape 1/2 (falling "
               f"hazard), {pct(s)} censored", "falling", s),
        Scheme("rising-hazard", "rising hazard", f"Weibull times of shape 2 (rising hazard), "
               f"{pct(s)} censored", "rising", s),
        Scheme("lognormal", "lognormal", f"lognormal times (hazard rises, then falls), "
               f"{pct(s)} censored", "lognormal", s),
        Scheme("heavy-censoring", "heavy censoring", f"exponential times, {pct(heavy)} "
               "censored", "exponential", heavy),
        Scheme("no-censoring", "no censoring", "exponential times, none censored",
               "exponential", 0.0),
        Scheme("tied-times", "tied times", f"exponential times rounded up to a quarter of "
               f"their median (many ties), {pct(s)} censored", "exponential", s, tied=True),
        Scheme("unequal-censoring", "unequal censoring", f"exponential times, "
               f"{pct(min(0.8, 2 * s + 0.1))} censored in the first group, {pct(s / 2)} in "
               "the others", "exponential", s / 2, first=min(0.8, 2 * s + 0.1),
               not_exact=NOT_EXCHANGEABLE),
    ]


def _bound(times: np.ndarray, share: float) -> float:
    """c with P(C < T) = share for C uniform on (0, c): E min(T, c) / c = share."""
    if share <= 0:
        return np.inf
    lo, hi = 1e-9, float(times.max()) * 1e6
    for _ in range(200):
        mid = np.sqrt(lo * hi)
        if np.minimum(times, mid).mean() / mid > share:
            lo = mid
        else:
            hi = mid
    return float(np.sqrt(lo * hi))


@dataclass(frozen=True)
class Drawer:
    """Draws (times, events) for a layout under one scheme at one hazard ratio."""

    scheme: Scheme
    first: np.ndarray             # bool: the unit is in the first group
    baseline: np.ndarray          # each unit's baseline hazard multiplier (its stratum's)
    bounds: np.ndarray            # each unit's censoring bound
    grid: float                   # rounding step of tied times (0: none)

    def draw(self, rng, size: int, ratio: float = 1.0):
        n = len(self.first)
        hazard = self.baseline * np.where(self.first, ratio, 1.0)
        t = self.scheme.inverse()(rng.standard_exponential((size, n)) / hazard)
        if self.grid > 0:
            t = np.ceil(t / self.grid) * self.grid
        c = rng.random((size, n)) * self.bounds
        return np.minimum(t, c), (t <= c).astype(np.int8)


def drawer(scheme: Scheme, first: np.ndarray, strata: Optional[np.ndarray], seed: int) -> Drawer:
    """The scheme on a layout: each stratum's censoring bound set on its own baseline times
    (so that every stratum has the scheme's share censored)."""
    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(99,)))
    e = rng.standard_exponential(CALIBRATION)
    first = np.asarray(first, bool)
    baseline = np.ones(len(first))
    if strata is not None:                   # strata differ: hazard doubles stratum by stratum
        baseline = 2.0 ** (np.asarray(strata, float) - np.mean(np.unique(strata)))
    grid = float(np.median(scheme.inverse()(e))) / 4 if scheme.tied else 0.0
    bounds = np.empty(len(first))
    for h in np.unique(baseline):
        base = scheme.inverse()(e / h)
        if grid > 0:
            base = np.ceil(base / grid) * grid
        here = baseline == h
        bounds[here] = _bound(base, scheme.censored)
        if scheme.first is not None:
            bounds[here & first] = _bound(base, scheme.first)
    return Drawer(scheme, first, baseline, bounds, grid)


# ---------------------------------------------------------------- both tests on stacks

@dataclass(frozen=True)
class RiskSets:
    """Per data set and unit: at risk n and events d at the unit's time (within its
    stratum), the weight there, and who is at risk there (`ge[d, i, j]`: unit j at t_i)."""

    ge: np.ndarray
    n: np.ndarray
    d: np.ndarray
    w: np.ndarray
    events: np.ndarray


def risk_sets(kind: str, times, events, strata: Optional[np.ndarray]) -> RiskSets:
    t = np.asarray(times, float)
    e = np.asarray(events, float)
    ge = t[:, None, :] >= t[:, :, None]
    eq = t[:, None, :] == t[:, :, None]
    if strata is not None:
        same = np.asarray(strata)[:, None] == np.asarray(strata)[None, :]
        ge &= same
        eq &= same
    n = ge.sum(axis=2).astype(float)
    d = (eq * e[:, None, :]).sum(axis=2)
    if kind == "log-rank":
        w = np.ones_like(n)
    elif kind == "gehan":
        w = n.copy()
    elif kind == "tarone-ware":
        w = np.sqrt(n)
    elif kind == "peto-prentice":
        with np.errstate(divide="ignore", invalid="ignore"):
            step = np.where(e > 0, np.log1p(-d / (n + 1)) / np.maximum(d, 1), 0.0)
        w = np.exp(np.einsum("dji,dj->di", ge, step))          # event times t_j <= t_i
    else:
        raise ValueError(f"unknown weight '{kind}'")
    return RiskSets(ge, n, d, w, e)


def scores(rs: RiskSets) -> np.ndarray:
    """a_i = delta_i w(t_i) - sum over event times t_j <= t_i of w_j d_j / n_j."""
    share = rs.events * rs.w / rs.n
    return rs.events * rs.w - np.einsum("dji,dj->di", rs.ge, share)


def normal_p(rs: RiskSets, a: np.ndarray, codes: np.ndarray, alternative: str) -> np.ndarray:
    """The counterpart's p of each data set (1 where it is undefined: no variance)."""
    from ...lazy import stats

    codes = np.asarray(codes)
    k = int(codes.max()) + 1
    onehot = (codes[:, None] == np.arange(k)).astype(float)
    p = np.einsum("dij,jg->dig", rs.ge, onehot) / rs.n[:, :, None]      # shares at risk
    with np.errstate(divide="ignore", invalid="ignore"):
        spread = np.where(rs.n > 1, (rs.n - rs.d) / np.maximum(rs.n - 1, 1), 0.0)
    c = rs.events * rs.w ** 2 * spread                                # per event unit
    u = a @ onehot
    if k == 2:
        v = np.einsum("dj,dj->d", c, p[:, :, 0] * (1 - p[:, :, 0]))
        with np.errstate(divide="ignore", invalid="ignore"):
            z = np.where(v > 0, u[:, 0] / np.sqrt(np.where(v > 0, v, 1.0)), 0.0)
        if alternative == "two-sided":
            out = 2 * stats.norm.sf(np.abs(z))
        else:
            out = stats.norm.sf(z) if alternative == "higher" else stats.norm.cdf(z)
        return np.where(v > 0, out, 1.0)
    cov = (np.einsum("dj,djg->dg", c, p)[:, :, None] * np.eye(k)
           - np.einsum("dj,djg,djh->dgh", c, p, p))
    sub, us = cov[:, :k - 1, :k - 1], u[:, :k - 1]
    inv, rank = generalized_inverse(sub)
    chi2 = np.einsum("dg,dgh,dh->d", us, inv, us)
    out = stats.chi2.sf(chi2, np.maximum(rank, 1))
    return np.where(rank > 0, out, 1.0)
