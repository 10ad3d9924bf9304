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
from functools import lru_cache
from importlib.util import find_spec

import numpy as np

# numba is optional: without it the numpy path gives the same numbers, more slowly
HAVE_NUMBA = find_spec("numba") is not None


@lru_cache(maxsize=1)
def _compiled():
    """The compiled loops, imported (and loaded from numba's cache) on first use."""
    from . import compiled as many_compiled

    return many_compiled

TWO_SIDED, ONE_SIDED, QUADRATIC = 0, 1, 2    # statistic modes (see many_compiled)


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
    _compiled().row_pass(members, f.y, f.observed, f.totals, f.sizes, _starts(f.sizes),
                         f.inv_se, f.thr, f.edges, f.masked, f.mode, f.sign, step_down, marg, sd,
                         carry)
    return marg, sd, carry


def tile_statistics(members, f: Family, c0: int, c1: int, compiled: bool = True) -> np.ndarray:
    """(rows, c1 - c0) statistics; the columns c0 .. c1-1 must lie in one tile."""
    members = np.ascontiguousarray(members, dtype=np.int32)
    if not (compiled and HAVE_NUMBA):
        return _tile_numpy(members, f, c0, c1)
    out = np.empty((members.shape[0], c1 - c0))
    _compiled().tile(members, f.y, f.observed, f.totals, f.sizes, _starts(f.sizes), f.inv_se,
                     c0, c1 - c0, _tile_masked(f, c0), f.mode, f.sign, out)
    return out


# ---------------------------------------------------------------- tasks (run on any worker)

def row_task(job: Job, lo: int, hi: int, step_down: bool):
    """Counts over arrangements lo .. hi-1: exceedances, step-down and single-step max-T."""
    marg, sd, top = row_pass(job.members[lo:hi], job.family, step_down)
    single = top.size - np.searchsorted(np.sort(top), job.family.thr, side="left")
    return marg, sd, single.astype(np.int64)


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
