"""Inner loops of the many-response engine: every test's statistic on every arrangement.

A `Family` holds the tests (columns) in step-down order, their standardised scores, and the
thresholds t_j - tol_j. A reference set is given by its members: for each arrangement, the
units of the summed groups (kernel coordinates: groups 0 .. k-2 are summed, the largest group,
k-1, is had from the total), group after group, each in increasing unit order (`members_of`).
Per arrangement and test the statistic is:

- two groups (mode 0 two-sided, 1 one-sided): z = sign * S_0 (1/n_0 + 1/n_1) * inv_se, where
  S_0 is the sum of the scores of group 0 (scores centred on their observed mean and divided by
  their standard deviation, so that S_1 = -S_0) and n_0, n_1 the group's observed counts; the
  difference in mean scores over its standard error, on a scale fixed per test;
  two-sided t = |z|, one-sided t = z;
- k groups (mode 2): t = sum_g S_g^2 / n_g, the between-group sum of squares of the scores
  over their variance ((N-1) SSB / SST: Kruskal-Wallis H on mid-ranks, an increasing function
  of F on values).

A group left without values for a test contributes nothing (two groups: z = 0).

`row_pass` streams the arrangements once: exceedance counts per test (raw p-values), the
step-down counts of max-T (successive maxima over the tests after each one in step-down order)
and each arrangement's maximum over all tests (single-step max-T). `tile_statistics` gives the
full R x w matrix of a few tests (for min-P). The compiled loops (numba, when installed) and the
numpy path add in the same order and give the same numbers; both release the interpreter lock
in their long loops (numba nogil; numpy's array loops), so threads share the cores.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .fastmc import HAVE_NUMBA, numba

TWO_SIDED, ONE_SIDED, QUADRATIC = 0, 1, 2


@dataclass(frozen=True)
class Family:
    y: np.ndarray            # (N, m) standardised scores, 0 where missing; columns in order
    observed: np.ndarray     # (N, m) 1.0 where observed (or (N, 1) unused when none missing)
    totals: np.ndarray       # (m,) observed values per test
    sizes: np.ndarray        # (k,) group sizes in kernel coordinates (float)
    inv_se: np.ndarray       # (m,) two groups: 1 / sqrt(1/n_0 + 1/n_1) observed; else ones
    thr: np.ndarray          # (m,) t_obs - tol
    edges: np.ndarray        # (tiles + 1,) column boundaries of the tiles
    masked: np.ndarray       # (tiles,) the tile holds a missing value
    mode: int
    sign: float


@dataclass(frozen=True)
class Job:
    """What every task needs: the reference set and the family (scattered once to a cluster)."""

    members: np.ndarray      # (R, units summed) int32, see members_of
    family: Family


def members_of(codes_k, sizes) -> np.ndarray:
    """(R, N - n_last) units of groups 0 .. k-2 per arrangement row of kernel codes."""
    codes_k = np.atleast_2d(codes_k)
    summed = int(np.sum(sizes[:-1]))
    order = np.argsort(codes_k, axis=1, kind="stable")[:, :summed]
    return np.ascontiguousarray(order, dtype=np.int32)


def _starts(sizes) -> np.ndarray:
    return np.concatenate([[0], np.cumsum(sizes[:-1])]).astype(np.int64)


def _tile_masked(f: Family, c0: int) -> bool:
    return bool(f.masked[np.searchsorted(f.edges, c0, side="right") - 1])


# ---------------------------------------------------------------- numpy path

def _tile_numpy(members, f: Family, c0: int, c1: int) -> np.ndarray:
    """(rows, w) statistics of tests c0 .. c1-1 for every arrangement."""
    rows = members.shape[0]
    k = f.sizes.shape[0]
    w = c1 - c0
    masked = _tile_masked(f, c0)
    starts = _starts(f.sizes)
    acc = np.zeros((k - 1, rows, w))
    cnt = np.zeros((k - 1, rows, w)) if masked else None
    yt = f.y[:, c0:c1]
    ot = f.observed[:, c0:c1] if masked else None
    for grp in range(k - 1):
        for p in range(starts[grp], starts[grp] + int(f.sizes[grp])):
            acc[grp] += yt[members[:, p]]
            if masked:
                cnt[grp] += ot[members[:, p]]
    totals = f.totals[c0:c1]
    if f.mode == QUADRATIC:
        q = np.zeros((rows, w))
        tot_s = np.zeros((rows, w))
        tot_n = np.zeros((rows, w))
        for grp in range(k - 1):
            s = acc[grp]
            n = cnt[grp] if masked else np.full((rows, w), f.sizes[grp])
            tot_s += s
            tot_n += n
            with np.errstate(divide="ignore", invalid="ignore"):
                q += np.where(n > 0, s * s / n, 0.0)
        n_last = (totals[None, :] - tot_n) if masked else np.full((rows, w), f.sizes[k - 1])
        s_last = -tot_s
        with np.errstate(divide="ignore", invalid="ignore"):
            q += np.where(n_last > 0, s_last * s_last / n_last, 0.0)
        return q
    s = acc[0]
    n0 = cnt[0] if masked else np.full((rows, w), f.sizes[0])
    n1 = (totals[None, :] - n0) if masked else np.full((rows, w), f.sizes[1])
    with np.errstate(divide="ignore", invalid="ignore"):
        z = f.sign * (s * (1.0 / n0 + 1.0 / n1)) * f.inv_se[None, c0:c1]
    z = np.where((n0 == 0) | (n1 == 0), 0.0, z)
    return np.abs(z) if f.mode == TWO_SIDED else z


def _row_pass_numpy(members, f: Family, step_down: bool):
    rows = members.shape[0]
    m = f.y.shape[1]
    marg = np.zeros(m, dtype=np.int64)
    sd = np.zeros(m, dtype=np.int64)
    carry = np.full(rows, -np.inf)
    for ti in range(len(f.edges) - 2, -1, -1):
        c0, c1 = int(f.edges[ti]), int(f.edges[ti + 1])
        t = _tile_numpy(members, f, c0, c1)
        thr = f.thr[c0:c1]
        marg[c0:c1] = np.count_nonzero(t >= thr[None, :], axis=0)
        if step_down:
            tails = np.maximum.accumulate(t[:, ::-1], axis=1)[:, ::-1]
            np.maximum(tails, carry[:, None], out=tails)
            sd[c0:c1] = np.count_nonzero(tails >= thr[None, :], axis=0)
            carry = tails[:, 0].copy()
        else:
            carry = np.maximum(carry, t.max(axis=1))
    return marg, sd, carry


# ---------------------------------------------------------------- compiled path

if HAVE_NUMBA:
    @numba.njit(cache=True, nogil=True)
    def _row_statistics(members, r, yt, ot, totals, sizes, starts, inv_se, w, masked, mode,
                        sign, acc, cnt, out):  # pragma: no cover - compiled
        """Statistics of one arrangement on one tile (yt, ot: the tile's columns)."""
        k = sizes.shape[0]
        for grp in range(k - 1):
            a = acc[grp]
            c = cnt[grp]
            for j in range(w):
                a[j] = 0.0
            if masked:
                for j in range(w):
                    c[j] = 0.0
            for p in range(starts[grp], starts[grp] + np.int64(sizes[grp])):
                u = members[r, p]
                yu = yt[u]
                for j in range(w):
                    a[j] += yu[j]
                if masked:
                    ou = ot[u]
                    for j in range(w):
                        c[j] += ou[j]
        if mode == 2:
            last = k - 1
            for j in range(w):
                q = 0.0
                tot_s = 0.0
                tot_n = 0.0
                for grp in range(k - 1):
                    s = acc[grp, j]
                    n = cnt[grp, j] if masked else sizes[grp]
                    tot_s += s
                    tot_n += n
                    if n > 0:
                        q += s * s / n
                n_last = (totals[j] - tot_n) if masked else sizes[last]
                s_last = -tot_s
                if n_last > 0:
                    q += s_last * s_last / n_last
                out[j] = q
            return
        a = acc[0]
        if not masked:
            both = 1.0 / sizes[0] + 1.0 / sizes[1]
            for j in range(w):
                z = sign * (a[j] * both) * inv_se[j]
                out[j] = abs(z) if mode == 0 else z
            return
        c = cnt[0]
        for j in range(w):
            n0 = c[j]
            n1 = totals[j] - n0
            if n0 == 0 or n1 == 0:
                z = 0.0
            else:
                z = sign * (a[j] * (1.0 / n0 + 1.0 / n1)) * inv_se[j]
            out[j] = abs(z) if mode == 0 else z

    @numba.njit(cache=True, nogil=True)
    def _row_pass_compiled(members, y, observed, totals, sizes, starts, inv_se, thr, edges,
                           masked_tiles, mode, sign, step_down, marg, sd,
                           carry):  # pragma: no cover - compiled
        rows = members.shape[0]
        k = sizes.shape[0]
        width = 0
        for ti in range(edges.shape[0] - 1):
            width = max(width, edges[ti + 1] - edges[ti])
        acc = np.zeros((max(1, k - 1), width))
        cnt = np.zeros((max(1, k - 1), width))
        t = np.empty(width)
        for ti in range(edges.shape[0] - 2, -1, -1):
            c0 = edges[ti]
            w = edges[ti + 1] - c0
            masked = masked_tiles[ti]
            yt = np.ascontiguousarray(y[:, c0:c0 + w])
            ot = np.ascontiguousarray(observed[:, c0:c0 + w]) if masked else yt
            th = thr[c0:c0 + w].copy()
            tt = totals[c0:c0 + w].copy()
            se = inv_se[c0:c0 + w].copy()
            mg = np.zeros(w, np.int64)
            sdc = np.zeros(w, np.int64)
            for r in range(rows):
                _row_statistics(members, r, yt, ot, tt, sizes, starts, se, w, masked, mode,
                                sign, acc, cnt, t)
                run = carry[r]
                if step_down:
                    for j in range(w - 1, -1, -1):
                        v = t[j]
                        mg[j] += v >= th[j]
                        run = max(run, v)
                        sdc[j] += run >= th[j]
                else:
                    for j in range(w):
                        v = t[j]
                        mg[j] += v >= th[j]
                        run = max(run, v)
                carry[r] = run
            for j in range(w):
                marg[c0 + j] += mg[j]
                sd[c0 + j] += sdc[j]

    @numba.njit(cache=True, nogil=True)
    def _tile_compiled(members, y, observed, totals, sizes, starts, inv_se, c0, w, masked, mode,
                       sign, out):  # pragma: no cover - compiled
        k = sizes.shape[0]
        acc = np.zeros((max(1, k - 1), w))
        cnt = np.zeros((max(1, k - 1), w))
        t = np.empty(w)
        yt = np.ascontiguousarray(y[:, c0:c0 + w])
        ot = np.ascontiguousarray(observed[:, c0:c0 + w]) if masked else yt
        tt = totals[c0:c0 + w].copy()
        se = inv_se[c0:c0 + w].copy()
        for r in range(members.shape[0]):
            _row_statistics(members, r, yt, ot, tt, sizes, starts, se, w, masked, mode, sign,
                            acc, cnt, t)
            for j in range(w):
                out[r, j] = t[j]


# ---------------------------------------------------------------- entry points

def row_pass(members, f: Family, step_down: bool, compiled: bool = True):
    """(exceedance counts, step-down counts, per-row maximum) over these arrangements."""
    members = np.ascontiguousarray(members, dtype=np.int32)
    if not (compiled and HAVE_NUMBA):
        return _row_pass_numpy(members, f, step_down)
    m = f.y.shape[1]
    marg = np.zeros(m, dtype=np.int64)
    sd = np.zeros(m, dtype=np.int64)
    carry = np.full(members.shape[0], -np.inf)
    _row_pass_compiled(members, f.y, f.observed, f.totals, f.sizes, _starts(f.sizes), f.inv_se,
                       f.thr, f.edges, f.masked, f.mode, f.sign, step_down, marg, sd, carry)
    return marg, sd, carry


def tile_statistics(members, f: Family, c0: int, c1: int, compiled: bool = True) -> np.ndarray:
    """(rows, c1 - c0) statistics; the columns c0 .. c1-1 must lie in one tile."""
    members = np.ascontiguousarray(members, dtype=np.int32)
    if not (compiled and HAVE_NUMBA):
        return _tile_numpy(members, f, c0, c1)
    out = np.empty((members.shape[0], c1 - c0))
    _tile_compiled(members, f.y, f.observed, f.totals, f.sizes, _starts(f.sizes), f.inv_se, c0,
                   c1 - c0, _tile_masked(f, c0), f.mode, f.sign, out)
    return out


# ---------------------------------------------------------------- tasks (run on any worker)

def row_task(job: Job, lo: int, hi: int, step_down: bool):
    return row_pass(job.members[lo:hi], job.family, step_down)


def min_p_tile_task(job: Job, c0: int, c1: int, tol, carry, observed_counts):
    """Min-P on one tile: each arrangement's own p-value count per test, then either the
    minimum over the tile per arrangement (carry None), or the step-down counts given the
    minimum over the tiles after this one (carry)."""
    from .multiplicity import arrangement_counts

    counts = arrangement_counts(tile_statistics(job.members, job.family, c0, c1), tol)
    if carry is None:
        return counts.min(axis=1)
    tails = np.minimum.accumulate(counts[:, ::-1], axis=1)[:, ::-1]
    np.minimum(tails, carry[:, None], out=tails)
    return np.count_nonzero(tails <= observed_counts[None, :], axis=0)
