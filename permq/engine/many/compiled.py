"""The compiled loops of the many-response engine (numba), imported on first use.

`row_statistics` computes one arrangement's statistics on one tile of tests; `row_pass` streams
arrangements over every tile (raw exceedances, max-T step-down counts, per-arrangement maxima);
`tile` fills the full matrix of a tile. The formulas and the order of every addition are those
of the numpy path in `many_kernels`, so both give the same numbers.
"""
from __future__ import annotations

import numpy as np

from ..montecarlo.jit import njit


@njit
def row_statistics(members, r, yt, ot, totals, sizes, starts, inv_se, w, masked, mode, sign,
                   acc, cnt, out):  # pragma: no cover - compiled
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


@njit
def row_pass(members, y, observed, totals, sizes, starts, inv_se, thr, edges, masked_tiles,
             mode, sign, step_down, marg, sd, carry):  # pragma: no cover - compiled
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
            row_statistics(members, r, yt, ot, tt, sizes, starts, se, w, masked, mode,
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


@njit
def tile(members, y, observed, totals, sizes, starts, inv_se, c0, w, masked, mode, sign,
         out):  # pragma: no cover - compiled
    k = sizes.shape[0]
    acc = np.zeros((max(1, k - 1), w))
    cnt = np.zeros((max(1, k - 1), w))
    t = np.empty(w)
    yt = np.ascontiguousarray(y[:, c0:c0 + w])
    ot = np.ascontiguousarray(observed[:, c0:c0 + w]) if masked else yt
    tt = totals[c0:c0 + w].copy()
    se = inv_se[c0:c0 + w].copy()
    for r in range(members.shape[0]):
        row_statistics(members, r, yt, ot, tt, sizes, starts, se, w, masked, mode, sign,
                        acc, cnt, t)
        for j in range(w):
            out[r, j] = t[j]
