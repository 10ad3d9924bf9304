"""The Monte Carlo loops compiled by numba, where the C loops (loops.c) are not built;
imported on first use only, so that starting permq does not wait for the compiler. Each does
the steps of its C twin in the same order (draws.py holds both to the numpy path)."""
import numpy as np

from .jit import njit


@njit
def _subset_sums_compiled(a, n1, r, s_out, u_out):
    """Sum of the chosen scores, and how many came from the second group."""
    size = r.shape[0]
    N = a.shape[0]
    w = a.copy()
    second = np.zeros(N, np.int64)
    second[n1:] = 1
    js = np.empty(n1, np.int64)
    for row in range(size):
        s = 0.0
        u = 0
        for i in range(n1):
            j = i + ((np.int64(r[row, i]) * (N - i)) >> 32)   # below 2^63: exact
            js[i] = j
            t = w[i]
            w[i] = w[j]
            w[j] = t
            f = second[i]
            second[i] = second[j]
            second[j] = f
            s += w[i]
            u += second[i]              # branch-free: the group of a chosen item is random
        s_out[row] = s
        u_out[row] = u
        for i in range(n1 - 1, -1, -1):   # undo the swaps: back to the original order
            j = js[i]
            t = w[i]
            w[i] = w[j]
            w[j] = t
            f = second[i]
            second[i] = second[j]
            second[j] = f


@njit
def _shuffle(work, moving, rrow):
    """work = moving after the n - 1 Fisher-Yates steps driven by one row of r."""
    n = moving.shape[0]
    work[:] = moving
    for i in range(n - 1):
        j = i + ((np.int64(rrow[i]) * (n - i)) >> 32)
        t = work[i]
        work[i] = work[j]
        work[j] = t


@njit
def _shuffled_dots_compiled(moving, fixed, r, out):
    size = r.shape[0]
    n = moving.shape[0]
    work = np.empty(n)
    for row in range(size):
        _shuffle(work, moving, r[row])
        s = 0.0
        for i in range(n):
            s += fixed[i] * work[i]
        out[row] = s




@njit
def _subset_sums_only(a, n1, r, s_out):
    size = r.shape[0]
    N = a.shape[0]
    w = a.copy()
    js = np.empty(n1, np.int64)
    for row in range(size):
        s = 0.0
        for i in range(n1):
            j = i + ((np.int64(r[row, i]) * (N - i)) >> 32)
            js[i] = j
            t = w[i]
            w[i] = w[j]
            w[j] = t
            s += w[i]
        s_out[row] = s
        for i in range(n1 - 1, -1, -1):   # undo the swaps: back to the original order
            j = js[i]
            t = w[i]
            w[i] = w[j]
            w[j] = t


@njit
def _flip_sums_compiled(w1, w2, both, bits, out1, out2, count):
    size = bits.shape[0]
    n = w1.shape[0]
    for row in range(size):
        s1 = 0.0
        s2 = 0.0
        k = 0
        for i in range(n):
            if (bits[row, i >> 6] >> np.uint64(i & 63)) & np.uint64(1):
                s1 += w1[i]
                if both:
                    s2 += w2[i]
                    k += 1
        out1[row] = s1
        if both:
            out2[row] = s2
            count[row] = k


@njit
def _group_sums_compiled(a, sizes, r, out):
    size = r.shape[0]
    N = a.shape[0]
    k = sizes.shape[0]
    m = N - sizes[k - 1]
    w = a.copy()
    js = np.empty(max(m, 1), np.int64)
    for row in range(size):
        for i in range(m):
            j = i + ((np.int64(r[row, i]) * (N - i)) >> 32)
            js[i] = j
            t = w[i]
            w[i] = w[j]
            w[j] = t
        place = 0
        for g in range(k):
            s = 0.0
            for c in range(sizes[g]):
                s += w[place]
                place += 1
            out[row, g] = s
        for i in range(m - 1, -1, -1):
            j = js[i]
            t = w[i]
            w[i] = w[j]
            w[j] = t


@njit
def _merge_count(v, buf):
    n = v.shape[0]
    inversions = 0
    width = 1
    while width < n:
        lo = 0
        while lo < n - width:
            mid = lo + width
            hi = min(lo + 2 * width, n)
            i, j, o = lo, mid, lo
            while i < mid and j < hi:
                if v[i] <= v[j]:
                    buf[o] = v[i]
                    i += 1
                else:
                    inversions += mid - i
                    buf[o] = v[j]
                    j += 1
                o += 1
            while i < mid:
                buf[o] = v[i]
                i += 1
                o += 1
            while j < hi:
                buf[o] = v[j]
                j += 1
                o += 1
            v[lo:hi] = buf[lo:hi]
            lo += 2 * width
        width *= 2
    return inversions


@njit
def _kendall_s_compiled(moving, order, tie_start, n1, n2, r, out):
    """Kendall's S of shuffled pairings in O(n log n) (Knight 1966), as permq_kendall_s."""
    size = r.shape[0]
    n = moving.shape[0]
    w = np.empty(n)
    z = np.empty(n)
    buf = np.empty(n)
    ties = not tie_start[1:].all()
    n0 = n * (n - 1) // 2
    for row in range(size):
        _shuffle(w, moving, r[row])
        for i in range(n):
            z[i] = w[order[i]]
        n3 = 0
        if ties:                         # sort within runs of tied fixed values; count n3
            start = 0
            for i in range(1, n + 1):
                if i == n or tie_start[i]:
                    if i - start > 1:
                        z[start:i] = np.sort(z[start:i])
                        run = 1
                        for c in range(start + 1, i + 1):
                            if c < i and z[c] == z[c - 1]:
                                run += 1
                            else:
                                n3 += run * (run - 1) // 2
                                run = 1
                    start = i
        out[row] = n0 - n1 - n2 + n3 - 2 * _merge_count(z, buf)
