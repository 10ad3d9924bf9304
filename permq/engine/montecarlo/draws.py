"""Monte Carlo inner loops, compiled, with a pure-numpy path that gives the same numbers.

A random n1-subset comes from a partial Fisher-Yates shuffle of 0..N-1 driven by 32-bit random
integers r: step i swaps position i with position i + floor(r * (N - i) / 2^32) (the
multiply-shift map; its bias is below N / 2^32 per step, far under any Monte Carlo error). A
random sign pattern takes one bit of the generator's raw 64-bit output per item. The integers
come from the block's numpy generator, so every path draws exactly the same arrangements from
the same seed, and each sum runs item by item in the same order, so the numbers agree bit for
bit.

Paths, fastest first (`backend()`): the C loops of loops.c built at install ("c", native.py),
the same loops compiled by numba on first use ("numba", compiled.py), and numpy ("numpy").
Every function takes `compiled`: True for the fastest path there is, False for numpy, or a
path's name.
"""
from __future__ import annotations

import ctypes
from functools import lru_cache
from importlib.util import find_spec

import numpy as np

# numba is optional: without it (and without the C loops) the numpy path gives the same numbers
HAVE_NUMBA = find_spec("numba") is not None


@lru_cache(maxsize=1)
def kernels():
    """The numba loops, imported (and loaded from numba's cache) on first use."""
    from . import compiled as fastmc_kernels

    return fastmc_kernels


def _c_library():
    from .native import library

    return library()


def backend(compiled=True) -> str:
    """The path a call with this `compiled` argument takes: "c", "numba" or "numpy"."""
    if compiled is False:
        return "numpy"
    if compiled is True:
        if _c_library() is not None:
            return "c"
        return "numba" if HAVE_NUMBA else "numpy"
    if compiled == "c" and _c_library() is None:
        raise RuntimeError("the C loops are not built")
    return compiled


def _ptr(a: np.ndarray):
    return ctypes.c_void_p(a.ctypes.data)


def _rows(r: np.ndarray, dtype) -> tuple[np.ndarray, int]:
    """r as rows the C loops can walk (unit step within a row), and its row stride in items."""
    r = np.asarray(r, dtype=dtype)
    if r.ndim != 2 or r.strides[1] != r.itemsize or r.strides[0] % r.itemsize:
        r = np.ascontiguousarray(r)
    return r, r.strides[0] // r.itemsize if r.shape[0] else r.shape[1]


def _check(status: int) -> None:
    if status != 0:
        raise MemoryError("the compiled Monte Carlo loop could not allocate its work arrays")


def random_u32(rng: np.random.Generator, size: int, k: int) -> np.ndarray:
    """(size, k) 32-bit random integers from the generator's raw 64-bit output.

    Each row takes ceil(k / 2) raw values of its own, so the integers a draw gets do not
    depend on how the draws are cut into batches.
    """
    per_row = (k + 1) // 2
    raw = rng.bit_generator.random_raw(size * per_row)
    return raw.view(np.uint32).reshape(size, 2 * per_row)[:, :k]


def random_bits(rng: np.random.Generator, size: int, n: int) -> np.ndarray:
    """(size, ceil(n / 64)) raw 64-bit words: bit i % 64 of word i // 64 is item i's sign."""
    words = max(1, (n + 63) // 64)
    return rng.bit_generator.random_raw(size * words).reshape(size, words)


def unpack_bits(bits: np.ndarray, n: int) -> np.ndarray:
    """(size, n) booleans from random_bits' words (item i is bit i % 64 of word i // 64)."""
    little = np.ascontiguousarray(bits, dtype="<u8")
    flat = np.unpackbits(little.view(np.uint8), axis=1, bitorder="little")
    return flat[:, :n].astype(bool)


# ---------------------------------------------------------------- subsets (two samples)

def fisher_yates(N: int, steps: int, r: np.ndarray) -> np.ndarray:
    """(N, size) item indices after `steps` multiply-shift swaps of 0..N-1, one column a draw."""
    size = r.shape[0]
    idx = np.repeat(np.arange(N, dtype=np.int64)[:, None], size, axis=1)
    cols = np.arange(size)
    rt = np.ascontiguousarray(r[:, :steps].T).astype(np.uint64)
    for i in range(steps):
        j = i + ((rt[i] * np.uint64(N - i)) >> np.uint64(32)).astype(np.int64)
        keep = idx[i].copy()
        idx[i] = idx[j, cols]
        idx[j, cols] = keep
    return idx


def _running_sum(rows: np.ndarray) -> np.ndarray:
    """Sum of the rows of a (m, size) array, row after row (the C loops' order)."""
    out = np.zeros(rows.shape[1])
    for row in rows:
        out += row
    return out


def _subset_sums_numpy(a, n1, r, sums_only=False):
    chosen = fisher_yates(a.shape[0], n1, r)[:n1]     # (n1, size)
    vals = a[chosen]
    s = _running_sum(vals)
    if sums_only:
        return s, None
    return s, (chosen >= n1).sum(axis=0)


def subset_sums(a, n1: int, r: np.ndarray, compiled=True, sums_only: bool = False):
    """For each row of random integers r: (sum of the chosen scores, how many chosen items
    came from the second group (index >= n1)); with sums_only, (sums, None)."""
    a = np.ascontiguousarray(a, dtype=np.float64)
    path = backend(compiled)
    size = r.shape[0]
    if path == "c":
        rr, stride = _rows(r, np.uint32)
        s = np.empty(size)
        u = None if sums_only else np.empty(size, np.int64)
        _check(_c_library().permq_subset_sums(_ptr(a), a.shape[0], n1, _ptr(rr), stride, size,
                                              _ptr(s), None if sums_only else _ptr(u)))
        return s, u
    if path == "numba":
        rr = np.ascontiguousarray(r)
        if sums_only:
            s = np.empty(size)
            kernels()._subset_sums_only(a, n1, rr, s)
            return s, None
        s, u = np.empty(size), np.empty(size, np.int64)
        kernels()._subset_sums_compiled(a, n1, rr, s, u)
        return s, u
    return _subset_sums_numpy(a, n1, r, sums_only)


_MASK64 = (1 << 64) - 1


def _pcg64_words(bits) -> np.ndarray:
    """A PCG64's state and increment as four 64-bit words (high, low; high, low)."""
    st = bits.state["state"]
    s, inc = st["state"], st["inc"]
    return np.array([s >> 64, s & _MASK64, inc >> 64, inc & _MASK64], dtype=np.uint64)


def _set_pcg64_words(bits, words: np.ndarray) -> None:
    state = bits.state
    state["state"]["state"] = (int(words[0]) << 64) | int(words[1])
    bits.state = state


def subset_sums_drawn(a, n1: int, rng: np.random.Generator, size: int, compiled=True,
                      sums_only: bool = False):
    """subset_sums(a, n1, random_u32(rng, size, n1)): the same draws and numbers, and the
    generator left where random_u32 leaves it. The C loops step numpy's PCG64 themselves, so
    the random integers never pass through memory; other paths draw them first."""
    path = backend(compiled)
    bits = rng.bit_generator
    lib = _c_library() if path == "c" else None
    fused = getattr(lib, "permq_subset_sums_pcg", None) if lib is not None else None
    if fused is None or type(bits) is not np.random.PCG64 or n1 < 1:
        return subset_sums(a, n1, random_u32(rng, size, n1), compiled, sums_only)
    a = np.ascontiguousarray(a, dtype=np.float64)
    words = _pcg64_words(bits)
    s = np.empty(size)
    u = None if sums_only else np.empty(size, np.int64)
    packed = _packed_integers(a, n1, sums_only)
    if packed is not None and getattr(lib, "permq_subset_sums_pcg_int", None) is not None:
        v, shift = packed
        _check(lib.permq_subset_sums_pcg_int(_ptr(v), a.shape[0], n1, shift, _ptr(words), size,
                                             _ptr(s), None if sums_only else _ptr(u)))
    else:
        _check(fused(_ptr(a), a.shape[0], n1, _ptr(words), size, _ptr(s),
                     None if sums_only else _ptr(u)))
    _set_pcg64_words(bits, words)
    return s, u


def _packed_integers(a: np.ndarray, n1: int, sums_only: bool):
    """Whole-number scores as 64-bit integers, each shifted left past the bits of the count
    of second-group items (plus 1 for those items), with the shift; None unless every sum of
    them is exact in floating point (below 2^53) and the packed sums fit in 62 bits."""
    if not np.all(np.isfinite(a)) or not np.array_equal(a, np.round(a)):
        return None
    bound = float(np.abs(a).sum())
    if bound >= 2.0 ** 53:
        return None
    shift = 0 if sums_only else max(1, int(n1).bit_length())   # 2^shift > n1 >= u
    if bound * 2.0 ** shift + n1 >= 2.0 ** 62:
        return None
    v = a.astype(np.int64) << shift
    if not sums_only:
        v[n1:] += 1
    return np.ascontiguousarray(v), shift


# ---------------------------------------------------------------- full shuffles (association)

def _shuffled_numpy(moving, r):
    """(n, size) shuffled copies of `moving`, one column a draw (n - 1 steps)."""
    n = moving.shape[0]
    return moving[fisher_yates(n, n - 1, r)]


def _shuffled_dots_numpy(moving, fixed, r):
    work = _shuffled_numpy(moving, r)
    return _running_sum(fixed[:, None] * work)


def shuffled_dots(moving, fixed, r: np.ndarray, compiled=True) -> np.ndarray:
    """sum_i fixed_i * moving[pi(i)] for the full Fisher-Yates shuffle pi of each row of r
    (r has n - 1 random integers a row)."""
    moving = np.ascontiguousarray(moving, dtype=np.float64)
    fixed = np.ascontiguousarray(fixed, dtype=np.float64)
    path = backend(compiled)
    out = np.empty(r.shape[0])
    if path == "c":
        rr, stride = _rows(r, np.uint32)
        _check(_c_library().permq_shuffled_dots(_ptr(moving), _ptr(fixed), moving.shape[0],
                                                _ptr(rr), stride, r.shape[0], _ptr(out)))
        return out
    if path == "numba":
        kernels()._shuffled_dots_compiled(moving, fixed, np.ascontiguousarray(r), out)
        return out
    return _shuffled_dots_numpy(moving, fixed, r)


# ---------------------------------------------------------------- Kendall's S of shuffles

class KendallPairs:
    """The fixed side of Kendall's S for shuffled pairings: the order of the fixed values, where
    their runs of ties start, and the tied pairs on each side."""

    def __init__(self, fixed, moving):
        self.fixed = np.ascontiguousarray(fixed, dtype=np.float64)
        self.moving = np.ascontiguousarray(moving, dtype=np.float64)
        self.order = np.argsort(self.fixed, kind="stable").astype(np.int64)
        sf = self.fixed[self.order]
        self.tie_start = np.r_[True, sf[1:] != sf[:-1]].astype(np.uint8)
        self.n_fixed_ties = _tied_pairs(self.fixed)
        self.n_moving_ties = _tied_pairs(self.moving)


def _tied_pairs(v) -> int:
    _, c = np.unique(v, return_counts=True)
    return int((c * (c - 1) // 2).sum())


def _kendall_numpy(pairs: KendallPairs, r):
    n = pairs.fixed.shape[0]
    work = _shuffled_numpy(pairs.moving, r).T                  # (size, n)
    i, j = np.triu_indices(n, 1)
    sx = np.sign(pairs.fixed[i] - pairs.fixed[j])
    out = np.empty(work.shape[0])
    step = max(1, (1 << 22) // max(1, len(i)))
    for lo in range(0, work.shape[0], step):
        blk = work[lo:lo + step]
        out[lo:lo + step] = np.sign(blk[:, i] - blk[:, j]) @ sx     # integers: exact
    return out


def kendall_s(pairs: KendallPairs, r: np.ndarray, compiled=True) -> np.ndarray:
    """Kendall's S = sum_{i<j} sign(fixed_i - fixed_j) sign(w_i - w_j) for w the full
    Fisher-Yates shuffle of the moving values by each row of r (n - 1 integers a row): in
    O(n log n) a draw compiled (Knight 1966), over every pair with numpy; the same integers."""
    path = backend(compiled)
    n = pairs.fixed.shape[0]
    out = np.empty(r.shape[0])
    if path == "c":
        rr, stride = _rows(r, np.uint32)
        _check(_c_library().permq_kendall_s(
            _ptr(pairs.moving), _ptr(pairs.order), _ptr(pairs.tie_start), n, pairs.n_fixed_ties,
            pairs.n_moving_ties, _ptr(rr), stride, r.shape[0], _ptr(out)))
        return out
    if path == "numba":
        kernels()._kendall_s_compiled(pairs.moving, pairs.order, pairs.tie_start.astype(np.bool_),
                                      pairs.n_fixed_ties, pairs.n_moving_ties,
                                      np.ascontiguousarray(r), out)
        return out
    return _kendall_numpy(pairs, r)


# ---------------------------------------------------------------- sign flips (one sample)

def _flip_sums_numpy(w1, w2, n, bits):
    flips = unpack_bits(bits, n)
    s1 = _running_sum(np.where(flips.T, w1[:, None], 0.0))
    if w2 is None:
        return s1, None, None
    return s1, _running_sum(np.where(flips.T, w2[:, None], 0.0)), flips.sum(axis=1)


def flip_sums(w1, bits: np.ndarray, w2=None, compiled=True):
    """For each row of random_bits: sum of w1 over the items with a positive sign; with w2,
    also the sum of w2 over them and how many there are (else None, None)."""
    w1 = np.ascontiguousarray(w1, dtype=np.float64)
    w2 = None if w2 is None else np.ascontiguousarray(w2, dtype=np.float64)
    n, size = w1.shape[0], bits.shape[0]
    path = backend(compiled)
    if path == "numpy":
        return _flip_sums_numpy(w1, w2, n, bits)
    s1 = np.empty(size)
    s2 = None if w2 is None else np.empty(size)
    k = None if w2 is None else np.empty(size, np.int64)
    if path == "c":
        bb, stride = _rows(bits, np.uint64)
        _check(_c_library().permq_flip_sums(
            _ptr(w1), None if w2 is None else _ptr(w2), n, _ptr(bb), stride, size, _ptr(s1),
            None if w2 is None else _ptr(s2), None if w2 is None else _ptr(k)))
    else:
        both = w2 is not None
        kernels()._flip_sums_compiled(w1, w2 if both else w1, both, np.ascontiguousarray(bits), s1,
                                      s2 if both else s1, k if both else np.empty(size, np.int64))
    return s1, s2, k


# ---------------------------------------------------------------- groups (k samples)

def _group_sums_numpy(a, sizes, r):
    N = a.shape[0]
    idx = fisher_yates(N, N - int(sizes[-1]), r)
    vals = a[idx]                                               # (N, size)
    starts = np.concatenate([[0], np.cumsum(sizes)])
    return np.stack([_running_sum(vals[starts[g]:starts[g + 1]]) for g in range(len(sizes))],
                    axis=1)


def group_sums(a, sizes, r: np.ndarray, compiled=True) -> np.ndarray:
    """(size, k) score sums of each group for the random assignment of each row of r
    (N - sizes[-1] integers a row): the shuffled scores fill the groups in order."""
    a = np.ascontiguousarray(a, dtype=np.float64)
    sizes = np.ascontiguousarray(sizes, dtype=np.int64)
    path = backend(compiled)
    if path == "numpy":
        return _group_sums_numpy(a, sizes, r)
    out = np.empty((r.shape[0], len(sizes)))
    if path == "c":
        rr, stride = _rows(r, np.uint32)
        _check(_c_library().permq_group_sums(_ptr(a), a.shape[0], _ptr(sizes), len(sizes),
                                             _ptr(rr), stride, r.shape[0], _ptr(out)))
    else:
        kernels()._group_sums_compiled(a, sizes, np.ascontiguousarray(r), out)
    return out


def __getattr__(name):
    """`numba` itself, for modules that define compiled loops of their own (imported lazily)."""
    if name == "numba" and HAVE_NUMBA:
        import numba

        return numba
    raise AttributeError(name)
