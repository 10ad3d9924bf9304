"""Meeting in the middle for the table network.

The forward pass carries (state, past sum, mass) pairs. Near the end it is cheaper to turn
round: for every state still carrying pairs at a column boundary, list the distribution of the
rest of the sum over the remaining columns (a backward pass over the same moves, merging equal
sums), then settle each pair at once against its state's list: the extreme mass of a pair is its
mass times the probability that the rest reaches the region. Pairs times rest are never
multiplied out.

Tail sums are taken within each state's list, from its own end (upper tail) or its own start
(lower tail), so a small p-value is not swamped by rounding in the other states' mass.
"""
from __future__ import annotations

import numpy as np

from .network import Layout, entry_limit, gains, log_factorials, merge, step

# Turn round when the lists would hold at most this many sums per pair carried (or this many).
TURN_RATIO = 4.0
TURN_FLOOR = 200_000


def future_lists(layout: Layout, cell, codes, stage: int, quantum, lf, budget=None):
    """Distribution of the rest of S from each of `codes` at `stage` (a column boundary).

    Returns (code, rest, probability) sorted by code, then rest; each code's probabilities
    sum to 1. Returns None when a step would hold more than `budget` sums (None: the
    network's limit for one step).
    """
    budget = entry_limit() if budget is None else budget
    reach = [np.unique(codes)]
    for s in range(stage, layout.stages):
        reach.append(np.unique(step(layout, s, reach[-1]).nxt))
    dtype = np.int64 if quantum is None else float
    lc, lv, lp = np.zeros(1, np.int64), np.zeros(1, dtype), np.ones(1)
    for s in range(layout.stages - 1, stage - 1, -1):
        src = reach[s - stage]
        st = step(layout, s, src, lf)
        rep, x, nxt, logw = st.rep, st.x, st.nxt, st.logw
        start = np.searchsorted(lc, nxt, "left")
        length = np.searchsorted(lc, nxt, "right") - start
        if int(length.sum()) > budget:
            return None
        e = np.repeat(np.arange(rep.size), length)
        idx = start[e] + (np.arange(e.size) - np.repeat(np.cumsum(length) - length, length))
        lc, lv, lp = merge(src[rep[e]], gains(layout, cell, s, st)[e] + lv[idx],
                           np.exp(logw[e]) * lp[idx], quantum)
    return lc, lv, lp


def _segment_sums(p, starts, lengths, reverse: bool) -> np.ndarray:
    """Running sums of p within each block [start, start + length), from its end if reverse."""
    out = np.empty_like(p)
    bins = np.ceil(np.log2(np.maximum(lengths, 1))).astype(int)
    for b in np.unique(bins):
        sel = bins == b
        width = np.arange(2 ** b)
        idx = starts[sel][:, None] + width[None, :]
        valid = width[None, :] < lengths[sel][:, None]
        block = np.where(valid, p[np.minimum(idx, p.size - 1)], 0.0)
        run = np.cumsum(block[:, ::-1], axis=1)[:, ::-1] if reverse else np.cumsum(block, axis=1)
        out[idx[valid]] = run[valid]
    return out


def _entries_before(lc, lv, codes, q, after_equal: bool) -> np.ndarray:
    """For each query (code, q): how many list entries sort before it (by code, then value)."""
    n = lc.size
    kind = np.concatenate([np.ones(n), np.full(codes.size, 2.0 if after_equal else 0.0)])
    order = np.lexsort((kind, np.concatenate([lv, q]), np.concatenate([lc, codes])))
    is_entry = order < n
    before = np.cumsum(is_entry) - is_entry
    out = np.empty(codes.size, np.int64)
    out[order[~is_entry] - n] = before[~is_entry]
    return out


def join(codes, vals, mass, lists, region):
    """(extreme mass, ordinary mass, worst list total error) of pairs against their lists."""
    lc, lv, lp = lists
    first = np.ones(lc.size, bool)
    first[1:] = lc[1:] != lc[:-1]
    bstart = np.nonzero(first)[0]
    blen = np.diff(np.append(bstart, lc.size))
    suffix = _segment_sums(lp, bstart, blen, reverse=True)
    prefix = _segment_sums(lp, bstart, blen, reverse=False)
    start = np.searchsorted(lc, codes, "left")
    end = np.searchsorted(lc, codes, "right")
    lo_thr, hi_thr = region
    up_at = _entries_before(lc, lv, codes, hi_thr - vals, after_equal=False)
    upper = np.where(up_at < end, suffix[np.minimum(up_at, lc.size - 1)], 0.0)
    low_at = _entries_before(lc, lv, codes, lo_thr - vals, after_equal=True) - 1
    lower = np.where(low_at >= start, prefix[np.maximum(low_at, 0)], 0.0)
    total = suffix[start]
    extreme = float(np.dot(mass, upper + lower))
    ordinary = float(np.dot(mass, np.maximum(total - upper - lower, 0.0)))
    return extreme, ordinary, float(np.max(np.abs(suffix[bstart] - 1.0)))


class Turn:
    """Decides, at each column boundary, whether to settle the pairs against future lists."""

    def __init__(self, layout: Layout, cell, region, quantum, bounds):
        self.layout, self.cell, self.region, self.quantum = layout, cell, region, quantum
        self.ways = bounds.ways            # completions of each state
        self.lf = log_factorials(layout)
        self.list_error = 0.0

    def __call__(self, stage, codes, vals, mass):
        j = stage // self.layout.per_column
        if j >= len(self.layout.cols) - 1:
            return None
        budget = min(max(TURN_RATIO * codes.size, TURN_FLOOR), entry_limit())
        at = self.layout.position(stage, np.unique(codes))
        if float(self.ways[stage][at].sum()) > 1e3 * budget:
            return None                       # hopeless: not worth an attempt
        lists = future_lists(self.layout, self.cell, codes, stage, self.quantum, self.lf, budget)
        if lists is None:
            return None
        extreme, ordinary, self.list_error = join(codes, vals, mass, lists, self.region)
        return extreme, ordinary
