"""Counting in logarithms: convolutions and hypergeometric weights that never overflow.

The exact conditional laws of this package are sums over strata (or over groups) of counts
that reach astronomical sizes (C(1000, 300) ~ 10^263) and whose tails, which the intervals
tilt into view, are far below the largest term. Working with log c(t) and log-sum-exp keeps
every term, however small, to full relative precision.
"""
from __future__ import annotations

import numpy as np

NEG = -np.inf


def log_comb_row(n: int) -> np.ndarray:
    """log C(n, k) for k = 0 .. n."""
    from scipy.special import gammaln

    k = np.arange(n + 1, dtype=float)
    return gammaln(n + 1.0) - gammaln(k + 1.0) - gammaln(n - k + 1.0)


def log_hypergeometric(r1: int, r2: int, c1: int):
    """(lowest k, log weights) of the top-left count of a 2 x 2 table with row totals r1, r2
    and first column total c1: log C(r1, k) + log C(r2, c1 - k), k = lowest .. highest."""
    lo, hi = max(0, c1 - r2), min(r1, c1)
    ks = np.arange(lo, hi + 1)
    a, b = log_comb_row(r1), log_comb_row(r2)
    return lo, a[ks] + b[c1 - ks]


def log_convolve(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """log of the convolution of exp(a) and exp(b), term by term in log-sum-exp."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    if a.size < b.size:
        a, b = b, a
    out = np.full(a.size + b.size - 1, NEG)
    for x, w in enumerate(b):
        if w == NEG:
            continue
        seg = out[x:x + a.size]
        np.logaddexp(seg, a + w, out=seg)
    return out


def trim(offset: int, logw: np.ndarray):
    """Drop impossible values (log weight -inf) at both ends: (new offset, weights)."""
    ok = np.flatnonzero(logw > NEG)
    if ok.size == 0:
        raise ValueError("no value of the statistic is possible")
    return offset + int(ok[0]), logw[ok[0]:ok[-1] + 1]


def log_events_by_score(sizes, scores, events: int, progress=None):
    """The law of the score sum of `events` units drawn without replacement from groups of
    `sizes[j]` units with integer scores `scores[j]` >= 0: (lowest sum, log c(t)), c(t) the
    number of such choices with score sum t (each group contributing C(n_j, d) ways to give
    d of its units). Rows (events so far) that can no longer reach `events` are left out."""
    sizes = [int(v) for v in sizes]
    scores = [int(v) for v in scores]
    m, total = int(events), sum(sizes)
    if not 0 <= m <= total:
        raise ValueError("more events than units")
    if min(scores, default=0) < 0:
        raise ValueError("scores must be non-negative integers")
    units = sorted((q for q, n in zip(scores, sizes) for _ in range(min(n, m))), reverse=True)
    width = sum(units[:m]) + 1
    table = np.full((m + 1, width), NEG)
    table[0, 0] = 0.0
    done, reach = 0, 0
    for j, (n, q) in enumerate(zip(sizes, scores)):
        if n == 0:
            continue
        lc = log_comb_row(n)
        grown = table.copy()                 # d = 0: the rows as they were
        new_reach = min(reach + q * min(n, m), width - 1)
        for d in range(1, min(n, m) + 1):
            shift = q * d
            cols = min(reach + 1, width - shift)
            if cols <= 0:
                break
            seg = grown[d:, shift:shift + cols]
            np.logaddexp(seg, table[:m + 1 - d, :cols] + lc[d], out=seg)
        done += n
        need = m - (total - done)            # rows below this cannot reach m any more
        if need > 0:
            grown[:need] = NEG
        table, reach = grown, new_reach
        if progress is not None:
            progress.step(done / total, "counting")
    return trim(0, table[m])
