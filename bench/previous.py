"""Former versions of three exact counts, kept here only to time them beside the current ones
in bench/run.py (same data, same run). Not part of the product.

- `mann_whitney_cdf`: the no-ties Mann-Whitney law for the Hodges-Lehmann interval from the
  full table of subset counts by size and sum (before Harding's recursion).
- `inversions_run`: Kendall's exact count without ties in Python integers over the whole half
  of the law (before the floating-point count up to the tail).
Kruskal-Wallis needs no copy: its former count (state lists merged by sorting, `dp-sums`) is
still the product's algorithm for four or more groups.
"""
from __future__ import annotations

from math import factorial

import numpy as np

from permq.engine.core import pvalues
from permq.engine.core.counting import counts_by_size
from permq.result import EngineOutcome


def mann_whitney_cdf(n1: int, n2: int) -> np.ndarray:
    table = counts_by_size(np.arange(n1 + n2), n1)
    row = table[n1]
    offset = n1 * (n1 - 1) // 2
    counts = row[offset:offset + n1 * n2 + 1]
    return np.cumsum(counts) / counts.sum()


def inversion_counts(n: int, upto=None) -> list:
    top = n * (n - 1) // 2 if upto is None else min(upto, n * (n - 1) // 2)
    c = np.array([1], dtype=object)
    for m in range(2, n + 1):
        length = min(len(c) + m - 1, top + 1)
        ext = np.zeros(length, dtype=object)
        ext[:min(len(c), length)] = c[:length]
        cs = np.cumsum(ext)
        new = cs.copy()
        new[m:] -= cs[:-m]
        c = new
    return list(c)


def inversions_run(name, coefficient, s_obs, n, alternative, progress=None) -> EngineOutcome:
    K = n * (n - 1) // 2
    d = (K - int(s_obs)) // 2
    half = inversion_counts(n, K // 2)
    full = half + half[:K + 1 - len(half)][::-1]
    total = factorial(n)
    if alternative == "higher":
        hits = sum(full[:d + 1])
    elif alternative == "lower":
        hits = sum(full[d:])
    else:
        dev = abs(2 * d - K)
        hits = sum(c for k, c in enumerate(full) if abs(2 * k - K) >= dev)
    tau = 1.0 - 4.0 * np.arange(K + 1) / (n * (n - 1))
    probs = np.array([c / total for c in full], dtype=float)
    return EngineOutcome(name, float(coefficient), pvalues.clip(hits / total), "exact",
                         "dynamic programming on inversion counts", arrangements=total,
                         null_support=tau[::-1], null_probs=probs[::-1])
