"""Exact and Monte Carlo runs over the within-block arrangements of incomplete blocks.

Exact ("dp-split"): the blocks are split in two halves of about equal numbers of
arrangements. Within each half, a dynamic programme adds one block at a time to the states
(the vector x of treatment totals, layout.py), merging equal states and summing their
numbers of arrangements (states are exact integers where the values lie on a decimal grid,
and doubled mid-ranks always do). The halves are then joined: the statistic of x_L + x_R is

    x_L' G x_L + h' x_L + c0  +  x_R' G x_R + h' x_R  +  2 x_L' G x_R,

the last term one matrix product for a block of left states against every right state, so
every pair (every arrangement of the whole design, grouped by equal states) is counted
without being listed. The p-value is the number of arrangements whose statistic is at least
the observed one (relative tolerance 1e-9, core/pvalues) over the product of k_i!.

Monte Carlo: each block's values are shuffled among its treatments, independently, in
seeded blocks of draws (montecarlo/sampling), p = (b + 1) / (m + 1).
"""
from __future__ import annotations

import itertools
import math
from functools import lru_cache

import numpy as np

from ..core import pvalues
from ..core.progress import NO_PROGRESS
from ..montecarlo.sampling import iter_blocks
from .layout import Layout

MAX_BLOCK_PLOTS = 8          # the programme applies each block's k! orders
MAX_HALF_STATES = 4_000_000  # states of one half held at once
PAIR_CHUNK = 1 << 22         # left x right pairs evaluated at once
NULL_KEEP_PAIRS = 2_000_000  # the exact null distribution is kept up to this many pairs


@lru_cache(maxsize=512)
def _orders(z: tuple) -> tuple[np.ndarray, np.ndarray]:
    """Every distinct order of the block's values, with how many of the k! orders give it."""
    k = len(z)
    perms = np.array(list(itertools.permutations(range(k))), dtype=np.int64)
    arranged = np.asarray(z)[perms]
    distinct, counts = np.unique(arranged, axis=0, return_counts=True)
    return distinct, counts.astype(float)


def _moves(layout: Layout, block) -> tuple[np.ndarray, np.ndarray]:
    """The block's contributions to the state, one row per distinct order, with weights."""
    distinct, counts = _orders(tuple(block.z.tolist()))
    rows = np.zeros((len(distinct), layout.dim), dtype=distinct.dtype)
    rows[:, block.offset + block.present] = distinct
    return rows, counts


def halves(layout: Layout) -> tuple[list, list]:
    """The blocks in two halves whose numbers of orders have about equal products."""
    order = sorted(layout.blocks, key=lambda b: -math.lgamma(len(b.present) + 1))
    left, right, size_l, size_r = [], [], 0.0, 0.0
    for b in order:
        size = math.lgamma(len(b.present) + 1)
        if size_l <= size_r:
            left.append(b)
            size_l += size
        else:
            right.append(b)
            size_r += size
    return left, right


def _merge(states, weights):
    uniq, inverse = np.unique(states, axis=0, return_inverse=True)
    return uniq, np.bincount(inverse.ravel(), weights=weights)


def half_states(layout: Layout, blocks, progress=NO_PROGRESS, done=0, total=1):
    """Distinct states of one half with their numbers of arrangements."""
    dtype = np.int64 if layout.integer else float
    states, weights = np.zeros((1, layout.dim), dtype=dtype), np.ones(1)
    for i, block in enumerate(blocks):
        moves, counts = _moves(layout, block)
        new = (states[:, None, :] + moves[None, :, :].astype(dtype)).reshape(-1, layout.dim)
        w = (weights[:, None] * counts[None, :]).ravel()
        states, weights = _merge(new, w)
        progress.step((done + i + 1) / total, "counting within-block arrangements")
    return states, weights


def cost(layout: Layout) -> tuple[float, float, bool, str]:
    """(ops, bytes, feasible, note) of the exact run, from unmerged sizes (an upper bound)."""
    if max(len(b.present) for b in layout.blocks) > MAX_BLOCK_PLOTS:
        return math.inf, math.inf, False, f"a block has more than {MAX_BLOCK_PLOTS} plots"
    left, right = halves(layout)
    size = [float(np.prod([math.factorial(len(b.present)) for b in part])) for part in
            (left, right)]
    states = [min(s, _span_bound(layout, part)) for s, part in zip(size, (left, right))]
    if max(states) > MAX_HALF_STATES:
        return math.inf, math.inf, False, f"more than {MAX_HALF_STATES:,} states in a half"
    d = layout.dim
    ops = states[0] * states[1] * (d + 6) + sum(s * d * 40 for s in size)
    memory = max(min(states[0] * states[1], PAIR_CHUNK) * 8 * 3, max(size) * d * 8 * 3)
    return ops, memory, True, f"{states[0]:.3g} x {states[1]:.3g} states joined"


def _span_bound(layout: Layout, part) -> float:
    """States of a half cannot outnumber the integer points its totals can reach."""
    if not layout.integer or not part:
        return math.inf
    span = np.zeros(layout.dim)
    for b in part:
        z = np.asarray(b.z, dtype=float)
        step = np.gcd.reduce(np.abs(np.diff(np.sort(b.z))).astype(np.int64)) or 1
        span[b.offset + b.present] += (z.max() - z.min()) / step
    return float(np.prod(span[span > 0] + 1))


def exact(layout: Layout, progress=NO_PROGRESS) -> dict:
    left, right = halves(layout)
    total = len(layout.blocks) + 1
    xl, wl = half_states(layout, left, progress, 0, total)
    xr, wr = half_states(layout, right, progress, len(left), total)
    xl, xr = xl.astype(float), xr.astype(float)
    ql = layout.statistic(xl)
    qr = np.einsum("nd,de,ne->n", xr, layout.G, xr) + xr @ layout.h
    cross = xl @ (2.0 * layout.G)
    obs, tol = layout.internal_obs, pvalues.tolerance(layout.internal_obs, layout.scale)
    keep = len(xl) * len(xr) <= NULL_KEEP_PAIRS
    rows = max(1, PAIR_CHUNK // max(1, len(xr)))
    hits, kept_q, kept_w = 0.0, [], []
    for start in range(0, len(xl), rows):
        q = ql[start:start + rows, None] + qr[None, :] + cross[start:start + rows] @ xr.T
        hits += float(wl[start:start + rows] @ ((q >= obs - tol) @ wr))
        if keep:
            kept_q.append(q.ravel())
            kept_w.append((wl[start:start + rows, None] * wr[None, :]).ravel())
        progress.step(min(1.0, (start + rows) / len(xl)), "joining the halves")
    arrangements = float(wl.sum() * wr.sum())
    out = dict(p_value=pvalues.clip(hits / arrangements), arrangements=arrangements,
               algorithm="dynamic programming over each half of the blocks (equal treatment "
                         "totals merged), the halves joined by one product per block of states")
    if keep:
        q, w = _tally(np.concatenate(kept_q), np.concatenate(kept_w), layout.scale)
        out.update(null_support=layout.reported(np.maximum(q, 0.0)), null_probs=w / w.sum())
    return out


def _tally(values, weights, scale):
    """Values within 1e-10 of the scale merged (for the null's picture; p never uses this)."""
    unit = max(abs(scale), 1e-300) * 1e-10
    _, inverse = np.unique(np.round(values / unit), return_inverse=True)
    w = np.bincount(inverse, weights=weights)
    v = np.bincount(inverse, weights=values * weights) / w
    return v, w


def monte_carlo(layout: Layout, draws: int, seed: int, progress=NO_PROGRESS) -> dict:
    obs, tol = layout.internal_obs, pvalues.tolerance(layout.internal_obs, layout.scale)
    blocks = [(b.offset + b.present, np.asarray(b.z, dtype=float)) for b in layout.blocks]

    def work(size, rng):
        x = np.zeros((size, layout.dim))
        for where, z in blocks:
            order = np.argsort(rng.random((size, len(z))), axis=1)
            x[:, where] += z[order]
        return int(np.count_nonzero(layout.statistic(x) >= obs - tol))

    hits = sum(iter_blocks(seed, draws, work, progress, "sampling within-block arrangements"))
    p, interval = pvalues.monte_carlo_p(hits, draws)
    return dict(p_value=p, draws=draws, p_interval=interval, seed=seed,
                arrangements=layout.arrangements,
                algorithm="Monte Carlo: each block's values shuffled among its treatments")
