"""Counts of arrangements (multinomial coefficients, distinct arrangements of a multiset) and
exact counting of subsets by the sum of their integer scores (dynamic programming).

Counts are held in float64: they are exact integers while every count stays below 2^53
(the reference set then has fewer than 2^53 members); beyond that the relative error of each
count stays near 1e-16, far below any p-value's meaning. Past 2^960 a table is multiplied by
2^-960, which is exact in binary floating point, so counts of any size (C(1200, 600), 2^1500)
never overflow; callers use ratios of counts, or ask for the exponent (`with_exponent`).
"""
from __future__ import annotations

import math

import numpy as np

from .progress import NO_PROGRESS, Progress

RESCALE_BITS = 960                  # a table past 2^960 is multiplied by 2^-960 (exactly)
_RESCALE_EVERY = 16                 # items between checks: a table at most doubles per item


def multinomial(sizes) -> int:
    """N! / (n_1! ... n_k!): the assignments of N items to groups of these sizes (exact)."""
    total, out = 0, 1
    for n in sizes:
        total += int(n)
        out *= math.comb(total, int(n))
    return out


def distinct_orderings(values) -> int:
    """Distinct orderings of a multiset: n! / prod(t!) over its tied values."""
    _, counts = np.unique(np.asarray(values), return_counts=True)
    return multinomial(counts)


def multinomial_weights(m: int, splits) -> np.ndarray:
    """m! / prod(x_g!) for each split (x_1 .. x_k) of m tied items over k groups (floats);
    past 2^53 all are divided by the largest (a factor common to the block, which cancels in
    every ratio of counts), so that no weight overflows."""
    f = [math.factorial(v) for v in range(int(m) + 1)]
    w = [f[int(m)] // math.prod(f[int(v)] for v in x) for x in np.asarray(splits, dtype=np.int64)]
    top = max(w, default=1)
    if top > 2 ** 53:
        return np.array([v / top for v in w], dtype=float)
    return np.array(w, dtype=float).reshape(len(w))


def rescale(table: np.ndarray) -> int:
    """Multiply `table` in place by 2^-960 when it passed 2^960; the exponent taken out."""
    if table.size and float(table.max()) > 2.0 ** RESCALE_BITS:
        table *= 2.0 ** -RESCALE_BITS
        return RESCALE_BITS
    return 0


def counts_by_size(q, max_size: int, progress: Progress = NO_PROGRESS,
                   with_exponent: bool = False, only_top: bool = False):
    """table[k, s] = number of k-subsets (k <= max_size) of the integer scores q with sum s,
    times 2^-e; with_exponent gives (table, e), else the table (e is 0 below 2^960).

    only_top: the caller reads the row k = max_size alone. The scores are then taken smallest
    first (the sums reached grow slowly) and, once the items left cannot lift a row to
    max_size, that row is no longer updated (its entries are then not counts: read row
    max_size only). The row max_size is the same either way: it does not depend on the order
    of the items."""
    q = np.asarray(q, dtype=np.int64)
    max_size = int(min(max_size, len(q)))
    width = int(np.sort(q)[::-1][:max_size].sum()) + 1
    if only_top:
        q = np.sort(q)
    table = np.zeros((max_size + 1, width))
    table[0, 0] = 1.0
    reach, exponent = 0, 0
    n = len(q)
    for i, v in enumerate(q):
        v = int(v)
        top = min(i + 1, max_size)
        # rows below `low` after this item can no longer reach max_size with the n - 1 - i left
        low = max(1, max_size - (n - 1 - i)) if only_top else 1
        reach = min(reach + v, width - 1)
        # Right-hand sides are read before writing (numpy buffers overlapping operands).
        if v == 0:
            table[low:top + 1, :reach + 1] += table[low - 1:top, :reach + 1]
        else:
            table[low:top + 1, v:reach + 1] += table[low - 1:top, :reach + 1 - v]
        if i % _RESCALE_EVERY == _RESCALE_EVERY - 1:
            exponent += rescale(table)
            progress.step((i + 1) / n, "counting")
    exponent += rescale(table)
    return (table, exponent) if with_exponent else table


def top_row_work(q, max_size: int) -> float:
    """Cells `counts_by_size(q, max_size, only_top=True)` updates: its cost, for the planner."""
    q = np.sort(np.asarray(q, dtype=np.int64))
    n, m = len(q), int(min(max_size, len(q)))
    width = float(q[::-1][:m].sum()) + 1
    i = np.arange(n)
    rows = np.maximum(np.minimum(i + 1, m) - np.maximum(1, m - (n - 1 - i)) + 1, 0)
    reach = np.minimum(np.cumsum(q, dtype=float), width - 1) + 1
    return float((rows * reach).sum())


def counts_all_subsets(q, progress: Progress = NO_PROGRESS) -> np.ndarray:
    """c[s] = number of subsets (of any size) of the integer scores q with sum s (times a
    power of two past 2^960: use ratios)."""
    q = np.asarray(q, dtype=np.int64)
    total = int(q.sum())
    c = np.zeros(total + 1)
    c[0] = 1.0
    reach = 0
    for i, v in enumerate(q):
        v = int(v)
        reach += v
        if v == 0:
            c *= 2.0
        else:
            c[v:reach + 1] += c[:reach + 1 - v]
        if i % _RESCALE_EVERY == _RESCALE_EVERY - 1:
            rescale(c)
            progress.step((i + 1) / len(q), "counting")
    rescale(c)
    return c


def convolve_counts(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Convolution of two count arrays; integer-exact when the counts allow it."""
    if len(a) * len(b) <= 4_000_000:
        return np.convolve(a, b)
    from scipy.signal import fftconvolve

    out = fftconvolve(a, b)
    np.maximum(out, 0.0, out=out)
    total = a.sum() * b.sum()
    if total < 1e12:
        rounded = np.round(out)      # FFT noise is far below 0.5 at these sizes ...
        if rounded.sum() == total:   # ... and the total proves it
            return rounded
    return out


def layer_bytes(rows: int, width: int) -> float:
    return 8.0 * rows * width
