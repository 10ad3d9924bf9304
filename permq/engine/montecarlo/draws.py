"""Compiled inner loops for Monte Carlo permutation, with a pure-numpy path that gives the
same numbers.

A random n1-subset comes from a partial Fisher-Yates shuffle of 0..N-1 driven by 32-bit random
integers r: step i swaps position i with position i + floor(r * (N - i) / 2^32) (the
multiply-shift map; its bias is below N / 2^32 per step, far under any Monte Carlo error). The
integers come from the block's numpy generator, so the compiled loop (numba, when installed)
and the numpy fallback draw exactly the same subsets from the same seed.
"""
from __future__ import annotations

import numpy as np

from functools import lru_cache
from importlib.util import find_spec

# numba is optional: without it the numpy path gives the same numbers, more slowly
HAVE_NUMBA = find_spec("numba") is not None


@lru_cache(maxsize=1)
def kernels():
    """The compiled loops, imported (and loaded from numba's cache) on first use."""
    from . import compiled as fastmc_kernels

    return fastmc_kernels


def random_u32(rng: np.random.Generator, size: int, k: int) -> np.ndarray:
    """(size, k) 32-bit random integers from the generator's raw 64-bit output.

    Each row takes ceil(k / 2) raw values of its own, so the integers a draw gets do not
    depend on how the draws are cut into batches.
    """
    per_row = (k + 1) // 2
    raw = rng.bit_generator.random_raw(size * per_row)
    return raw.view(np.uint32).reshape(size, 2 * per_row)[:, :k]


def _subset_sums_numpy(a, n1, r):
    size = r.shape[0]
    N = a.shape[0]
    idx = np.repeat(np.arange(N, dtype=np.int64)[:, None], size, axis=1)   # (N, size)
    cols = np.arange(size)
    rt = np.ascontiguousarray(r.T).astype(np.uint64)
    for i in range(n1):
        j = i + ((rt[i] * np.uint64(N - i)) >> np.uint64(32)).astype(np.int64)
        keep = idx[i].copy()
        idx[i] = idx[j, cols]
        idx[j, cols] = keep
    chosen = idx[:n1]                                  # (n1, size)
    moved = chosen >= n1
    vals = a[chosen]
    return vals.sum(axis=0), moved.sum(axis=0), np.where(moved, vals, 0.0).sum(axis=0)


def subset_sums(a, n1: int, r: np.ndarray, compiled: bool = True, sums_only: bool = False):
    """For each row of random integers r: (sum of the chosen scores, how many chosen items
    came from the second group (index >= n1), their sum); with sums_only, (sums, None, None)."""
    a = np.ascontiguousarray(a, dtype=np.float64)
    if sums_only and compiled and HAVE_NUMBA:
        s = np.empty(r.shape[0])
        kernels()._subset_sums_only(a, n1, np.ascontiguousarray(r), s)
        return s, None, None
    if compiled and HAVE_NUMBA:
        size = r.shape[0]
        s, u, g = np.empty(size), np.empty(size, np.int64), np.empty(size)
        kernels()._subset_sums_compiled(a, n1, np.ascontiguousarray(r), s, u, g)
        return s, u, g
    return _subset_sums_numpy(a, n1, r)


# ---------------------------------------------------------------- full shuffles (association)

def _shuffled_dots_numpy(moving, fixed, r):
    size = r.shape[0]
    n = moving.shape[0]
    work = np.repeat(moving[:, None], size, axis=1)          # (n, size)
    cols = np.arange(size)
    rt = np.ascontiguousarray(r.T).astype(np.int64)
    for i in range(n - 1):
        j = i + ((rt[i] * (n - i)) >> 32)
        keep = work[i].copy()
        work[i] = work[j, cols]
        work[j, cols] = keep
    return fixed @ work


def shuffled_dots(moving, fixed, r: np.ndarray, compiled: bool = True) -> np.ndarray:
    """sum_i fixed_i * moving[pi(i)] for the full Fisher-Yates shuffle pi of each row of r
    (r has n - 1 random integers a row)."""
    moving = np.ascontiguousarray(moving, dtype=np.float64)
    fixed = np.ascontiguousarray(fixed, dtype=np.float64)
    if compiled and HAVE_NUMBA:
        out = np.empty(r.shape[0])
        kernels()._shuffled_dots_compiled(moving, fixed, np.ascontiguousarray(r), out)
        return out
    return _shuffled_dots_numpy(moving, fixed, r)


def __getattr__(name):
    """`numba` itself, for modules that define compiled loops of their own (imported lazily)."""
    if name == "numba" and HAVE_NUMBA:
        import numba

        return numba
    raise AttributeError(name)
