"""Kendall's tau without ties, exactly: permutations counted by their number of inversions.

With x and y free of ties, the reference set is the n! orders of y against x, and Kendall's
S = K - 2D with K = n(n-1)/2 pairs and D the discordant pairs, i.e. the inversions of the
permutation. The number I_n(k) of permutations of n items with k inversions (the Mahonian
numbers) obeys I_m(k) = sum_{i<m} I_{m-1}(k - i), a window sum read off as a difference of
cumulative sums: one cumulative sum and one difference over the counts for each m (Kendall,
Rank Correlation Methods, 1970, ch. 5, the recurrence for the frequencies of S; common
practice).

Only the counts up to the tail the p-value needs are formed (the law is symmetric about
K/2, so the smaller tail is always enough), as float64 times a power of two: exact integers
while they stay below 2^53 (n <= 18), otherwise with a relative error near 1e-16 a step; a
table past 2^900 is multiplied by 2^-900, which is exact, so no size overflows. The whole law
(for pictures) is formed when it costs little more than the tail.
"""
from __future__ import annotations

import math

import numpy as np

from ...result import EngineOutcome
from ..core import pvalues
from ..core.progress import NO_PROGRESS, Progress

WORDS = "dynamic programming on inversion counts"
RESCALE_BITS = 900
LAW_EXTRA_OPS = 3e7          # form the whole law when it costs at most this much beyond the tail


def counts_up_to(n: int, top: int, progress: Progress = NO_PROGRESS) -> tuple[np.ndarray, int]:
    """(c, e): c[k] * 2^e = I_n(k) for k = 0 .. top (top <= n(n-1)/2)."""
    top = max(0, min(int(top), n * (n - 1) // 2))
    c = np.zeros(top + 1)
    c[0] = 1.0
    exponent, bound = 0, 0.0
    for m in range(2, n + 1):
        reach = min(top, m * (m - 1) // 2)       # counts past this are zero
        seg = c[:reach + 1]
        np.cumsum(seg, out=seg)
        if reach >= m:
            seg[m:] -= seg[:reach + 1 - m]       # numpy reads the overlapping right side first
        bound += math.log2(m)                    # the counts grow at most m-fold a step
        if bound > RESCALE_BITS:
            big = float(c[:reach + 1].max())
            shift = max(0, math.frexp(big)[1] - 64)
            c[:reach + 1] *= 2.0 ** -shift
            exponent += shift
            bound = math.log2(max(big, 1.0)) - shift
        if m % 64 == 0:
            progress.step(m / n, "counting inversions")
    np.maximum(c, 0.0, out=c)                    # rounding can leave -0.0 in empty places
    return c, exponent


def share(total_counts: float, exponent: int, n: int) -> float:
    """total_counts * 2^exponent / n!, without overflow or avoidable underflow."""
    if total_counts <= 0:
        return 0.0
    if n <= 170:
        return math.ldexp(total_counts, exponent) / math.factorial(n)
    log_p = math.log(total_counts) + exponent * math.log(2.0) - math.lgamma(n + 1.0)
    return math.exp(log_p) if log_p > -745.0 else 0.0


def tail_plan(n: int, d: int, alternative: str) -> tuple[int, bool, float]:
    """(c, complement, factor): p = factor * P(k <= c), or 1 - that when complement; the
    smaller tail always (c <= K/2; c = -1 is the empty tail)."""
    K = n * (n - 1) // 2
    if alternative == "higher":          # positive association: few inversions, P(k <= d)
        return (d, False, 1.0) if 2 * d <= K else (K - d - 1, True, 1.0)
    if alternative == "lower":           # P(k >= d) = P(k <= K - d)
        return (K - d, False, 1.0) if 2 * (K - d) <= K else (d - 1, True, 1.0)
    c = min(d, K - d)
    return (c, False, 2.0) if 2 * c < K else (-1, True, 1.0)     # at the centre: p = 1


def law_wanted(n: int, c: int) -> bool:
    K = n * (n - 1) // 2
    return n * (K // 2 - c) <= LAW_EXTRA_OPS


def ops_for(n: int, top: int) -> float:
    """Array passes of `counts_up_to` (four a step over the counts in reach)."""
    m = np.arange(2, n + 1, dtype=float)
    return float(np.minimum(m * (m - 1) / 2, top).sum() + n) * 4.0


def cost(n: int, d: int, alternative: str) -> tuple[float, float]:
    """(ops, bytes) for the p-value, and the law when it is formed too."""
    K = n * (n - 1) // 2
    c, _, _ = tail_plan(n, d, alternative)
    top = K // 2 if law_wanted(n, c) else max(c, 0)
    law_bytes = (K + 1) * 8.0 * 4 if top == K // 2 else 0.0
    return ops_for(n, top), (top + 1) * 8.0 * 3 + law_bytes


def run(name: str, coefficient, s_obs: int, n: int, alternative: str,
        progress: Progress = NO_PROGRESS) -> EngineOutcome:
    """The exact p-value of Kendall's S = s_obs (no ties), with the law when it is cheap."""
    K = n * (n - 1) // 2
    d = (K - int(s_obs)) // 2                      # discordant pairs = inversions
    c, complement, factor = tail_plan(n, d, alternative)
    with_law = law_wanted(n, c)
    counts, e = counts_up_to(n, K // 2 if with_law else max(c, 0), progress)
    p = factor * share(float(counts[:c + 1].sum()), e, n) if c >= 0 else 0.0
    if complement:
        p = 1.0 - p
    support = probs = None
    if with_law:
        half = counts[:K // 2 + 1]
        full = np.concatenate([half, half[:K + 1 - half.size][::-1]])
        probs = full / full.sum()
        tau = 1.0 - 4.0 * np.arange(K + 1) / (n * (n - 1))
        support, probs = tau[::-1], probs[::-1]
    return EngineOutcome(name, float(coefficient), pvalues.clip(p), "exact", WORDS,
                         arrangements=math.factorial(n), null_support=support,
                         null_probs=probs)
