"""How many states the table network meets, counted before it is built.

Before cell (i, j) the state is the vector r' of row margins still to fill: rows above i have
given column j their cells, the others not yet. With `top` = sum of r' over rows < i and `bot`
= sum over rows >= i, A_j = sum of C_k for k >= j and R_top = sum of R_k for k < i, such a vector
(0 <= r' <= R) occurs exactly when

    A_{j+1} <= top + bot <= A_j     (column j has received between nothing and all it needs)
    top <= A_{j+1}                  (the rows from i down can still give column j the rest)
    bot >= A_j - R_top              (the rows above i could have given what column j has)

(any vector of remaining margins with the right total is reachable and completable: a table
with given margins exists whenever the totals agree). The number of vectors over a set of rows
with a given sum is a coefficient of prod (1 + z + ... + z^R_k), so the count per stage is a
sum of products of two such coefficients, O(N) per stage with cumulative sums.
"""
from __future__ import annotations

import numpy as np


def _times_run(poly: np.ndarray, width: int) -> np.ndarray:
    """poly * (1 + z + ... + z^width), truncated to the same length."""
    c = np.cumsum(poly)
    out = c.copy()
    out[width + 1:] -= c[:-width - 1]
    return out


def state_counts(rows, cols, fold: bool = True) -> np.ndarray:
    """Number of network states before each stage (cells column by column; the last entry is
    the end state), for row margins `rows` and columns processed in the given order. With
    `fold` (as the network is laid out) the last row's forced cell has no stage of its own."""
    rows = [int(v) for v in rows]
    cols = [int(v) for v in cols]
    r, n = len(rows), int(sum(rows))
    with np.errstate(over="ignore", invalid="ignore"):
        prefix = [np.zeros(n + 1)]
        prefix[0][0] = 1.0
        for v in rows:
            prefix.append(_times_run(prefix[-1], v))
        suffix = [None] * (r + 1)
        suffix[r] = np.zeros(n + 1)
        suffix[r][0] = 1.0
        for k in range(r - 1, -1, -1):
            suffix[k] = _times_run(suffix[k + 1], rows[k])
        cum = [np.concatenate([[0.0], np.cumsum(s)]) for s in suffix]   # cum[k][m] = sum s[:m]
        remaining = np.concatenate([np.cumsum(cols[::-1])[::-1], [0]])  # A_j
        per = r - 1 if fold else r
        out = np.empty(per * len(cols) + 1)
        r_top = np.concatenate([[0], np.cumsum(rows)])
        for j in range(len(cols)):
            a_j, a_next = int(remaining[j]), int(remaining[j + 1])
            for i in range(per):
                t = np.arange(min(int(r_top[i]), a_next) + 1)
                lo = np.maximum.reduce([a_next - t, np.full(t.size, a_j - int(r_top[i])),
                                        np.zeros(t.size, int)])
                hi = np.minimum(a_j - t, n)
                ok = hi >= lo
                ways = np.where(ok, cum[i][np.clip(hi + 1, 0, n + 1)] - cum[i][np.clip(lo, 0, n + 1)],
                                0.0)
                out[j * per + i] = float(np.dot(prefix[i][t], ways))
        out[-1] = 1.0
    return np.rint(np.nan_to_num(out, nan=np.inf))


def processing_order(table: np.ndarray, keep_order: bool = False):
    """(orientation, column order) of the network for this table: transpose when that holds
    fewer states, and take the columns from the largest margin to the smallest (the fewest
    states at the middle boundaries), unless `keep_order` (statistics that need the columns in
    their own order). Returns (transpose?, column order, states per stage)."""
    t = np.asarray(table)
    best = None
    for flip in (False, True):
        m = t.T if flip else t
        rows, cols = m.sum(axis=1), m.sum(axis=0)
        order = np.arange(cols.size) if keep_order else np.argsort(-cols, kind="stable")
        counts = state_counts(rows, cols[order])
        total = float(counts.sum())
        if best is None or total < best[0]:
            best = (total, flip, order, counts)
    return best[1], best[2], best[3]
