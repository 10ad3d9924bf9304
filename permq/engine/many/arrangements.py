"""Reference sets of group assignments, shared by every test of a family.

An arrangement gives each of the N units a group code; a reference set is an (R, N) int8
matrix of them. Every test of a family (every response, every pair of levels) is computed on the
same rows, so their joint distribution is kept.

- `enumerate_codes(sizes)`: every one of the N! / (n_1! ... n_k!) assignments, once each.
- `sampled_codes(codes, seed, draws)`: the observed assignment as row 0, then `draws` random
  ones from the seeded blocks of `sampling`. With two groups the draws are the ones the
  two-sample engine takes (a partial Fisher-Yates shuffle of the units, first group first, by
  the multiply-shift map of `fastmc`); with three or more, the ones the k-sample engine takes
  (a partial shuffle of the units laid out group after group, all but the last group's places). So a response's Monte Carlo p-value
  matches the one-response statement with the same seed and draws.
"""
from __future__ import annotations

import itertools
import math
from typing import Iterator

import numpy as np

from ..montecarlo.draws import fisher_yates, random_u32
from ..core.progress import NO_PROGRESS, Progress
from ..montecarlo.sampling import blocks


def layout(codes) -> np.ndarray:
    """Unit indices group after group (stable): the order the sampling streams see."""
    return np.argsort(np.asarray(codes), kind="stable")


# ---------------------------------------------------------------- complete enumeration

def enumerate_codes(sizes, progress: Progress = NO_PROGRESS) -> np.ndarray:
    """Every assignment of N units to groups of these sizes: one row each."""
    sizes = [int(n) for n in sizes]
    N = sum(sizes)
    rows = np.full((1, N), len(sizes) - 1, dtype=np.int8)
    free = np.arange(N)[None, :]              # units not yet given a group, per row
    for g, n in enumerate(sizes[:-1]):
        r = free.shape[1]
        total = math.comb(r, n)
        pick = np.fromiter(itertools.chain.from_iterable(itertools.combinations(range(r), n)),
                           dtype=np.int64, count=total * n).reshape(total, n)
        rest = np.ones((len(pick), r), dtype=bool)
        rest[np.arange(len(pick))[:, None], pick] = False
        keep = np.nonzero(rest)[1].reshape(len(pick), r - n)
        units = np.repeat(free, len(pick), axis=0)           # row i repeated once per subset
        rows = np.repeat(rows, len(pick), axis=0)
        chosen = np.take_along_axis(units, np.tile(pick, (len(free), 1)), axis=1)
        rows[np.arange(len(rows))[:, None], chosen] = g
        free = np.take_along_axis(units, np.tile(keep, (len(free), 1)), axis=1)
        progress.step((g + 1) / max(1, len(sizes) - 1), "listing arrangements")
    return rows


# ---------------------------------------------------------------- Monte Carlo

def _partial_shuffle(N: int, n1: int, r: np.ndarray) -> np.ndarray:
    """The first n1 positions after the partial Fisher-Yates steps driven by r (size, n1)."""
    size = r.shape[0]
    idx = np.repeat(np.arange(N, dtype=np.int64)[None, :], size, axis=0)
    rows = np.arange(size)
    r = r.astype(np.uint64)
    for i in range(n1):
        j = i + ((r[:, i] * np.uint64(N - i)) >> np.uint64(32)).astype(np.int64)
        keep = idx[rows, i].copy()
        idx[rows, i] = idx[rows, j]
        idx[rows, j] = keep
    return idx[:, :n1]


def sampled_codes(codes, seed: int, draws: int, progress: Progress = NO_PROGRESS) -> np.ndarray:
    """The observed assignment, then `draws` random ones: (draws + 1, N) int8."""
    return np.concatenate(list(sampled_windows(codes, seed, draws, draws + 1, progress)))


def sampled_windows(codes, seed: int, draws: int, window: int,
                    progress: Progress = NO_PROGRESS) -> Iterator[np.ndarray]:
    """The same rows as `sampled_codes`, at most `window` at a time (memory bounded)."""
    codes = np.asarray(codes).astype(np.int8)
    N = codes.size
    k = int(codes.max()) + 1
    order = layout(codes)                      # position p of the layout holds unit order[p]
    by_position = codes[order]                 # group of each layout position
    parts, held, done = [codes[None, :].copy()], 1, 0
    for _, size, rng in blocks(seed, draws):
        block = np.empty((size, N), dtype=np.int8)
        if k == 2:
            n1 = int(np.count_nonzero(codes == 0))
            first = _partial_shuffle(N, n1, random_u32(rng, size, n1))   # layout positions
            block[:] = 1
            block[np.arange(size)[:, None], order[first]] = 0
        else:   # the k-sample engine's partial shuffle: the last group takes what is left
            last = int(np.count_nonzero(codes == k - 1))
            r = random_u32(rng, size, max(1, N - last))
            perm = fisher_yates(N, max(1, N - last), r).T      # (size, N) positions
            block[np.arange(size)[:, None], order[perm]] = by_position[None, :]
        parts.append(block)
        held += size
        done += size
        progress.step(done / draws, "drawing arrangements")
        while held >= window:
            rows = np.concatenate(parts)
            yield rows[:window]
            parts, held = [rows[window:]], len(rows) - window
    if held:
        yield np.concatenate(parts)
