"""Exact intervals by inverting a permutation test under a shift model.

Under a shift delta, each arrangement of the reference set stops counting as "at least as
extreme" at one value of delta (its jump). With the jumps and their multiplicities, the
one-sided p-values are step functions of delta, and the interval endpoints are read off
exactly, without a search:

    p_higher(delta) = (identity + #{jumps <= delta}) / total      (non-decreasing)
    p_lower(delta)  = (identity + #{jumps >= delta}) / total      (non-increasing)

The interval is {delta: p_higher > alpha_side and p_lower > alpha_side}, with the ends read by
the interval-end rule of `confidence` (alpha_side exact, ties at a jump counted as extreme, so
finite ends are closed and are jumps).
"""
from __future__ import annotations

import numpy as np

from .confidence import alpha_side, first_kept, rejected_up_to


def interval_from_jumps(values, counts, identity: float, total: float, level: float,
                        alternative: str) -> tuple[float, float]:
    values = np.asarray(values, dtype=float)
    if counts is None:                 # every jump counts once (sampled arrangements)
        ends = _ends_of_sampled(values, identity, total, level, alternative)
        if ends is not None:
            return ends
        values = np.sort(values)
        counts = np.ones(values.size)
    else:
        counts = np.asarray(counts, dtype=float)
        keep = counts > 0
        values, counts = values[keep], counts[keep]
        order = np.argsort(values, kind="stable")
        values, counts = values[order], counts[order]
    values, counts = _merge_equal(values, counts)
    side = alpha_side(level, alternative)
    lo, hi = -np.inf, np.inf
    if alternative in ("two-sided", "higher"):
        lo = _end(values, counts, identity, total, side, -np.inf, np.inf)
    if alternative in ("two-sided", "lower"):
        hi = _end(values[::-1], counts[::-1], identity, total, side, np.inf, -np.inf)
    return lo, hi


def _ends_of_sampled(values, identity, total, level, alternative):
    """The ends of interval_from_jumps for jumps that count once each, read from the few
    smallest and largest jumps instead of sorting them all (a million sampled jumps: a few
    milliseconds in place of a sort); None when there are too few for that to pay.

    Each end lies among the K = C - identity + 2 jumps nearest its side (C the largest rejected
    count, as JumpStream keeps them). The part taken is widened to the end of its group of
    equal jumps (jumps within the merging tolerance of the next one are taken with it), and
    merged with the tolerance of the whole set, so its groups, their first values and their
    counts are those of the full sort, and so are the ends."""
    side = alpha_side(level, alternative)
    need = int(max(0.0, rejected_up_to(side, total) - float(identity))) + 2
    if values.size < 8 * need + 1024:
        return None
    scale = max(float(np.max(np.abs(values))), 1e-300)
    n = values.size
    split = np.partition(values, [need - 1, n - need])   # the need smallest, ..., the need largest
    lo, hi = -np.inf, np.inf
    if alternative in ("two-sided", "higher"):
        part = _whole_groups(split[:need], split[need:], scale, low=True)
        v, c = _merge_equal(part, np.ones(part.size), scale)
        lo = _end(v, c, identity, total, side, -np.inf, np.inf)
    if alternative in ("two-sided", "lower"):
        part = _whole_groups(split[n - need:], split[:n - need], scale, low=False)
        v, c = _merge_equal(part, np.ones(part.size), scale)
        hi = _end(v[::-1], c[::-1], identity, total, side, np.inf, -np.inf)
    return lo, hi


WINDOW = 64          # tolerances searched past the cut for the rest of its group


def _whole_groups(part, rest, scale: float, low: bool) -> np.ndarray:
    """`part` (the smallest, or the largest, values) with the values of `rest` in the group of
    equal jumps at its edge (consecutive sorted values within 1e-12 * scale, as _merge_equal
    groups them), sorted ascending."""
    tol = 1e-12 * scale
    edge = part.max() if low else part.min()
    near = rest[rest - edge <= WINDOW * tol] if low else rest[edge - rest <= WINDOW * tol]
    near = np.sort(near) if low else np.sort(near)[::-1]
    walk = np.concatenate([[edge], near])
    steps = walk[1:] - walk[:-1] if low else walk[:-1] - walk[1:]   # upper - lower, as np.diff
    breaks = np.flatnonzero(steps > tol)
    taken = int(breaks[0]) if breaks.size else near.size
    if taken == near.size and abs(walk[-1] - edge) >= (WINDOW - 1) * tol:
        # the group may run past the window: the slow way
        return _sorted_whole_groups(np.concatenate([part, rest]), part.size, scale, low)
    return np.sort(np.concatenate([part, near[:taken]]))


def _sorted_whole_groups(values, k: int, scale: float, low: bool) -> np.ndarray:
    """_whole_groups the slow way (a group of near-equal jumps wider than the window)."""
    values = np.sort(values)
    tol = 1e-12 * scale
    if low:
        i = k
        while i < values.size and values[i] - values[i - 1] <= tol:
            i += 1
        return values[:i]
    i = values.size - k
    while i > 0 and values[i] - values[i - 1] <= tol:
        i -= 1
    return values[i:]


def _end(values, counts, identity, total, side, open_end, empty):
    """The first jump (in the order given) at which the one-sided p-value leaves the rejected
    region: open_end when the observed arrangement alone keeps every value, `empty` when no
    value is kept."""
    cum = identity + np.concatenate([[0.0], np.cumsum(counts)])
    i = first_kept(cum, total, side)
    if i == 0:
        return open_end
    return float(values[i - 1]) if i < cum.size else empty


class JumpStream:
    """The interval from jumps that arrive in chunks, holding only the few it is read from.

    Each endpoint is the jump where the one-sided p-value first leaves the rejected region
    (the interval-end rule of `confidence`) from its end, so it lies among the
    K = C - identity + 1 smallest (or largest) jumps, C the largest rejected count: those are
    kept, the rest are dropped as they arrive. Memory is 8 K bytes a side,
    whatever the size of the reference set; the endpoints are those of `interval_from_jumps` on
    every jump (the kept jumps are a prefix of the sorted list, so ties group the same way).
    Every jump counts once (listed arrangements)."""

    def __init__(self, identity: float, total: float, level: float, alternative: str):
        self.identity, self.total = float(identity), float(total)
        self.level, self.alternative = level, alternative
        side = alpha_side(level, alternative)
        self.keep = int(max(0.0, rejected_up_to(side, self.total) - self.identity)) + 2
        self.low = np.empty(0) if alternative in ("two-sided", "higher") else None
        self.high = np.empty(0) if alternative in ("two-sided", "lower") else None

    def add(self, values) -> None:
        values = np.asarray(values, dtype=float)
        if self.low is not None:
            self.low = _keep_smallest(self.low, values, self.keep)
        if self.high is not None:
            self.high = -_keep_smallest(-self.high, -values, self.keep)

    def interval(self) -> tuple[float, float]:
        side = alpha_side(self.level, self.alternative)
        lo, hi = -np.inf, np.inf
        if self.low is not None:
            v, c = _merge_equal(np.sort(self.low), np.ones(self.low.size))
            lo = _end(v, c, self.identity, self.total, side, -np.inf, np.inf)
        if self.high is not None:
            v, c = _merge_equal(np.sort(self.high), np.ones(self.high.size))
            hi = _end(v[::-1], c[::-1], self.identity, self.total, side, np.inf, -np.inf)
        return lo, hi


def _keep_smallest(kept: np.ndarray, new: np.ndarray, k: int) -> np.ndarray:
    """The k smallest of kept and new together (kept holds at most k values)."""
    if kept.size >= k:
        new = new[new < kept.max()]          # most of a chunk falls past the kept ones
        if new.size == 0:
            return kept
    both = np.concatenate([kept, new])
    if both.size <= k:
        return both
    return np.partition(both, k - 1)[:k]


def _merge_equal(values, counts, scale=None):
    """Merge jumps that are equal up to floating-point noise (relative 1e-12 of the largest,
    or of `scale`: the largest of the whole set a part was taken from)."""
    if values.size == 0:
        return values, counts
    if scale is None:
        scale = max(float(np.max(np.abs(values))), 1e-300)
    new_group = np.empty(values.size, dtype=bool)
    new_group[0] = True
    new_group[1:] = np.diff(values) > 1e-12 * scale
    starts = np.flatnonzero(new_group)
    return values[starts], np.add.reduceat(counts, starts)


def collect_sampled(parts, keep_jumps: bool, limit: int):
    """Add up Monte Carlo batches (exceedances, jumps, draws that moved nothing).

    Returns (exceedances, jumps, identity, draws used for the interval): the jumps are kept for
    the first `limit` draws only, so memory stays bounded; identity counts the observed
    arrangement once more, as the (b + 1) / (m + 1) rule does.
    """
    b, kept, identity, used = 0, [], 1.0, 0
    for exceed, jumps, unmoved in parts:
        b += exceed
        if keep_jumps and used < limit:
            kept.append(jumps)
            identity += unmoved
            used += len(jumps) + unmoved
    return b, (np.concatenate(kept) if kept else np.empty(0)), identity, used
