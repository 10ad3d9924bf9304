"""The trend counting step compiled (numba), imported on first use only."""
import numba


@numba.njit(cache=True, nogil=True)
def trend_step(P, Q, lo, hi, nlo, nhi, shifts, sizes, implied, counts, sums, radix, placed):
    """One unit placed: Q[s', t + shift_c] += P[s, t] for every class c it may join.

    Only each state's occupied range [lo, hi] of statistic values is visited; P is left all
    zero for the next step. Classes outer, states inner: each target cell gets at most one term
    per class, in class order, so the numpy path (`trend._step_numpy`) adds the very same
    numbers in the same order.
    """
    S = P.shape[0]
    C = sizes.shape[0]
    for c in range(C):
        shift = shifts[c]
        for s in range(S):
            if hi[s] < lo[s]:
                continue
            rest = placed - sums[s]
            if rest < 0 or rest > sizes[implied]:
                continue
            if c == implied:
                if rest >= sizes[implied]:
                    continue
                ns = s
            else:
                if counts[s, c] >= sizes[c]:
                    continue
                ns = s + radix[c]
            for t in range(lo[s], hi[s] + 1):
                Q[ns, t + shift] += P[s, t]
            if lo[s] + shift < nlo[ns]:
                nlo[ns] = lo[s] + shift
            if hi[s] + shift > nhi[ns]:
                nhi[ns] = hi[s] + shift
    for s in range(S):
        for t in range(lo[s], hi[s] + 1):
            P[s, t] = 0.0
