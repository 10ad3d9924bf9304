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

from .confidence import alpha_side, first_kept


def interval_from_jumps(values, counts, identity: float, total: float, level: float,
                        alternative: str) -> tuple[float, float]:
    values = np.asarray(values, dtype=float)
    if counts is None:                 # every jump counts once (sampled arrangements)
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


def _end(values, counts, identity, total, side, open_end, empty):
    """The first jump (in the order given) at which the one-sided p-value leaves the rejected
    region: open_end when the observed arrangement alone keeps every value, `empty` when no
    value is kept."""
    cum = identity + np.concatenate([[0.0], np.cumsum(counts)])
    i = first_kept(cum, total, side)
    if i == 0:
        return open_end
    return float(values[i - 1]) if i < cum.size else empty


def _merge_equal(values, counts):
    """Merge jumps that are equal up to floating-point noise (relative 1e-12 of the largest)."""
    if values.size == 0:
        return values, counts
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
