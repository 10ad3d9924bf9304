"""Scores for linear permutation statistics, and putting them on an integer grid.

An integer grid makes exact counting possible: doubled mid-ranks are integers, and data
recorded to d decimals are integers after scaling by 10^d, so the p-value stays exact for the
data as recorded.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np
from ...lazy import stats

MAX_DECIMALS = 6


def midranks(x) -> np.ndarray:
    """Ranks 1..n, tied values sharing the mean of their ranks (as scipy.stats.rankdata's
    'average'; computed here so that a rank test does not wait for scipy.stats to load)."""
    x = np.asarray(x, dtype=float)
    if not np.all(np.isfinite(x)):
        return stats.rankdata(x, method="average")
    order = np.argsort(x, kind="mergesort")
    xs = x[order]
    starts = np.flatnonzero(np.r_[True, xs[1:] != xs[:-1]])
    ends = np.r_[starts[1:], x.size]
    ranks = np.empty(x.size)
    ranks[order] = np.repeat((starts + ends + 1) / 2.0, ends - starts)   # mean of start+1..end
    return ranks


def normal_scores(x) -> np.ndarray:
    """van der Waerden scores Phi^-1(r / (N + 1)) of the mid-ranks r (tied values share one)."""
    x = np.asarray(x, dtype=float)
    return stats.norm.ppf(midranks(x) / (len(x) + 1))


def median_scores(x) -> np.ndarray:
    """1 for values above the pooled median, 0 otherwise (Mood's median test)."""
    x = np.asarray(x, dtype=float)
    return (x > np.median(x)).astype(float)


def _average_within_ties(x, raw):
    out = np.empty_like(raw)
    _, inverse = np.unique(x, return_inverse=True)
    sums = np.bincount(inverse, weights=raw)
    counts = np.bincount(inverse)
    out[:] = (sums / counts)[inverse]
    return out


@dataclass(frozen=True)
class Grid:
    """Scores written as origin + step * integers (exactly, for the data as recorded)."""

    integers: np.ndarray   # non-negative int64
    origin: float
    step: float
    decimals: Optional[int]  # decimals the data were recorded to, when found


def integer_grid(scores, max_decimals: int = MAX_DECIMALS) -> Optional[Grid]:
    """Put scores on the coarsest integer grid they lie on, or None when they lie on none.

    Tries d = 0 .. max_decimals decimals; the scaled values must be within floating-point
    noise of integers: a few ulps of each value, plus at most 1e-6 (and at most 1e-7 of the
    largest scaled value) for noise carried over from larger operands.
    """
    a = np.asarray(scores, dtype=float)
    if a.size == 0 or not np.all(np.isfinite(a)):
        return None
    for d in range(max_decimals + 1):
        scaled = a * 10.0 ** d
        if np.max(np.abs(scaled), initial=0.0) > 2 ** 52:
            return None
        rounded = np.round(scaled)
        # Floating-point noise is relative: to each value's own size, and for derived data
        # (differences) to the largest value. A fixed absolute allowance would put data far
        # below it (1.2e-8, 3.4e-8, ...) on the grid point 0, and a per-value allowance of
        # 1e-9 of the value would put 1e9 + 0.5 on the grid of whole numbers.
        top = float(np.max(np.abs(scaled), initial=0.0))
        allowed = min(1e-6, 1e-7 * top) + 8 * np.finfo(float).eps * np.abs(scaled)
        if np.all(np.abs(scaled - rounded) <= allowed):
            ints = rounded.astype(np.int64)
            low = int(ints.min())
            shifted = ints - low
            g = int(np.gcd.reduce(shifted)) or 1      # gcd of the non-zero steps
            return Grid(shifted // g, low / 10.0 ** d, g / 10.0 ** d, d)
    return None
