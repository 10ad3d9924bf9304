"""Group score sums of every assignment, listed (`enumerate_group_sums`) or sampled
(`sample_group_sums`), and the design arrays they start from."""
from __future__ import annotations

import itertools
from functools import lru_cache
from typing import Iterator

import numpy as np

from ...errors import DataError
from ...plan.sizes import big
from ..core.counting import multinomial
from ..montecarlo import sampling
from ..montecarlo.draws import group_sums, random_u32
from ..core.progress import NO_PROGRESS, Progress

ROWS = 1 << 18                   # rows handled at once when listing or counting


# ----------------------------------------------------------------------------- design

def design(values, groups) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Check the inputs; return (values, groups, sizes) as arrays."""
    x = np.asarray(values, dtype=float).ravel()
    g = np.asarray(groups).ravel()
    if x.size != g.size:
        raise DataError(f"{x.size} values but {g.size} group codes")
    if not np.all(np.isfinite(x)):
        raise DataError("values must be finite numbers (no missing values)")
    if g.size == 0 or not np.issubdtype(g.dtype, np.integer) or g.min() < 0:
        raise DataError("group codes must be integers 0 .. k-1")
    g = g.astype(np.int64)
    sizes = np.bincount(g)
    if sizes.size < 2:
        raise DataError("at least two groups are needed")
    if np.any(sizes == 0):
        empty = ", ".join(str(i) for i in np.flatnonzero(sizes == 0))
        raise DataError(f"group(s) {empty} have no values")
    return x, g, sizes


def ordered_by_group(a: np.ndarray, groups: np.ndarray) -> np.ndarray:
    """Scores laid out group after group (stable), the layout the listing and sampling use."""
    return a[np.argsort(groups, kind="stable")]


# ----------------------------------------------------------------------------- listing

@lru_cache(maxsize=64)
def _combination_tables(r: int, n: int) -> tuple[np.ndarray, np.ndarray]:
    """All n-subsets of range(r) as rows, and their complements."""
    pick = np.array(list(itertools.combinations(range(r), n)), dtype=np.int64).reshape(-1, n)
    mask = np.ones((len(pick), r), dtype=bool)
    mask[np.arange(len(pick))[:, None], pick] = False
    keep = np.nonzero(mask)[1].reshape(len(pick), r - n)
    return pick, keep


def enumerate_group_sums(scores, sizes, progress: Progress = NO_PROGRESS) -> Iterator[np.ndarray]:
    """Yield the group sums of every assignment, in chunks of shape (rows, k, p).

    `scores` is (N,) or (N, p); every one of the N!/(n_1!...n_k!) assignments of the items
    to groups of the given sizes appears exactly once.
    """
    a = np.asarray(scores, dtype=float).reshape(len(scores), -1)
    sizes = [int(n) for n in sizes]
    rem = np.arange(a.shape[0], dtype=np.int64)[None, :]
    sums = np.zeros((1, 0, a.shape[1]))
    total = big(multinomial(sizes))
    done = [0.0]
    for chunk in _expand(a, sizes, 0, rem, sums):
        done[0] += len(chunk)
        progress.step(done[0] / total, "listing assignments")
        yield chunk


def _expand(a, sizes, g, rem, sums):
    if g == len(sizes) - 1:
        yield np.concatenate([sums, a[rem].sum(axis=1)[:, None, :]], axis=1)
        return
    r = rem.shape[1]
    pick, keep = _combination_tables(r, sizes[g])
    step = max(1, ROWS // len(pick))
    for lo in range(0, len(rem), step):
        part, part_sums = rem[lo:lo + step], sums[lo:lo + step]
        chosen = a[part[:, pick]].sum(axis=2)                      # (m, P, p)
        new_rem = part[:, keep].reshape(-1, r - sizes[g])
        new_sums = np.concatenate([np.repeat(part_sums, len(pick), axis=0),
                                   chosen.reshape(-1, 1, a.shape[1])], axis=1)
        yield from _expand(a, sizes, g + 1, new_rem, new_sums)


# ----------------------------------------------------------------------------- sampling

def sample_group_sums(scores, sizes, seed: int, draws: int,
                      progress: Progress = NO_PROGRESS) -> Iterator[np.ndarray]:
    """Yield group sums of `draws` random assignments, one seeded block at a time: (b, k, p)."""
    a = np.asarray(scores, dtype=float).reshape(len(scores), -1)
    sizes = np.asarray(sizes, dtype=np.int64)
    steps = max(1, a.shape[0] - int(sizes[-1]))    # the last group takes what is left

    def work(size, rng):
        # one shuffle a draw (compiled; the numpy path gives the same sums), every column on it
        r = random_u32(rng, size, steps)
        return np.stack([group_sums(a[:, j], sizes, r) for j in range(a.shape[1])], axis=2)

    # blocks on all cores, in order; a bounded window keeps memory flat
    yield from sampling.iter_blocks(seed, draws, work, progress, "sampling assignments")


# ----------------------------------------------------------------------------- counting
