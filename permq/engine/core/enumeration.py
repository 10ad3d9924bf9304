"""Complete enumeration in chunks: index arrays of every k-subset, every sign pattern; every
distinct arrangement of a multiset."""
from __future__ import annotations

import itertools

import numpy as np

CHUNK = 100_000


def combinations_chunks(n: int, k: int, chunk: int = CHUNK):
    """Yield int arrays of shape (m, k) covering every k-subset of range(n) once."""
    it = itertools.combinations(range(n), k)
    while True:
        block = list(itertools.islice(it, chunk))
        if not block:
            return
        yield np.array(block, dtype=np.int64).reshape(len(block), k)


def sign_patterns_chunks(n: int, chunk_bits: int = 16):
    """Yield bool arrays (m, n): every subset of range(n) once (True = positive sign)."""
    total = 1 << n
    step = 1 << min(n, chunk_bits)
    bits = np.arange(n, dtype=np.int64)
    for start in range(0, total, step):
        codes = np.arange(start, min(total, start + step), dtype=np.int64)
        yield ((codes[:, None] >> bits) & 1).astype(bool)


def distinct_arrangements(codes, dtype=np.int64) -> np.ndarray:
    """Every distinct arrangement of the multiset `codes`, one row each."""
    codes = np.asarray(codes, dtype=np.int64)
    n = len(codes)
    values, counts = np.unique(codes, return_counts=True)
    rows = np.full((1, n), -1, dtype=dtype)
    for v, c in zip(values[:-1], counts[:-1]):
        free = np.nonzero(rows == -1)[1].reshape(len(rows), -1)
        combos = np.array(list(itertools.combinations(range(free.shape[1]), int(c))),
                          dtype=np.int64)
        reps = np.repeat(rows, len(combos), axis=0)
        where = free[:, combos].reshape(len(reps), int(c))
        reps[np.arange(len(reps))[:, None], where] = v
        rows = reps
    rows[rows == -1] = values[-1]
    return rows
