"""Complete enumeration in chunks: index arrays of every k-subset, every sign pattern."""
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
