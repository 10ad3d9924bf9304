"""The network algorithm for r x c tables with both margins fixed.

A table is built one cell at a time, column by column, top row to bottom row. The state
between cells is the vector of row margins still to fill; it is coded as one integer in mixed
radix (digit i runs over 0..R_i). Every state is reachable and completable, so the network is
dense over those codes. A move places x in cell (i, j) with the conditional (hypergeometric)
probability

    comb(r_i, x) comb(below, left - x) / comb(r_i + below, left),

where `left` is what column j still needs and `below` is what the rows under i can still take.
The moves out of a state sum to 1, and the product along a path is the table's probability
prod R_i! prod C_j! / (N! prod n_ij!), so no mass is lost or invented on the way.

The statistic is additive over cells, S = sum g_ij(n_ij). Each state carries a list of
(partial sum, probability mass) pairs; pairs with equal partial sums are merged. Before each
move the exact range of the remaining sum (the longest and shortest path to the end, found by a
backward pass) settles whole pairs: if every completion is extreme the mass joins the p-value,
if none is, the mass is set aside; only undecided pairs go on.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from ...lazy import gammaln

from ..core.progress import NO_PROGRESS, Progress

# Most (state, partial sum) pairs one step may create; beyond it the exact network gives way.
MAX_ENTRIES = 40_000_000


class NetworkTooLarge(MemoryError):
    """The exact network would need more memory than it is allowed."""


@dataclass(frozen=True)
class Layout:
    """Shape of the network: margins, mixed-radix coding and per-code digit sums."""

    rows: tuple            # row margins R_i (all > 0)
    cols: tuple            # column margins C_j (all > 0), in processing order
    radix: np.ndarray      # radix[i] = prod_{k < i} (R_k + 1)
    digits: np.ndarray     # (size, r): remaining row margins for each code
    below: np.ndarray      # (size, r): sum of digits k > i
    total: np.ndarray      # (size,): sum of digits
    after: tuple           # after[j] = sum of C_k for k > j
    reach: tuple = ()      # reach[s]: sorted codes of the states that occur before stage s

    @property
    def size(self) -> int:
        return int(self.total.size)

    @property
    def stages(self) -> int:
        return len(self.rows) * len(self.cols)

    def start_code(self) -> int:
        return int(np.dot(self.rows, self.radix))


def dense_size(rows) -> int:
    return int(np.prod([int(v) + 1 for v in rows], dtype=float))


def make_layout(rows, cols) -> Layout:
    rows = tuple(int(v) for v in rows)
    cols = tuple(int(v) for v in cols)
    radix = np.cumprod([1] + [v + 1 for v in rows[:-1]]).astype(np.int64)
    size = int(np.prod([v + 1 for v in rows]))
    code = np.arange(size, dtype=np.int64)
    digits = np.stack([(code // radix[i]) % (rows[i] + 1) for i in range(len(rows))], axis=1)
    digits = digits.astype(np.int32)
    csum = np.cumsum(digits[:, ::-1], axis=1)[:, ::-1]
    below = np.concatenate([csum[:, 1:], np.zeros((size, 1), np.int32)], axis=1).astype(np.int32)
    after = tuple(int(sum(cols[j + 1:])) for j in range(len(cols)))
    layout = Layout(rows, cols, radix, digits, below, csum[:, 0].astype(np.int32), after)
    reach = [np.array([layout.start_code()], np.int64)]
    for stage in range(layout.stages):
        reach.append(np.unique(moves(layout, stage, reach[-1])[2]))
    return replace(layout, reach=tuple(reach))


def _move_range(layout: Layout, stage: int, codes):
    """(lowest x, highest x, r_i, below, left) for the cell of `stage`, per state code."""
    r = len(layout.rows)
    i, j = stage % r, stage // r
    digit = layout.digits[codes, i].astype(np.int64)
    below = layout.below[codes, i].astype(np.int64)
    left = layout.total[codes].astype(np.int64) - layout.after[j]
    lo = np.maximum(0, left - below)
    hi = np.minimum(digit, left)
    ok = (left >= 0) & (left <= layout.cols[j])
    hi = np.where(ok, hi, -1)
    return lo, hi, digit, below, left


def stage_moves(layout: Layout, stage: int):
    """Moves at `stage` out of every state that occurs there: (source index, x, next code,
    start of each source's run of moves); the moves of one source are consecutive."""
    rep, x, nxt, _ = moves(layout, stage, layout.reach[stage])
    starts = np.flatnonzero(np.r_[True, rep[1:] != rep[:-1]])
    return rep, x, nxt, starts


def count_tables(layout: Layout) -> float:
    """Number of tables with these margins (one path through the network each)."""
    counts = np.zeros(layout.size)
    counts[layout.start_code()] = 1.0
    for stage in range(layout.stages):
        rep, _, nxt, _ = stage_moves(layout, stage)
        counts = np.bincount(nxt, weights=counts[layout.reach[stage]][rep], minlength=layout.size)
    return float(counts[0])


def path_bounds(layout: Layout, cell: np.ndarray):
    """Longest and shortest remaining sum from every state at every stage.

    `cell[i, j, x]` is g_ij(x). Returns two (stages + 1, size) arrays; states that cannot occur
    at a stage hold -inf / +inf.
    """
    stages, r = layout.stages, len(layout.rows)
    hi_b = np.full((stages + 1, layout.size), -np.inf)
    lo_b = np.full((stages + 1, layout.size), np.inf)
    hi_b[stages, 0] = lo_b[stages, 0] = 0.0
    for stage in range(stages - 1, -1, -1):
        i, j = stage % r, stage // r
        _, x, nxt, starts = stage_moves(layout, stage)
        g = cell[i, j, x]
        codes = layout.reach[stage]
        hi_b[stage, codes] = np.maximum.reduceat(g + hi_b[stage + 1, nxt], starts)
        lo_b[stage, codes] = np.minimum.reduceat(g + lo_b[stage + 1, nxt], starts)
    return hi_b, lo_b


@dataclass
class Pass:
    """What a forward pass found: extreme mass, settled-not-extreme mass, work done."""

    extreme: float = 0.0
    ordinary: float = 0.0
    entries: int = 0          # (state, partial sum) pairs carried, summed over stages
    support: np.ndarray = None   # full distribution of S (only when no region is given)
    probs: np.ndarray = None


def moves(layout, stage, codes, lf=None):
    """Every move out of the given states: (index of the source, x, next code, log weight).

    The log weights (conditional probabilities) are computed only when `lf`, the table of
    log factorials, is given."""
    r = len(layout.rows)
    i = stage % r
    lo, hi, digit, below, left = _move_range(layout, stage, codes)
    cnt = np.maximum(hi - lo + 1, 0)
    if int(cnt.sum()) > MAX_ENTRIES:
        raise NetworkTooLarge(f"the network would carry {int(cnt.sum()):,} pairs at one step")
    rep = np.repeat(np.arange(codes.size), cnt)
    x = lo[rep] + (np.arange(rep.size) - np.repeat(np.cumsum(cnt) - cnt, cnt))
    nxt = codes[rep] - x * layout.radix[i]
    if lf is None:
        return rep, x, nxt, None
    d, b, k = digit[rep], below[rep], left[rep]
    logw = (lf[d] - lf[x] - lf[d - x] + lf[b] - lf[k - x] - lf[b - k + x]
            - lf[d + b] + lf[k] + lf[d + b - k])
    return rep, x, nxt, logw


def _expand(layout, stage, codes, vals, mass, cell, lf):
    """All moves out of the given pairs: new codes, partial sums and masses."""
    r = len(layout.rows)
    i, j = stage % r, stage // r
    rep, x, nxt, logw = moves(layout, stage, codes, lf)
    return nxt, vals[rep] + cell[i, j, x], mass[rep] * np.exp(logw)


def merge(codes, vals, mass, quantum):
    """Merge pairs with the same state and the same partial sum (on a grid of `quantum`)."""
    if codes.size == 0:
        return codes, vals, mass
    keys = vals if quantum is None else np.rint(vals / quantum).astype(np.int64)
    order = _order(codes, keys)
    codes, keys, mass = codes[order], keys[order], mass[order]
    first = np.ones(codes.size, bool)
    first[1:] = (codes[1:] != codes[:-1]) | (keys[1:] != keys[:-1])
    start = np.nonzero(first)[0]
    mass = np.add.reduceat(mass, start)
    keys = keys[start]
    vals = keys if quantum is None else keys * quantum
    return codes[start], vals, mass


def _order(codes, keys):
    """Order by (code, key): one integer sort key when the two fit in 62 bits."""
    low = int(keys.min())
    span = int(keys.max()) - low + 1
    if span * (int(codes.max()) + 1) < 2 ** 62:
        return np.argsort(codes * span + (keys - low), kind="stable")
    return np.lexsort((keys, codes))


def log_factorials(layout: Layout) -> np.ndarray:
    return gammaln(np.arange(int(sum(layout.rows)) + 2, dtype=float) + 1.0)


def forward(layout: Layout, cell: np.ndarray, region, quantum=None, bounds=None,
            progress: Progress = NO_PROGRESS, turn=None) -> Pass:
    """Sum the probability of tables whose S lies in the region.

    `region` is (lo, hi): S is extreme when S <= lo or S >= hi; None asks for the whole null
    distribution of S instead (no pruning). `quantum` is the merging grid for real-valued
    sums (None: S is an integer, merged exactly). `turn(stage, codes, vals, mass)`, called at
    column boundaries, may settle all remaining pairs at once and return (extreme, ordinary).
    """
    lf = log_factorials(layout)
    dtype = np.int64 if quantum is None else float
    codes = np.array([layout.start_code()], np.int64)
    vals = np.zeros(1, dtype)
    mass = np.ones(1)
    out = Pass()
    if region is not None and bounds is None:
        bounds = path_bounds(layout, cell)
    for stage in range(layout.stages + 1):
        progress.step(stage / (layout.stages + 1), "network")
        if region is not None:
            codes, vals, mass = _settle(out, stage, codes, vals, mass, region, bounds)
        out.entries += int(codes.size)
        if stage == layout.stages or codes.size == 0 and region is not None:
            break
        if turn is not None and stage % len(layout.rows) == 0 and stage > 0:
            settled = turn(stage, codes, vals, mass)
            if settled is not None:
                out.extreme += settled[0]
                out.ordinary += settled[1]
                break
        codes, vals, mass = _expand(layout, stage, codes, vals, mass, cell, lf)
        codes, vals, mass = merge(codes, vals, mass, quantum)
    if region is None:
        out.support, out.probs = vals.astype(float), mass
    return out


def _settle(out: Pass, stage, codes, vals, mass, region, bounds):
    lo_thr, hi_thr = region
    top = vals + bounds[0][stage, codes]
    bottom = vals + bounds[1][stage, codes]
    extreme = (bottom >= hi_thr) | (top <= lo_thr)
    ordinary = (top < hi_thr) & (bottom > lo_thr)
    out.extreme += float(mass[extreme].sum())
    out.ordinary += float(mass[ordinary].sum())
    keep = ~(extreme | ordinary)
    return codes[keep], vals[keep], mass[keep]
