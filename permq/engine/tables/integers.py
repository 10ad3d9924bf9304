"""The table network for integer statistics, compiled.

When S is an exact integer (Kendall's S, a linear-by-linear sum with integer scores), the
pairs (partial sum, mass) reaching a state are merged in a scratch window from the state's
lowest to its highest partial sum, then read out in order, so no step sorts. The network and
its rules are those of `network.py` (the same states, moves, probabilities and exact bounds:
a pair is settled when every completion, or none, is extreme), so the p-value is the same;
only the bookkeeping differs, in loops compiled by numba (`compiled.py`). Without numba, or
when a state's window would be too wide, the engine uses `network.forward` instead.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from ...lazy import gammaln

from ..core.progress import NO_PROGRESS, Progress
from .concordance import ConcordanceGain
from ..core.limits import memory_budget
from .network import MAX_CODE, NetworkTooLarge, dense_size

# Most moves the layout may keep, and most pairs one stage may carry.
MAX_MOVES = 80_000_000
MAX_PAIRS = 40_000_000
# Bytes one pair holds at the peak: its sum and mass and the scratch they are merged in
# (tracemalloc over Kendall and Jonckheere-Terpstra tables, `rxc.integer_pairs`).
PAIR_BYTES = 50
# Sums added up at once in one dense window (a run of states; small enough to stay in cache).
WINDOW = 1 << 16


class TooWide(MemoryError):
    """The compiled pass would hold too much: past its own limits the sorting network takes
    over; past the statement's memory budget (`budget`) no exact network does."""

    def __init__(self, message: str, budget: bool = False):
        super().__init__(message)
        self.budget = budget


def pair_limit(held: float = 0.0) -> int:
    """Most pairs one stage may carry: MAX_PAIRS, or fewer when the statement's memory budget
    (`set memory`), less the `held` bytes of the layout and its bounds, holds fewer."""
    return int(max(0.0, min(MAX_PAIRS, (memory_budget() - held) / PAIR_BYTES)))


def _too_wide(what: str, max_pairs: int) -> TooWide:
    if max_pairs < MAX_PAIRS:
        return TooWide(f"{what}, past the memory budget of {memory_budget() / 1e9:g} GB "
                       "('set memory')", budget=True)
    return TooWide(what)


@lru_cache(maxsize=1)
def kernels():
    """The compiled loops, or None when numba cannot compile (or is not installed)."""
    try:
        from . import compiled

        probe = compiled.moves_of(np.array([2], np.int64), np.array([1, 3], np.int64),
                                  np.array([3, 2], np.int64), 0, 0, 2, True)
        assert probe[1].size == 1
        return compiled
    except Exception:                      # no numba, or it cannot compile or cache here
        return None


def available() -> bool:
    return kernels() is not None


@dataclass(frozen=True)
class CompiledLayout:
    """The network's states and moves in compressed form (see `compiled.py`)."""

    rows: tuple
    cols: tuple
    radix: np.ndarray
    base: np.ndarray
    after: tuple
    reach: tuple           # sorted state codes before each stage
    digits: tuple          # digits[s]: (states, r) remaining row margins of reach[s]
    offsets: tuple         # offsets[s][a] .. offsets[s][a + 1]: the moves of state a
    dst: tuple             # dst[s][m]: index in reach[s + 1] of the state move m reaches
    tables: float

    @property
    def per_column(self) -> int:
        return len(self.rows) - 1

    @property
    def nbytes(self) -> int:
        """Bytes the layout holds, with the bounds a pass adds (three doubles a state)."""
        held = sum(a.nbytes for part in (self.reach, self.digits, self.offsets, self.dst)
                   for a in part)
        return held + 24 * sum(a.size for a in self.reach)

    @property
    def stages(self) -> int:
        return self.per_column * len(self.cols)

    def stage_args(self, stage: int) -> tuple:
        i, j = stage % self.per_column, stage // self.per_column
        fold = i == self.per_column - 1
        return i, j, self.after[j], self.cols[j], fold


@lru_cache(maxsize=4)
def layout(rows: tuple, cols: tuple) -> CompiledLayout:
    k = kernels()
    if dense_size(rows) >= MAX_CODE:
        raise NetworkTooLarge("the row margins are too many and too large to code the states")
    radix = np.cumprod([1] + [v + 1 for v in rows[:-1]]).astype(np.int64)
    base = np.array([v + 1 for v in rows], np.int64)
    after = tuple(int(sum(cols[j + 1:])) for j in range(len(cols)))
    shell = CompiledLayout(rows, cols, radix, base, after, (), (), (), (), 0.0)
    reach = [np.array([int(np.dot(rows, radix))], np.int64)]
    offsets, dst, paths, moves, held = [], [], np.ones(1), 0, 0
    for stage in range(shell.stages):
        i, j, after_j, col_j, fold = shell.stage_args(stage)
        off, nxt = k.moves_of(reach[-1], radix, base, i, after_j, col_j, fold)
        moves += nxt.size
        if moves > MAX_MOVES:
            raise NetworkTooLarge(f"the network has more than {MAX_MOVES:,} moves")
        # what the layout keeps, this stage's moves and the scratch that places them (a
        # dense index up to 8 codes a move, the paths' weights) and the digits to come
        if held + off.nbytes + nxt.nbytes + 92 * nxt.size > memory_budget():
            raise TooWide(f"a layout past the memory budget of {memory_budget() / 1e9:g} GB "
                          "('set memory')", budget=True)
        codes, pos = k.locate(nxt, max(8 * nxt.size, 1 << 20))
        paths = np.bincount(pos, weights=np.repeat(paths, np.diff(off)), minlength=codes.size)
        reach.append(codes)
        offsets.append(off)
        dst.append(pos)
        held += off.nbytes + pos.nbytes + codes.nbytes * (1 + len(rows))
    digits = tuple(k.digits_of(codes, radix, base) for codes in reach)
    return CompiledLayout(rows, cols, radix, base, after, tuple(reach), digits, tuple(offsets),
                          tuple(dst), float(paths[0]))


def _gain_args(cell):
    if isinstance(cell, ConcordanceGain):
        return 1, np.zeros((1, 1, 1), np.int64), np.asarray(cell.rows, np.int64)
    return 0, np.ascontiguousarray(cell, dtype=np.int64), np.zeros(1, np.int64)


def is_integer(cell) -> bool:
    return isinstance(cell, ConcordanceGain) or (isinstance(cell, np.ndarray)
                                                 and np.issubdtype(cell.dtype, np.integer))


@dataclass(frozen=True)
class Result:
    extreme: float
    ordinary: float
    support: np.ndarray = None
    probs: np.ndarray = None


def bounds(lay: CompiledLayout, cell):
    k = kernels()
    kind, table, rows = _gain_args(cell)
    n = lay.stages
    hi, lo, ways = [None] * (n + 1), [None] * (n + 1), [None] * (n + 1)
    hi[n], lo[n], ways[n] = np.zeros(1), np.zeros(1), np.ones(1)
    for stage in range(n - 1, -1, -1):
        i, j, after_j, col_j, fold = lay.stage_args(stage)
        hi[stage], lo[stage], ways[stage] = k.bounds_stage(
            lay.digits[stage], lay.offsets[stage], lay.dst[stage], i, j,
            after_j, col_j, fold, kind, table, rows, hi[stage + 1], lo[stage + 1],
            ways[stage + 1])
    return hi, lo, ways


def _forward_stage(k, lay, f, active, start, vals, mass, kind, table, rows, lf, prune, hi_b,
                   lo_b, lo_thr, hi_thr, max_pairs):
    """One stage forward: spread the pairs along the moves, then settle them."""
    i, j, after_j, col_j, fold = lay.stage_args(f)
    moves = int(np.sum(lay.offsets[f][active + 1] - lay.offsets[f][active]))
    if moves > max_pairs:
        raise _too_wide(f"{moves:,} moves at one stage", max_pairs)
    n_start, vals, mass = k.spread_stage(
        active, start, vals, mass, lay.digits[f], lay.offsets[f], lay.dst[f], i, j,
        after_j, col_j, fold, kind, table, rows, lf, lay.reach[f + 1].size,
        WINDOW)
    if vals.size > max_pairs:
        raise _too_wide(f"{vals.size:,} pairs at one stage", max_pairs)
    n_next = lay.reach[f + 1].size
    nb_hi = hi_b[f + 1] if prune else np.zeros(n_next)
    nb_lo = lo_b[f + 1] if prune else np.zeros(n_next)
    e, o, active, start, vals, mass = k.settle_stage(n_start, vals, mass, nb_hi, nb_lo, lo_thr,
                                                     hi_thr, prune)
    return active, start, vals, mass, e, o


def forward(lay: CompiledLayout, cell, region, progress: Progress = NO_PROGRESS,
            max_pairs: int | None = None) -> Result:
    """Extreme and settled-ordinary mass for the region (lo, hi), or with region None the
    whole null distribution of S.

    With a region the pass meets in the middle: the forward pairs and the laws of the rest of
    S (from the end backwards) are grown one stage at a time, always the smaller side, and
    where they meet each pair is settled against its state's law (`compiled.join_stage`)."""
    k = kernels()
    if max_pairs is None:
        max_pairs = pair_limit(lay.nbytes)
        if max_pairs == 0:
            raise TooWide(f"{lay.nbytes / 1e6:.3g} MB of layout, past the memory budget of "
                          f"{memory_budget() / 1e9:g} GB ('set memory')", budget=True)
    kind, table, rows = _gain_args(cell)
    prune = region is not None
    lo_thr, hi_thr = (float(region[0]), float(region[1])) if prune else (-np.inf, np.inf)
    hi_b, lo_b, _ = bounds(lay, cell) if prune else (None, None, None)
    lf = gammaln(np.arange(int(sum(lay.rows)) + 2, dtype=float) + 1.0)
    active, start = np.zeros(1, np.int64), np.array([0, 1], np.int64)
    vals, mass = np.zeros(1, np.int64), np.ones(1)
    b_start, b_vals, b_mass = np.array([0, 1], np.int64), np.zeros(1, np.int64), np.ones(1)
    extreme = ordinary = 0.0
    f, b = 0, lay.stages
    while f < b and active.size:
        progress.step((f + lay.stages - b) / lay.stages, "network")
        # a whole column at a time, the smaller side first: they meet at a column boundary,
        # where the states are fewest
        if not prune or vals.size <= b_vals.size:
            for _ in range(lay.per_column):
                if not active.size:
                    break
                active, start, vals, mass, e, o = _forward_stage(
                    k, lay, f, active, start, vals, mass, kind, table, rows, lf, prune,
                    hi_b, lo_b, lo_thr, hi_thr, max_pairs)
                f += 1
                extreme += e
                ordinary += o
        else:
            # only the states the remaining pairs can still reach need the laws
            mask = np.zeros(lay.reach[f].size, bool)
            mask[active] = True
            masks = {f: mask}
            for s in range(f, b - 1):
                masks[s + 1] = k.reach_mask(lay.offsets[s], lay.dst[s], masks[s],
                                            lay.reach[s + 1].size)
            for _ in range(lay.per_column):
                b -= 1
                i, j, after_j, col_j, fold = lay.stage_args(b)
                b_start, b_vals, b_mass = k.gather_stage(
                    lay.digits[b], masks[b], lay.offsets[b], lay.dst[b], i,
                    j, after_j, col_j, fold, kind, table, rows, lf, b_start, b_vals, b_mass,
                    WINDOW)
                if b_vals.size > max_pairs:
                    raise _too_wide(f"{b_vals.size:,} sums in the laws of the rest at one stage",
                                    max_pairs)
    progress.step(1.0, "network")
    if not prune:
        return Result(0.0, 0.0, vals.astype(float), mass)
    if active.size:
        e, o, worst = k.join_stage(active, start, vals, mass, b_start, b_vals, b_mass,
                                   lo_thr, hi_thr)
        if worst > 1e-9:
            raise ArithmeticError("the network lost probability mass; no exact p-value")
        extreme += e
        ordinary += o
    return Result(extreme, ordinary)
