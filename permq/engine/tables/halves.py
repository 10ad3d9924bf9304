"""Kruskal-Wallis (and the F on a grid) for three or four groups on few categories, as a test
on the groups x categories table with both margins fixed.

A quadratic k-sample statistic is increasing in Q = sum_g S_g^2 (L / n_g), S_g the sum of the
integer scores of group g (doubled mid-ranks for ranks, the values' grid for means; L the lcm
of the sizes). When the response takes few distinct values, S_g = x_g . z depends on group g's
row x_g of the table only, and the assignments behind one table are prod n_g! prod C_j! /
prod x_gj! times a constant: the permutation law of Q is its law over the tables, each with its
(multivariate hypergeometric) probability (Lehmann, Nonparametrics, 1975, ch. 5, the
Kruskal-Wallis test with ties as a test on the contingency table, from memory).

The groups are split into two halves: one or two groups on the left, two on the right. The
left groups' units form a vector u of category counts (|u| = their sizes' total), drawn with
probability prod C(C_j, u_j) / C(N, |u|); given u, each half is one group of the pair drawn
from its units, the other taking the rest, and the two halves are independent. Within a half
the statistic depends on the first group's sum s alone: a s^2 + b (U - s)^2 with U the half's
score total, a convex function of s. So for every u the law of the right half's s is held as a
dense array of cumulative masses, and for every value of the left half the mass of right
halves that complete an extreme table is two tails of it, whose ends are settled by exact
integer comparisons. A vector u whose smallest possible Q is extreme, or whose largest is
not, is settled whole. Q is compared as an exact integer throughout (p = P(Q >= q observed)).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ...errors import PlanError
from ...lazy import gammaln
from ...plan.cost import OPS_PER_SECOND, Candidate, calibration
from ..core.limits import NULL_KEEP_MAX
from ..core.progress import NO_PROGRESS, Progress

HALVES = "table-halves"
WORDS = ("exact law over the groups x categories table, both margins fixed (the groups in two "
         "halves; dense laws of each half's score sum, met in the middle)")
# Offered for this many groups, and when the data take at most this many distinct values.
GROUPS = (3, 4)
MAX_CATEGORIES = 30
# Loading numba and the cached loops in a fresh process (measured: 0.45 s to import numba,
# 0.55-0.75 s to load the loops, on a loaded 2-core machine); the planner counts it once.
LOAD_SECONDS = 0.6
# Binomials up to C(MAX_UNITS, MAX_UNITS / 2) stay finite as floats.
MAX_UNITS = 1000
# Q must stay an exact integer well inside int64.
Q_LIMIT = 2 ** 61


@lru_cache(maxsize=1)
def loops():
    """The compiled loops, or None when numba cannot compile (or is not installed)."""
    try:
        from . import halves_loops

        c = np.array([1, 1, 1], np.int64)
        lf, ch = _tables(3)
        ext, tot = halves_loops.extreme_mass(c, np.array([0, 1, 2], np.int64),
                                             np.array([1, 0], np.int64), np.array([1, 0], np.int64),
                                             np.array([1, 1], np.int64), np.array([1, 1], np.int64),
                                             0, lf, ch)
        assert abs(tot - 1.0) < 1e-12 and abs(ext - 1.0) < 1e-12
        return halves_loops
    except Exception:                      # no numba, or it cannot compile here
        return None


def _tables(N: int):
    """Log factorials 0..N + 1 and the binomials C(a, b), a, b <= N, as floats (finite for
    N <= MAX_UNITS)."""
    lf = gammaln(np.arange(N + 2, dtype=float) + 1.0)
    a = np.arange(N + 1)
    with np.errstate(invalid="ignore"):
        ch = np.exp(lf[a][:, None] - lf[a][None, :] - lf[np.maximum(a[:, None] - a[None, :], 0)])
    return lf, np.where(a[None, :] <= a[:, None], np.round(ch) if N <= 60 else ch, 0.0)


def compilable() -> bool:
    """Whether numba is installed (found, not imported: planning a statement the route does
    not win should not pay for loading it); `loops` compiles on the run."""
    import importlib.util

    return importlib.util.find_spec("numba") is not None


@dataclass(frozen=True)
class Layout:
    """The table as the loops take it: column margins and integer scores (ascending, the
    smallest 0), the group sizes of each half with their weights L / n_g, and observed Q."""

    cols: np.ndarray
    z: np.ndarray
    left: np.ndarray
    aleft: np.ndarray
    right: np.ndarray
    aright: np.ndarray
    q: int
    sizes: tuple


def layout(x, g, z_units) -> Layout | None:
    """The layout for values x in groups g (codes 0..k-1) with integer unit scores z_units (a
    function of the value), or None when the route does not apply."""
    x = np.asarray(x, float)
    g = np.asarray(g, np.int64)
    zu = np.asarray(z_units, np.int64)
    k = int(g.max()) + 1
    cats, first, codes = np.unique(x, return_index=True, return_inverse=True)
    if (k not in GROUPS or not 2 <= cats.size <= MAX_CATEGORIES or cats.size >= x.size
            or x.size > MAX_UNITS):
        return None
    z = zu[first]
    order = np.argsort(z, kind="stable")
    rank = np.empty_like(order)
    rank[order] = np.arange(order.size)
    z = z[order] - z[order][0]
    codes = rank[codes.ravel()]
    t = np.zeros((k, cats.size), np.int64)
    np.add.at(t, (g, codes), 1)
    sizes = t.sum(axis=1)
    lcm = math.lcm(*(int(n) for n in sizes))
    a = np.array([lcm // int(n) for n in sizes], np.int64)
    sums = t @ z
    ztot = int(sums.sum())
    if int(a.sum()) * ztot * ztot >= Q_LIMIT:
        return None
    q = int(sum(int(ai) * int(s) * int(s) for ai, s in zip(a, sums)))
    groups = _halves(sizes)
    left, right = groups[:-2], groups[-2:]
    pad = [0] if len(left) == 1 else []
    return Layout(t.sum(axis=0), z, np.array([sizes[i] for i in left] + pad, np.int64),
                  np.array([a[i] for i in left] + pad, np.int64),
                  np.array([sizes[i] for i in right], np.int64),
                  np.array([a[i] for i in right], np.int64), q, tuple(int(n) for n in sizes))


def _halves(sizes) -> list:
    """The groups in order: the left half first, then the right half's two. Three groups: the
    largest alone on the left (the pair on the right is the smaller). Four: the two largest
    on the left."""
    return [int(i) for i in np.argsort(-np.asarray(sizes), kind="stable")]


def _law_count(cols, n) -> np.ndarray:
    """Number of vectors x <= cols with |x| = m, for m = 0..n (a polynomial product)."""
    out = np.zeros(n + 1)
    out[0] = 1.0
    for c in cols:
        new = np.zeros(n + 1)
        for t in range(min(int(c), n) + 1):
            new[t:] += out[:n + 1 - t]
        out = new
    return out


def _pairs(cols, a: int, b: int) -> float:
    """Number of (x, y) with x + y <= cols, |x| = a, |y| = b: the leaves one half's loop visits
    over all u (a 2-D polynomial product, in floats)."""
    out = np.zeros((a + 1, b + 1))
    out[0, 0] = 1.0
    for c in cols:
        c = int(c)
        new = np.zeros_like(out)
        for i in range(min(c, a) + 1):
            for j in range(min(c - i, b) + 1):
                new[i:, j:] += out[:a + 1 - i, :b + 1 - j]
        out = new
    return float(out[a, b])


def cost(lay: Layout) -> tuple[float, float]:
    """(estimated operations, peak bytes): every u is listed with its K cells, each half's
    draws are visited once per u (K cells each), and each left value reads two tails; the
    null law kept for the result (`null_law`) holds its entries, their sort and their sums,
    about 48 bytes each."""
    K = lay.cols.size
    nl = int(lay.left.sum())
    us = float(_law_count(lay.cols, nl)[nl])
    right = _pairs(lay.cols, int(lay.right[0]), int(lay.right[1]))
    left = 0.0 if lay.left[1] == 0 else _pairs(lay.cols, int(lay.left[0]), int(lay.left[1]))
    zmax = int(lay.z[-1])
    ops = us * (6.0 * K + 40.0) + (right + left) * (3.0 * K + 6.0) + us * 30.0 * zmax
    width = (sum(lay.sizes) + 1) * (zmax + 1)
    memory = us * K * 8.0 + 3 * width * 8.0 + 8.0 * K * max(right, left) / max(us, 1.0) + 1e6
    wide_left = 1 if lay.left[1] == 0 else int(lay.left.min()) * zmax + 1
    # the law's entries (law_bound) are about half of every u times the widest halves' sums
    # (measured 1.96-2.29 times fewer); past NULL_KEEP_MAX the law is not listed at all
    entries = 0.5 * us * wide_left * (int(lay.right.min()) * zmax + 1)
    memory += 48.0 * entries if entries <= NULL_KEEP_MAX else 0.0
    return ops, memory


def candidate(x, g, z_units, arrangements: float = 0.0) -> Candidate | None:
    """The table route's candidate for these data, or None when it does not apply."""
    lay = layout(x, g, z_units)
    if lay is None:
        return None
    k, K = len(lay.sizes), lay.cols.size
    note = f"{k} x {K} table"
    if not compilable():
        return Candidate(HALVES, WORDS, True, math.inf, math.inf, feasible=False,
                         note=note + ": needs the compiled loops (numba)",
                         arrangements=arrangements)
    ops, memory = cost(lay)
    if loops.cache_info().currsize == 0:       # numba and the cached loops load on first use
        ops += LOAD_SECONDS * OPS_PER_SECOND / calibration().get(("k-sample", HALVES), 1.0)
        note += f", first use loads the compiled loops (about {LOAD_SECONDS:g} s)"
    return Candidate(HALVES, WORDS, True, ops, memory, note=note, arrangements=arrangements)


def p_value(x, g, z_units, progress: Progress = NO_PROGRESS) -> float:
    """Exact P(Q >= q observed) over the tables with the data's margins."""
    lay = layout(x, g, z_units)
    if lay is None:
        raise ValueError("the table route needs 3 or 4 groups and few distinct values")
    kernels = loops()
    if kernels is None:
        raise PlanError("the groups x categories table route needs numba's compiled loops, "
                        "which could not be built here", hint="use 'sampled N' or another "
                        "exact algorithm")
    lf, ch = _tables(int(lay.cols.sum()))
    progress.step(0.0, "tables")
    ext, tot = kernels.extreme_mass(lay.cols.astype(np.int64), lay.z.astype(np.int64),
                                    lay.left, lay.aleft, lay.right, lay.aright, int(lay.q), lf, ch)
    progress.step(1.0, "tables")
    if abs(tot - 1.0) > 1e-9:
        raise ArithmeticError("the table law lost probability mass; no exact p-value")
    return float(ext)


def null_law(x, g, z_units, keep: int) -> tuple | None:
    """The whole null law of Q / L (L the lcm of the sizes; Q as in the module's note):
    (sorted values, probabilities), or None when it has more than `keep` entries to add up
    (for pictures; the p-value never needs it)."""
    lay = layout(x, g, z_units)
    kernels = loops()
    if lay is None or kernels is None:
        return None
    cols, z = lay.cols.astype(np.int64), lay.z.astype(np.int64)
    bound = kernels.law_bound(cols, z, lay.left, lay.right)
    if bound > keep:
        return None
    lf, ch = _tables(int(lay.cols.sum()))
    # room for the bound's entries, not for `keep` of them (the bound is often far smaller)
    qs, ws, n = kernels.law_entries(cols, z, lay.left, lay.aleft, lay.right, lay.aright, lf, ch,
                                    max(1, int(bound)))
    if n < 0:
        return None
    support, inverse = np.unique(qs, return_inverse=True)
    probs = np.bincount(inverse.ravel(), weights=ws)
    lcm = math.lcm(*lay.sizes)
    return support / lcm, probs / probs.sum()
