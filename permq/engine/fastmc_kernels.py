"""The compiled loops behind permq.engine.fastmc (numba), imported on first use only, so
that starting permq does not wait for the compiler."""
import numba
import numpy as np


@numba.njit(cache=True, nogil=True)
def _subset_sums_compiled(a, n1, r, s_out, u_out, g_out):
    size = r.shape[0]
    N = a.shape[0]
    idx = np.arange(N)
    js = np.empty(n1, np.int64)
    for row in range(size):
        s = 0.0
        g = 0.0
        u = 0
        for i in range(n1):
            j = i + ((np.int64(r[row, i]) * (N - i)) >> 32)   # below 2^63: exact
            js[i] = j
            t = idx[i]
            idx[i] = idx[j]
            idx[j] = t
            v = a[idx[i]]
            s += v
            if idx[i] >= n1:
                u += 1
                g += v
        s_out[row] = s
        u_out[row] = u
        g_out[row] = g
        for i in range(n1 - 1, -1, -1):   # undo the swaps: back to 0..N-1
            j = js[i]
            t = idx[i]
            idx[i] = idx[j]
            idx[j] = t



@numba.njit(cache=True, nogil=True)
def _shuffled_dots_compiled(moving, fixed, r, out):
    size = r.shape[0]
    n = moving.shape[0]
    work = np.empty(n)
    for row in range(size):
        work[:] = moving
        for i in range(n - 1):
            j = i + ((np.int64(r[row, i]) * (n - i)) >> 32)
            t = work[i]
            work[i] = work[j]
            work[j] = t
        s = 0.0
        for i in range(n):
            s += fixed[i] * work[i]
        out[row] = s


