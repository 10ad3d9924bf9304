"""Counting, not listing: the exact law of the between-group sum of squares by dynamic
programming over tie blocks (`count_sum_squares`), its cost (`estimate_states`, `dp_ops`), and
the median test's tables by the multivariate hypergeometric law (`count_median_tables`)."""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from functools import reduce
from typing import Optional

import numpy as np

from ...errors import PlanError
from .sums import ROWS
from ..core.counting import multinomial_weights
from ..core.progress import NO_PROGRESS, Progress

def compositions(m: int, caps: np.ndarray) -> np.ndarray:
    """All ways (x_1..x_k) to split m tied items over k groups with x_g <= caps_g."""
    k = len(caps)
    rows = []
    for bars in itertools.combinations(range(m + k - 1), k - 1):
        edges = (-1,) + bars + (m + k - 1,)
        x = [edges[i + 1] - edges[i] - 1 for i in range(k)]
        if all(x[i] <= caps[i] for i in range(k)):
            rows.append(x)
    return np.array(rows, dtype=np.int64).reshape(-1, k)


@dataclass
class _States:
    """Sparse DP states: per group counts and score sums, and the number of ways."""

    counts: np.ndarray   # (M, k) int64
    sums: np.ndarray     # (M, k) int64
    ways: np.ndarray     # (M,) float64


def largest_sums(z: np.ndarray, sizes: np.ndarray) -> Optional[np.ndarray]:
    """Largest score sum each group can reach, or None when the packed state keys or the
    quadratic form would overflow 62 bits (counting is then not offered)."""
    top = np.sort(z)[::-1]
    smax = np.array([int(top[:n].sum()) for n in sizes], dtype=np.int64)
    radix = (sizes + 1) * (smax + 1)
    lcm = math.lcm(*(int(n) for n in sizes))
    q_max = sum(int(m) ** 2 * (lcm // int(n)) for m, n in zip(smax, sizes))
    if math.prod(int(r) for r in radix) >= 2 ** 62 or q_max >= 2 ** 62:
        return None
    return smax


def _merge(st: _States, sizes, smax, classes) -> _States:
    """Sum the ways of equal states (up to permuting groups of equal size)."""
    pair = st.counts * (smax + 1) + st.sums
    for cl in classes:
        pair[:, cl] = np.sort(pair[:, cl], axis=1)
    radix = (sizes + 1) * (smax + 1)
    key = np.zeros(len(pair), dtype=np.int64)
    for g in range(len(sizes)):
        key = key * radix[g] + pair[:, g]
    _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
    ways = np.bincount(inverse.ravel(), weights=st.ways)
    pair = pair[first]
    return _States(pair // (smax + 1), pair % (smax + 1), ways)


def _add_block(st: _States, value: int, m: int, sizes, smax, classes) -> _States:
    xs = compositions(m, sizes)
    weights = multinomial_weights(m, xs)
    done, parts, rows = None, [], 0
    for x, w in zip(xs, weights):
        ok = np.all(st.counts + x <= sizes, axis=1)
        if not ok.any():
            continue
        parts.append(_States(st.counts[ok] + x, st.sums[ok] + x * value, st.ways[ok] * w))
        rows += int(ok.sum())
        if rows > 8 * ROWS:
            done = _merge(_concat(parts + ([done] if done else [])), sizes, smax, classes)
            parts, rows = [], 0
    return _merge(_concat(parts + ([done] if done else [])), sizes, smax, classes)


def _concat(parts: list) -> _States:
    return _States(np.concatenate([p.counts for p in parts]), np.concatenate([p.sums for p in parts]),
                   np.concatenate([p.ways for p in parts]))


def count_sum_squares(z, sizes, progress: Progress = NO_PROGRESS) -> tuple[np.ndarray, np.ndarray]:
    """Exact null distribution of Q = sum_g Z_g^2 * (L / n_g), L = lcm of the sizes.

    z: non-negative integer scores; Z_g: their sum in group g. Returns (Q values as int64,
    numbers of assignments) over all N!/(n_1!...n_k!) assignments.
    """
    z = np.asarray(z, dtype=np.int64)
    sizes = np.asarray(sizes, dtype=np.int64)
    smax = largest_sums(z, sizes)
    if smax is None:
        raise PlanError("the score sums are too large to count exactly")
    classes = [np.flatnonzero(sizes == v) for v in np.unique(sizes) if np.sum(sizes == v) > 1]
    k = len(sizes)
    st = _States(np.zeros((1, k), np.int64), np.zeros((1, k), np.int64), np.ones(1))
    values, mult = np.unique(z, return_counts=True)
    for i, (v, m) in enumerate(zip(values, mult)):
        st = _add_block(st, int(v), int(m), sizes, smax, classes)
        rescale_ways(st.ways)
        progress.step((i + 1) / len(values), "counting assignments")
    lcm = int(np.lcm.reduce(sizes))
    q = (st.sums ** 2 * (lcm // sizes)).sum(axis=1)
    support, inverse = np.unique(q, return_inverse=True)
    return support, np.bincount(inverse.ravel(), weights=st.ways)


def rescale_ways(ways: np.ndarray) -> None:
    """Past 2^800, the ways times a power of two (exact) bringing the largest near 1."""
    top = float(ways.max(initial=0.0))
    if top > 2.0 ** 800:
        ways *= 2.0 ** -math.frexp(top)[1]


def estimate_states(z, sizes) -> float:
    """Rough peak number of counting states (an over-estimate as a rule), before running."""
    z = np.sort(np.asarray(z, dtype=np.int64))
    sizes = np.asarray(sizes, dtype=np.int64)
    N = int(sizes.sum())
    sym = math.prod(math.factorial(int(np.sum(sizes == v))) for v in np.unique(sizes))
    order = np.argsort(sizes)
    best = 1.0
    for i in sorted({max(1, N // 3), N // 2, (2 * N) // 3, (3 * N) // 4}):
        prefix = z[:i]
        _, mult = np.unique(prefix, return_counts=True)
        distinct = reduce(np.convolve, (np.ones(m + 1) for m in mult), np.array([1.0]))
        total = np.array([1.0])
        for j, g in enumerate(order):
            f = np.ones(int(sizes[g]) + 1)
            if j < len(order) - 1:
                top = min(int(sizes[g]), i) + 1
                low = np.concatenate([[0], np.cumsum(prefix)])[:top]          # c smallest
                high = np.concatenate([[0], np.cumsum(prefix[::-1])])[:top]   # c largest
                f[:top] = np.minimum(high - low + 1, distinct[:top])
            f[min(int(sizes[g]), i) + 1:] = 0
            total = np.convolve(total, f)
        if i < len(total):
            best = max(best, float(total[i]))
    return best / sym


def dp_ops(z, sizes) -> tuple[float, float, float]:
    """(estimated peak states, ops, peak bytes) of `count_sum_squares`."""
    sizes = np.asarray(sizes)
    k = len(sizes)
    states = estimate_states(z, sizes)
    _, mult = np.unique(np.asarray(z), return_counts=True)
    branches = sum(math.comb(int(m) + k - 1, k - 1) for m in mult)
    return states, states * branches * (k + 4) * 2.0, states * k * (16.0 * k + 40.0) * 2.0


# ----------------------------------------------------------------------------- median counting

def count_median_tables(sizes, above: int) -> tuple[np.ndarray, np.ndarray]:
    """Exact law of Q = sum_g a_g^2 * (L / n_g) over the tables of counts a_g above the median.

    A table has prod_g C(n_g, a_g) of the C(N, A) equally likely choices of which items lie
    above (multivariate hypergeometric). The groups are taken one at a time, the state being
    (items above placed so far, partial Q) with its number of ways; the last group's count is
    what is left (A less the rest), so it adds no branches. Returns (Q values, ways) with the
    ways in float64: exact integers below 2^53; a group's weights C(n, a) are divided by their
    largest when that passes 2^53 (a common factor, which cancels), and the ways are rescaled
    by powers of two, so no size overflows. Ratios of ways are the probabilities.
    """
    sizes = [int(n) for n in sizes]
    lcm = math.lcm(*sizes)
    used = np.zeros(1, dtype=np.int64)
    q = np.zeros(1, dtype=np.int64)
    ways = np.ones(1)
    for n in sizes[:-1]:
        a = np.arange(0, min(n, above) + 1, dtype=np.int64)
        w = _binomial_weights(n, len(a))
        new_used = (used[:, None] + a[None, :]).ravel()
        keep = new_used <= above
        new_q = (q[:, None] + (a * a * (lcm // n))[None, :]).ravel()[keep]
        new_w = (ways[:, None] * w[None, :]).ravel()[keep]
        new_used = new_used[keep]
        key = new_used * (int(new_q.max(initial=0)) + 1) + new_q
        uniq, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        used, q = new_used[first], new_q[first]
        ways = np.bincount(inverse.ravel(), weights=new_w)
        rescale_ways(ways)
    last = sizes[-1]
    rest = above - used
    ok = (rest >= 0) & (rest <= last)
    w_last = _binomial_weights(last, last + 1)
    q = q[ok] + rest[ok] ** 2 * (lcm // last)
    ways = ways[ok] * w_last[rest[ok]]
    support, inverse = np.unique(q, return_inverse=True)
    return support, np.bincount(inverse.ravel(), weights=ways)


def _binomial_weights(n: int, count: int) -> np.ndarray:
    """C(n, a) for a = 0 .. count-1 as floats; divided by the largest past 2^53."""
    w = [math.comb(n, a) for a in range(count)]
    top = max(w)
    return np.array([v / top for v in w] if top > 2 ** 53 else w, dtype=float)


def median_counting_cost(sizes, above: int) -> tuple[float, float]:
    """(ops, bytes) of `count_median_tables`: the states before each group times its
    branches (states bounded by the items above placed times the partial Q values)."""
    sizes = [int(n) for n in sizes]
    lcm = math.lcm(*sizes)
    states, ops, peak, q_top = 1.0, 0.0, 1.0, 0
    for n in sizes[:-1]:
        branches = min(n, above) + 1
        ops += states * branches * 12.0
        peak = max(peak, states * branches)
        q_top += n * n * (lcm // n)
        states = min(states * branches, (above + 1.0) * (q_top + 1.0))
    return ops + states * 10.0, peak * 8.0 * 8


# ----------------------------------------------------------------------------- families
