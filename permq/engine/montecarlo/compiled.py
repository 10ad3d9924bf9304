"""The compiled loops behind permq.engine.fastmc (numba), imported on first use only, so
that starting permq does not wait for the compiler."""
import numba
import numpy as np


@numba.njit(cache=True, nogil=True)
def _subset_sums_compiled(a, n1, r, s_out, u_out, g_out):
    """Sum of the chosen scores, how many came from the second group, and their sum."""
    size = r.shape[0]
    N = a.shape[0]
    w = a.copy()
    second = np.zeros(N, np.int64)
    second[n1:] = 1
    js = np.empty(n1, np.int64)
    for row in range(size):
        s = 0.0
        g = 0.0
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
            g += w[i] * second[i]
        s_out[row] = s
        u_out[row] = u
        g_out[row] = g
        for i in range(n1 - 1, -1, -1):   # undo the swaps: back to the original order
            j = js[i]
            t = w[i]
            w[i] = w[j]
            w[j] = t
            f = second[i]
            second[i] = second[j]
            second[j] = f


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




@numba.njit(cache=True, nogil=True)
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
