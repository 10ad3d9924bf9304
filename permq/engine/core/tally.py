"""The null law of a listed statistic, tallied chunk by chunk in bounded memory.

Complete enumeration meets every arrangement once; keeping every value to tally at the end
costs 8 bytes an arrangement (gigabytes past 10^8 arrangements). `Tally` keeps the distinct
values seen so far with their counts, merging values within a relative 1e-9 (floating-point
noise never splits a value), and gives up on the law (keeps nothing) once it has more than
`limit` distinct values: the law is for pictures only, never for p-values.
"""
from __future__ import annotations

import numpy as np

from .pvalues import RTOL

DEFAULT_LIMIT = 1_000_000
BYTES_PER_VALUE = 16 * 6     # values and counts, pending and kept, while a fold sorts them


class Tally:
    def __init__(self, scale: float, limit: int = DEFAULT_LIMIT):
        self.tol = RTOL * max(abs(float(scale)), 1e-300)
        self.limit = int(limit)
        self.values = np.empty(0)
        self.counts = np.empty(0)
        self._pending: list = []
        self._pending_size = 0
        self.given_up = False

    def add(self, values, counts=None) -> None:
        if self.given_up:
            return
        values = np.asarray(values, dtype=float)
        counts = np.ones(values.size) if counts is None else np.asarray(counts, dtype=float)
        self._pending.append(_grouped(values, counts, self.tol))
        self._pending_size += self._pending[-1][0].size
        if self._pending_size > max(self.values.size, 1 << 19):
            self._fold()

    def law(self):
        """(values, counts), sorted; (None, None) when there were too many distinct values."""
        self._fold()
        if self.given_up:
            return None, None
        return self.values, self.counts

    def _fold(self) -> None:
        if self.given_up or not self._pending:
            return
        vals = np.concatenate([self.values] + [p[0] for p in self._pending])
        cnts = np.concatenate([self.counts] + [p[1] for p in self._pending])
        self._pending, self._pending_size = [], 0
        self.values, self.counts = _grouped(vals, cnts, self.tol)
        if self.values.size > self.limit:
            self.given_up = True
            self.values = self.counts = np.empty(0)


def _grouped(values, counts, tol):
    if values.size == 0:
        return values, counts
    order = np.argsort(values, kind="stable")
    v, c = values[order], counts[order]
    new = np.empty(v.size, dtype=bool)
    new[0] = True
    new[1:] = np.diff(v) > tol
    starts = np.flatnonzero(new)
    return v[starts], np.add.reduceat(c, starts)
