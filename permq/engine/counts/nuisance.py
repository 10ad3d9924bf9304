"""The supremum over a nuisance proportion, for the exact unconditional tests.

An unconditional exact p-value is the largest, over the nuisance parameter, of the
probability of the rejection region R (the outcomes at least as extreme as the observed one):

    p = sup_pi sum_{(a, b) in R} P(X1 = a) P(X2 = b).

Under p1 = p2 = pi the probability of (a, b) depends on pi through a + b only, so the region's
probability is the polynomial sum_s c_s pi^s (1 - pi)^(N - s), c_s the binomial weights of R
on the anti-diagonal a + b = s (`polynomial_sup`). Off the null (a difference or a ratio other
than the one tested) the two proportions move together along a line, and the probability is
the matrix form rowsum((B1 @ R) * B2) over a grid (`matrix_sup`).

Both search a grid even in the arcsine scale (the probabilities are smooth there: each term's
width is about 1 / sqrt(N) in theta = arcsin sqrt(pi)), with about 13 sqrt(N) points, enough
for four points across the narrowest term, then refine the best few grid points with a bounded
Brent search. The grid value never exceeds the supremum, so the search errs, if at all, by a
p-value too small by less than the refinement tolerance (1e-10 in theta).
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

REFINE = 3          # local maxima refined
SURE_BELOW = 0.9    # a grid maximum this far below a threshold leaves the supremum below it
XATOL = 1e-10


def grid_size(n_total: int) -> int:
    return int(max(120, math.ceil(13.0 * math.sqrt(max(n_total, 1)))))


def theta_grid(lo: float, hi: float, size: int) -> np.ndarray:
    """Points even in theta = arcsin(sqrt(pi)) between pi = lo and pi = hi (ends included)."""
    a, b = math.asin(math.sqrt(lo)), math.asin(math.sqrt(hi))
    return np.linspace(a, b, size)


def to_pi(theta):
    return np.sin(theta) ** 2


def log_binomial_rows(n: int, pis: np.ndarray) -> np.ndarray:
    """log P(X = k) of Bin(n, pi) for each pi (rows) and k = 0..n (columns)."""
    from scipy.special import xlog1py, xlogy

    k = np.arange(n + 1, dtype=float)
    p = np.asarray(pis, float)[:, None]
    return _log_comb(n)[None, :] + xlogy(k[None, :], p) + xlog1py(n - k[None, :], -p)


@lru_cache(maxsize=64)
def _log_comb(n: int) -> np.ndarray:
    from .logdp import log_comb_row

    return log_comb_row(n)


def thresholds(region: np.ndarray):
    """('suffix', A) when every column b of the region is {a >= A[b]}, ('prefix', A) when it is
    {a <= A[b]}, else None: the tail form lets a region's probability be had from the first
    sample's tail sums, in (n1 + n2) steps a nuisance value instead of n1 n2."""
    rows = np.arange(region.shape[0])[:, None]
    first = np.where(region.any(axis=0), region.argmax(axis=0), region.shape[0])
    if np.array_equal(region, rows >= first[None, :]):
        return "suffix", first
    last = np.where(region.any(axis=0), region.shape[0] - 1 - region[::-1].argmax(axis=0), -1)
    if np.array_equal(region, rows <= last[None, :]):
        return "prefix", last
    return None


def region_probability(b1: np.ndarray, b2: np.ndarray, region: np.ndarray, form=None):
    """P((X1, X2) in region) for each row pair of b1 (pmf of X1) and b2 (pmf of X2)."""
    if form is None:
        return ((b1 @ region.astype(float)) * b2).sum(axis=1)
    kind, edge = form
    n1 = b1.shape[1] - 1
    if kind == "suffix":
        tails = np.concatenate([np.cumsum(b1[:, ::-1], axis=1)[:, ::-1],
                                np.zeros((b1.shape[0], 1))], axis=1)   # P(X1 >= k), k = 0..n1+1
        return (tails[:, edge] * b2).sum(axis=1)
    heads = np.concatenate([np.zeros((b1.shape[0], 1)), np.cumsum(b1, axis=1)], axis=1)
    return (heads[:, np.minimum(edge, n1) + 1] * b2).sum(axis=1)    # P(X1 <= k), k = -1..n1


def _refine(f, thetas: np.ndarray, values: np.ndarray, lo: float, hi: float):
    """The best value of f over the grid and around its best local maxima."""
    from scipy.optimize import minimize_scalar

    best_i = int(np.argmax(values))
    best_t, best_v = float(thetas[best_i]), float(values[best_i])
    inner = np.flatnonzero((values[1:-1] >= values[:-2]) & (values[1:-1] >= values[2:])) + 1
    ends = [i for i in (0, len(values) - 1) if values[i] >= values[min(max(i, 1), len(values) - 2)]]
    picks = sorted(set(inner.tolist()) | set(ends), key=lambda i: -values[i])[:REFINE]
    for i in picks:
        a = float(thetas[max(i - 1, 0)])
        b = float(thetas[min(i + 1, len(thetas) - 1)])
        if b <= a:
            continue
        r = minimize_scalar(lambda t: -f(t), bounds=(max(a, lo), min(b, hi)), method="bounded",
                            options={"xatol": XATOL})
        if -r.fun > best_v:
            best_t, best_v = float(r.x), float(-r.fun)
    return best_v, best_t


def polynomial_sup(log_c: np.ndarray):
    """(sup over pi in [0, 1] of sum_s c_s pi^s (1 - pi)^(N - s), the pi reaching it);
    log_c holds log c_s for s = 0..N (-inf where the region has no outcome)."""
    from scipy.special import xlog1py, xlogy

    n = log_c.size - 1
    live = np.flatnonzero(log_c > -np.inf)
    if live.size == 0:
        return 0.0, 0.5
    s = live.astype(float)[None, :]
    lc = log_c[live][None, :]

    def values_at(pis):
        pis = np.asarray(pis, float)[:, None]
        terms = lc + xlogy(s, pis) + xlog1py(n - s, -pis)
        top = terms.max(axis=1, keepdims=True)
        safe = np.where(np.isfinite(top), top, 0.0)
        with np.errstate(divide="ignore"):
            total = safe[:, 0] + np.log(np.exp(terms - safe).sum(axis=1))
        return np.exp(np.minimum(0.0, total))

    thetas = theta_grid(0.0, 1.0, grid_size(n))
    values = values_at(to_pi(thetas))
    best, theta = _refine(lambda t: float(values_at([math.sin(t) ** 2])[0]), thetas, values,
                          0.0, math.pi / 2)
    return min(1.0, best), float(to_pi(theta))


def matrix_sup(region: np.ndarray, n1: int, n2: int, line, lo: float, hi: float,
               stop_above=None):
    """sup over the nuisance p2 in [lo, hi] of P((X1, X2) in region) with p1 = line(p2).

    With `stop_above` (a yes-or-no question: is the supremum above it?), the answer comes from
    the grid alone when the grid's best is above it (then so is the supremum) or below
    SURE_BELOW of it: with four grid points to the narrowest term's standard deviation, the
    grid's best is within 1% of the supremum."""
    size = grid_size(n1 + n2)
    thetas = theta_grid(lo, hi, size)
    form = thresholds(region)
    values = _region_values(region, form, n1, n2, line, to_pi(thetas))
    top = float(values.max())
    if stop_above is not None and (top > stop_above or top < SURE_BELOW * stop_above):
        return top, float(to_pi(thetas[int(np.argmax(values))]))

    def value(theta):
        return float(_region_values(region, form, n1, n2, line, np.array([math.sin(theta) ** 2]))[0])

    best, theta = _refine(value, thetas, values, float(thetas[0]), float(thetas[-1]))
    return min(1.0, best), float(to_pi(theta))


def _region_values(region, form, n1, n2, line, p2):
    p1 = np.clip(line(p2), 0.0, 1.0)
    b1 = np.exp(log_binomial_rows(n1, p1))
    b2 = np.exp(log_binomial_rows(n2, p2))
    return region_probability(b1, b2, region, form)
