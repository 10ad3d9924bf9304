"""Counts of arrangements (multinomial coefficients, distinct arrangements of a multiset) and
exact counting of subsets by the sum of their integer scores (dynamic programming).

Counts are held in float64: they are exact integers while every count stays below 2^53
(the reference set then has fewer than 2^53 members); beyond that the relative error of each
count stays near 1e-16, far below any p-value's meaning.
"""
from __future__ import annotations

import math

import numpy as np

from .progress import NO_PROGRESS, Progress


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
    """m! / prod(x_g!) for each split (x_1 .. x_k) of m tied items over k groups (floats)."""
    return np.array([float(multinomial(x)) for x in np.asarray(splits, dtype=np.int64)],
                    dtype=float).reshape(len(splits))


def counts_by_size(q, max_size: int, progress: Progress = NO_PROGRESS) -> np.ndarray:
    """table[k, s] = number of k-subsets (k <= max_size) of the integer scores q with sum s."""
    q = np.asarray(q, dtype=np.int64)
    max_size = int(min(max_size, len(q)))
    width = int(np.sort(q)[::-1][:max_size].sum()) + 1
    table = np.zeros((max_size + 1, width))
    table[0, 0] = 1.0
    reach = 0
    n = len(q)
    for i, v in enumerate(q):
        v = int(v)
        top = min(i + 1, max_size)
        reach = min(reach + v, width - 1)
        # Right-hand sides are read before writing (numpy buffers overlapping operands).
        if v == 0:
            table[1:top + 1, :reach + 1] += table[0:top, :reach + 1]
        else:
            table[1:top + 1, v:reach + 1] += table[0:top, :reach + 1 - v]
        if i % 8 == 7:
            progress.step((i + 1) / n, "counting")
    return table


def counts_all_subsets(q, progress: Progress = NO_PROGRESS) -> np.ndarray:
    """c[s] = number of subsets (of any size) of the integer scores q with sum s."""
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
        if i % 16 == 15:
            progress.step((i + 1) / len(q), "counting")
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
