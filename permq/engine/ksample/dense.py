"""Three groups by counting on dense tables of score sums (Kruskal-Wallis and the F on a grid).

The items are taken tie block by tie block in increasing order of their integer score z. After
the first i items, a state is the number of items placed in groups 1 and 2, (c1, c2) (group 3
holds the rest), with their score sums (S1, S2); S3 is the running total less both. For each
(c1, c2) the numbers of ways are held in one dense two-dimensional table over (S1, S2),
indexed from the smallest sums c1 and c2 items could have (the c smallest scores so far) to
the largest; placing x_g items of a block with score v in group g moves a table by fixed
offsets, so each step is a few shifted additions of whole tables, with no sorting or merging.
At the end the one table for the observed sizes holds the law of (S1, S2), hence of
Q = sum_g S_g^2 L / n_g (L = lcm of the sizes), the exact statistic of `count_sum_squares`.

Ways are float64: exact integers below 2^53; past 2^800 every table is multiplied by one
power of two (exact), so only ratios are used. Blocks whose multinomial weights pass 2^53 use
them divided by their largest (a common factor of the block, which cancels).
"""
from __future__ import annotations

import math

import numpy as np

from ..core.progress import NO_PROGRESS, Progress

RESCALE_AT = 800
MAX_CELLS = 2e9              # past this many cells in one step the tables are not even priced

def applies(sizes) -> bool:
    return len(sizes) == 3


def _blocks(z):
    values, mult = np.unique(np.asarray(z, dtype=np.int64), return_counts=True)
    return [int(v) for v in values], [int(m) for m in mult]


def _prefix(z) -> np.ndarray:
    return np.concatenate([[0], np.cumsum(np.sort(np.asarray(z, dtype=np.int64)))])


def _width(P, c: int, i: int) -> int:
    """How many sums c of the first i items can take: largest less smallest, plus one."""
    return int(P[i] - P[i - c] - P[c]) + 1


def _splits(m: int, caps) -> list:
    """(x1, x2, x3, weight): ways to put m tied items into the three groups within caps."""
    out = []
    for x1 in range(min(m, caps[0]) + 1):
        for x2 in range(min(m - x1, caps[1]) + 1):
            x3 = m - x1 - x2
            if x3 <= caps[2]:
                out.append((x1, x2, x3, math.comb(m, x1) * math.comb(m - x1, x2)))
    top = max(w for *_, w in out)
    if top > 2 ** 53:                   # a factor common to the block: divide it out exactly
        return [(a, b, c, w / top) for a, b, c, w in out]
    return [(a, b, c, float(w)) for a, b, c, w in out]


def work(z, sizes) -> tuple[float, float]:
    """(estimated operations, peak cells held): the cost of `count_three`, before running
    it. Each step's tables are summed over the feasible count pairs (vectorised); inf, inf
    when even the middle step would hold more than MAX_CELLS. The operations: the cells
    added, and the interpreter's work per table visited and per slice added (each a few
    microseconds; least squares over 60 designs of three groups, 2-13 distinct values, 3-34
    a group: every time within 1.25x)."""
    sizes = [int(n) for n in sizes]
    P = _prefix(z)
    N = len(P) - 1
    if _held_bound(P, sizes, N // 2) > 16 * MAX_CELLS or _held(P, sizes, N // 2) > MAX_CELLS:
        return math.inf, math.inf
    _, mult = _blocks(z)
    i, ops, peak = 0, 0.0, 1.0
    for m in mult:
        cells, slices, tables = _step_work(P, sizes, i, m)
        ops += 0.32 * cells + 575.0 * slices + 1550.0 * tables
        i += m
        peak = max(peak, _held(P, sizes, i))
    return ops, peak


def _held_bound(P, sizes, i: int) -> float:
    """An upper bound on `_held` in O(n): the product of the two sums of widths."""
    w = [(P[i] - P[i - c] - P[c] + 1).astype(float).sum()
         for c in (np.arange(min(sizes[0], i) + 1), np.arange(min(sizes[1], i) + 1))]
    return float(w[0] * w[1])


def _held(P, sizes, i: int) -> float:
    """Cells of the tables after i items: the sum over feasible (c1, c2) of the two widths."""
    w1, w2, ok, *_ = _pairs(P, sizes, i)
    return float((w1 * w2 * ok).sum())


def _pairs(P, sizes, i: int):
    """The widths of the feasible count pairs (c1, c2) after i items, and the counts."""
    c1 = np.arange(min(sizes[0], i) + 1)[:, None]
    c2 = np.arange(min(sizes[1], i) + 1)[None, :]
    w1 = (P[i] - P[i - c1] - P[c1] + 1).astype(float)
    w2 = (P[i] - P[i - c2] - P[c2] + 1).astype(float)
    c3 = i - c1 - c2
    return w1, w2, (c3 >= 0) & (c3 <= sizes[2]), c1, c2, c3


def _step_work(P, sizes, i: int, m: int) -> tuple[float, float, float]:
    """What the step placing a block of m tied items after i items does: (cells added,
    slices added, tables visited); a slice is one table's cells moved by one way to split
    the block."""
    w1, w2, ok, c1, c2, c3 = _pairs(P, sizes, i)
    splits = np.zeros(ok.shape)
    for x1 in range(m + 1):                      # x2 from max(0, m - x1 - room3) to room2
        lo = np.maximum(0, m - x1 - (sizes[2] - c3))
        hi = np.minimum(m - x1, sizes[1] - c2)
        splits += np.where(x1 <= sizes[0] - c1, np.maximum(0, hi - lo + 1), 0)
    splits *= ok
    return float((w1 * w2 * splits).sum()), float(splits.sum()), float(ok.sum())


def count_three(z, sizes, progress: Progress = NO_PROGRESS) -> tuple[np.ndarray, np.ndarray]:
    """Exact law of Q = sum_g Z_g^2 * (L / n_g) for three groups: (Q values, ways)."""
    sizes = [int(n) for n in sizes]
    z = np.asarray(z, dtype=np.int64)
    P = _prefix(z)
    values, mult = _blocks(z)
    tables = {(0, 0): np.ones((1, 1))}
    i = 0
    for step, (v, m) in enumerate(zip(values, mult)):
        new: dict = {}
        for (c1, c2), old in tables.items():
            c3 = i - c1 - c2
            for x1, x2, x3, w in _splits(m, (sizes[0] - c1, sizes[1] - c2, sizes[2] - c3)):
                d1, d2 = c1 + x1, c2 + x2
                target = new.get((d1, d2))
                if target is None:
                    target = new[(d1, d2)] = np.zeros((_width(P, d1, i + m),
                                                       _width(P, d2, i + m)))
                o1 = int(P[c1] + x1 * v - P[d1])         # new index = old index + offset
                o2 = int(P[c2] + x2 * v - P[d2])
                h, k = old.shape
                target[o1:o1 + h, o2:o2 + k] += old * w if w != 1.0 else old
        tables, i = new, i + m
        _rescale(tables)
        progress.step((step + 1) / len(values), "counting assignments")
    ways = tables[(sizes[0], sizes[1])]
    j1, j2 = np.nonzero(ways)
    s1 = j1.astype(np.int64) + int(P[sizes[0]])
    s2 = j2.astype(np.int64) + int(P[sizes[1]])
    s3 = int(P[-1]) - s1 - s2
    lcm = math.lcm(*sizes)
    q = s1 ** 2 * (lcm // sizes[0]) + s2 ** 2 * (lcm // sizes[1]) + s3 ** 2 * (lcm // sizes[2])
    support, inverse = np.unique(q, return_inverse=True)
    return support, np.bincount(inverse.ravel(), weights=ways[j1, j2])


def _rescale(tables: dict) -> None:
    """Past 2^800, every table times the same power of two (exact), bringing the largest
    near 1: a block multiplies the ways by at most 2^53 (its weights) times its splits."""
    top = max(float(t.max()) for t in tables.values())
    if top > 2.0 ** RESCALE_AT:
        shift = math.frexp(top)[1]
        for t in tables.values():
            t *= 2.0 ** -shift
