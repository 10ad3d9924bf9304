"""The exact permutation law of a linear trend statistic, by dynamic programming over units.

T = sum_i e_{g(i)} z_i, with z_i the values (or doubled mid-ranks) on an integer grid and e_g
the dose scores on an integer grid, over every assignment of the N units to groups of the
observed sizes (groups that share a score merge: no probability changes). Units are placed one
at a time; a state is the number of units already in each group but one (the largest, whose
count the others imply) with the partial statistic, held as a dense array
counts[state, t] of the number of ways. After the last unit, counts[full, t] is the number of
assignments with T = t, exactly (integers in floating point, to 2^53).

The step is compiled with numba when it is there; the numpy path adds the same numbers in the
same order, so both give the same law.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from ...errors import PlanError
from ..core.counting import multinomial
from ..core.grid import integer_grid
from ..core.progress import NO_PROGRESS, Progress

MAX_CELLS = 1.5e8                 # states x statistic values held at once (two such arrays)
OPS_PER_CELL = 0.08               # estimated work per (unit, state, value, class): measured


@dataclass(frozen=True)
class TrendGrid:
    z: np.ndarray          # non-negative integers, one per unit
    e: np.ndarray          # non-negative integer score per merged class
    cls: np.ndarray        # merged class of each unit
    sizes: np.ndarray      # units per merged class
    z_step: float          # value = z_origin + z_step * z
    e_step: float


def grid(values, groups, scores) -> Optional[TrendGrid]:
    """The data and scores on integer grids, or None when either lies on none."""
    zg = integer_grid(values)
    dg = integer_grid(np.asarray(scores, dtype=float))
    if zg is None or dg is None:
        return None
    e_values, group_cls = np.unique(dg.integers, return_inverse=True)
    cls = group_cls.ravel()[np.asarray(groups)]
    sizes = np.bincount(cls, minlength=len(e_values)).astype(np.int64)
    return TrendGrid(zg.integers.astype(np.int64), e_values.astype(np.int64), cls, sizes,
                     zg.step, dg.step)


def _layout(sizes):
    sizes = np.asarray(sizes, dtype=np.int64)
    implied = int(np.argmax(sizes))
    dims = [int(n) + 1 if c != implied else 1 for c, n in enumerate(sizes)]
    S = int(np.prod(dims))
    radix = np.zeros(len(sizes), dtype=np.int64)
    acc = 1
    for c, d in enumerate(dims):
        radix[c] = acc if c != implied else 0
        acc *= d
    index = np.arange(S)
    counts = np.zeros((S, len(sizes)), dtype=np.int64)
    for c, d in enumerate(dims):
        if c != implied:
            counts[:, c] = (index // radix[c]) % d
    return implied, S, radix, counts, counts.sum(axis=1)


def cost(tg: TrendGrid) -> tuple:
    """(ops, bytes, cells) of `law` for this grid."""
    sizes = tg.sizes
    implied = int(np.argmax(sizes))
    S = float(np.prod([n + 1 for c, n in enumerate(sizes) if c != implied]))
    width = float(tg.e.max() * tg.z.sum() + 1)
    N, C = float(len(tg.z)), float(len(sizes))
    cells = S * width
    return N * cells * C * OPS_PER_CELL * 0.5, 2 * cells * 8.0 + N * 64.0, cells


def law(tg: TrendGrid, progress: Progress = NO_PROGRESS, compiled: Optional[bool] = None):
    """(support t, number of assignments) of the integer statistic T = sum e_{cls(i)} z_i."""
    ops, memory, cells = cost(tg)
    if cells > MAX_CELLS:
        raise PlanError("too many counting states for the exact trend law")
    implied, S, radix, counts, sums = _layout(tg.sizes)
    width = int(tg.e.max() * tg.z.sum()) + 1
    P = np.zeros((S, width))
    Q = np.zeros((S, width))
    P[0, 0] = 1.0
    step = _compiled_step() if compiled is not False else None
    empty = np.iinfo(np.int64).max // 4
    lo, hi = np.full(S, empty, np.int64), np.full(S, -1, np.int64)
    lo[0] = hi[0] = 0
    reach = 0
    order = np.argsort(tg.z, kind="stable")
    for placed, i in enumerate(order):
        shifts = (tg.e * int(tg.z[i])).astype(np.int64)
        if step is not None:
            nlo, nhi = np.full(S, empty, np.int64), np.full(S, -1, np.int64)
            step(P, Q, lo, hi, nlo, nhi, shifts, tg.sizes, implied, counts, sums, radix, placed)
            lo, hi = nlo, nhi
        else:
            Q[:, :reach + int(shifts.max()) + 1] = 0.0
            _step_numpy(P, Q, shifts, tg.sizes, implied, counts, sums, radix, placed, reach + 1)
        reach += int(shifts.max())
        P, Q = Q, P
        progress.step((placed + 1) / len(order), "counting assignments")
    full = int(np.flatnonzero(np.all(counts == np.where(np.arange(len(tg.sizes)) == implied, 0,
                                                          tg.sizes), axis=1))[0])
    row = P[full, :reach + 1]
    support = np.flatnonzero(row)
    return support.astype(float), row[support]


def _step_numpy(P, Q, shifts, sizes, implied, counts, sums, radix, placed, width):
    rest = placed - sums
    valid = (rest >= 0) & (rest <= sizes[implied])
    for c in range(len(sizes)):
        shift = int(shifts[c])
        if c == implied:
            ok = valid & (rest < sizes[implied])
            target = np.flatnonzero(ok)
        else:
            ok = valid & (counts[:, c] < sizes[c])
            target = np.flatnonzero(ok) + radix[c]
        source = np.flatnonzero(ok)
        if len(source):
            Q[target, shift:shift + width] += P[source, :width]


def _compiled_step():
    try:
        from .compiled import trend_step
    except Exception:  # noqa: BLE001 - without numba the numpy path gives the same law
        return None
    return trend_step


def count(sizes) -> int:
    return multinomial(sizes)
