"""The table network's loops compiled (numba), for statistics that are exact integers.

Imported on first use only (`dense.kernels`). The network is the one of `network.py` (cells
column by column, the last row's forced cell folded into the cell above, states the remaining
row margins in mixed radix); here each stage's moves are kept as a compressed list (the moves
of state a are offsets[a] .. offsets[a + 1], each with the index of the state it reaches), and
the forward pass merges equal partial sums in a scratch window per state instead of sorting.

Gains: kind 0 reads a table of cell values cell[i, j, x] (int64); kind 1 is Kendall's S (see
`concordance.py`): x units in cell (i, j) gain x (placed in earlier columns above - below).
"""
import numpy as np

from ..montecarlo.jit import njit


@njit
def _state(code, radix, base, r, d):
    total = 0
    for k in range(r):
        d[k] = (code // radix[k]) % base[k]
        total += d[k]
    return total


@njit
def _row(dig, a, d, r):
    total = 0
    for k in range(r):
        d[k] = dig[a, k]
        total += d[k]
    return total


@njit
def digits_of(codes, radix, base):
    """(states, r): the remaining row margins of each state code."""
    r = radix.shape[0]
    out = np.empty((codes.shape[0], r), np.int64)
    for a in range(codes.shape[0]):
        for k in range(r):
            out[a, k] = (codes[a] // radix[k]) % base[k]
    return out


@njit
def _range(d, total, i, after_j, col_j, r):
    """(lo, hi, below, left) of the moves out of a state with digits d."""
    below = 0
    for k in range(i + 1, r):
        below += d[k]
    left = total - after_j
    if left < 0 or left > col_j:
        return 0, -1, below, left
    lo = left - below
    if lo < 0:
        lo = 0
    hi = d[i] if d[i] < left else left
    return lo, hi, below, left


@njit
def moves_of(codes, radix, base, i, after_j, col_j, fold):
    """The moves out of `codes` at a stage: (offsets, next codes)."""
    r = radix.shape[0]
    n = codes.shape[0]
    d = np.empty(r, np.int64)
    offsets = np.empty(n + 1, np.int64)
    offsets[0] = 0
    for a in range(n):
        total = _state(codes[a], radix, base, r, d)
        lo, hi, below, left = _range(d, total, i, after_j, col_j, r)
        offsets[a + 1] = offsets[a] + max(hi - lo + 1, 0)
    nxt = np.empty(offsets[n], np.int64)
    for a in range(n):
        total = _state(codes[a], radix, base, r, d)
        lo, hi, below, left = _range(d, total, i, after_j, col_j, r)
        m = offsets[a]
        for x in range(lo, hi + 1):
            c = codes[a] - x * radix[i]
            if fold:
                c -= (left - x) * radix[i + 1]
            nxt[m] = c
            m += 1
    return offsets, nxt


@njit
def locate(nxt, dense_limit):
    """(sorted distinct codes, index of each code among them)."""
    m = nxt.shape[0]
    low = nxt.min()
    span = nxt.max() - low + 1
    pos = np.empty(m, np.int32)
    if span <= dense_limit:
        index = np.full(span, -1, np.int64)
        for k in range(m):
            index[nxt[k] - low] = 0
        count = 0
        for v in range(span):
            if index[v] == 0:
                index[v] = count
                count += 1
        out = np.empty(count, np.int64)
        for v in range(span):
            if index[v] >= 0:
                out[index[v]] = v + low
        for k in range(m):
            pos[k] = index[nxt[k] - low]
        return out, pos
    out = np.unique(nxt)
    for k in range(m):
        pos[k] = np.searchsorted(out, nxt[k])
    return out, pos


@njit
def _gain(kind, cell, rows, d, i, j, x, left, col_j, fold, r):
    if kind == 0:
        g = cell[i, j, x]
        if fold:
            g += cell[i + 1, j, left - x]
        return g
    above = 0
    below = 0
    for k in range(r):
        if k < i:
            above += rows[k] - d[k]
        elif k > i:
            below += rows[k] - d[k]
    above -= col_j - left
    g = x * (above - below)
    if fold:
        g += (left - x) * (above + rows[i] - d[i])
    return g


@njit
def bounds_stage(dig, offsets, dst, i, j, after_j, col_j, fold, kind, cell,
                 rows, hi_next, lo_next, ways_next):
    """Longest and shortest remaining sum, and completions, of every state at a stage."""
    r = dig.shape[1]
    n = dig.shape[0]
    d = np.empty(r, np.int64)
    hi = np.empty(n)
    lo_b = np.empty(n)
    ways = np.empty(n)
    for a in range(n):
        total = _row(dig, a, d, r)
        lo, _, _, left = _range(d, total, i, after_j, col_j, r)
        h = -np.inf
        s = np.inf
        w = 0.0
        for m in range(offsets[a], offsets[a + 1]):
            x = lo + (m - offsets[a])
            g = _gain(kind, cell, rows, d, i, j, x, left, col_j, fold, r)
            b = dst[m]
            if g + hi_next[b] > h:
                h = g + hi_next[b]
            if g + lo_next[b] < s:
                s = g + lo_next[b]
            w += ways_next[b]
        hi[a] = h
        lo_b[a] = s
        ways[a] = w
    return hi, lo_b, ways


@njit
def _chunks(low, high, limit):
    """Cut the states into runs whose windows (lowest to highest sum) hold at most `limit`
    sums together (a run holds at least one state): the run of each state and each state's
    offset within its run."""
    n = low.shape[0]
    run = np.empty(n, np.int64)
    offset = np.empty(n, np.int64)
    current = 0
    filled = 0
    for b in range(n):
        span = high[b] - low[b] + 1 if high[b] >= low[b] else 0
        if filled > 0 and filled + span > limit:
            current += 1
            filled = 0
        run[b] = current
        offset[b] = filled
        filled += span
    return run, offset, current + 1


@njit
def _bucket(keys, buckets):
    """Stable counting sort of item indices by key: (order, start of each bucket)."""
    start = np.zeros(buckets + 1, np.int64)
    for e in range(keys.shape[0]):
        start[keys[e] + 1] += 1
    for c in range(buckets):
        start[c + 1] += start[c]
    fill = start[:-1].copy()
    order = np.empty(keys.shape[0], np.int64)
    for e in range(keys.shape[0]):
        order[fill[keys[e]]] = e
        fill[keys[e]] += 1
    return order, start


@njit
def _accumulate(n, low, high, run, offset, runs, order, run_start, m_from, m_to, m_gain, m_w,
                src_start, src_vals, src_mass, limit):
    """For every target state t, the sums v + gain of the pairs of each move's source, with
    mass w * p, merged: (start of each target's pairs, values, masses), values increasing.
    Moves are taken a run of targets at a time, in source order within a run, and added up
    in a dense window of the run (sequential reads; the window stays in cache)."""
    window = np.zeros(limit if limit > 0 else 1)
    size = max(1024, 2 * src_vals.shape[0])
    out_v = np.empty(size, np.int64)
    out_p = np.empty(size)
    t_start = np.zeros(n + 1, np.int64)
    pos = 0
    first_t = 0
    for c in range(runs):
        filled = 0
        last_t = first_t
        while last_t < n and run[last_t] == c:
            if high[last_t] >= low[last_t]:
                filled = offset[last_t] + high[last_t] - low[last_t] + 1
            last_t += 1
        if filled > window.shape[0]:
            window = np.zeros(filled)
        for u in range(run_start[c], run_start[c + 1]):
            e = order[u]
            t = m_to[e]
            q = m_from[e]
            base = offset[t] - low[t] + m_gain[e]
            w = m_w[e]
            for k in range(src_start[q], src_start[q + 1]):
                window[base + src_vals[k]] += w * src_mass[k]
        for t in range(first_t, last_t):
            t_start[t] = pos
            if high[t] < low[t]:
                continue
            span = high[t] - low[t] + 1
            if pos + span > size:
                size = max(2 * size, pos + span)
                grown_v = np.empty(size, np.int64)
                grown_p = np.empty(size)
                grown_v[:pos] = out_v[:pos]
                grown_p[:pos] = out_p[:pos]
                out_v = grown_v
                out_p = grown_p
            o = offset[t]
            for v in range(span):
                p = window[o + v]
                if p != 0.0:
                    out_v[pos] = v + low[t]
                    out_p[pos] = p
                    pos += 1
                    window[o + v] = 0.0
        first_t = last_t
    t_start[n] = pos
    return t_start, out_v[:pos], out_p[:pos]


@njit
def spread_stage(active, a_start, vals, mass, dig, offsets, dst, i, j, after_j,
                 col_j, fold, kind, cell, rows, lf, n_next, limit):
    """Carry every pair along every move and merge equal partial sums.

    The pairs of state active[q] are vals/mass[a_start[q]:a_start[q + 1]], sorted by value.
    Returns the next stage's pairs in the same form, for every state (n_start has n_next + 1
    entries)."""
    r = dig.shape[1]
    d = np.empty(r, np.int64)
    n_moves = 0
    for q in range(active.shape[0]):
        a = active[q]
        n_moves += offsets[a + 1] - offsets[a]
    m_src = np.empty(n_moves, np.int64)
    m_gain = np.empty(n_moves, np.int64)
    m_w = np.empty(n_moves)
    m_dst = np.empty(n_moves, np.int64)
    low = np.full(n_next, np.iinfo(np.int64).max)
    high = np.full(n_next, np.iinfo(np.int64).min)
    e = 0
    for q in range(active.shape[0]):
        a = active[q]
        total = _row(dig, a, d, r)
        lo, _, below, left = _range(d, total, i, after_j, col_j, r)
        di = d[i]
        norm = lf[di + below] - lf[left] - lf[di + below - left]
        first = vals[a_start[q]]
        last = vals[a_start[q + 1] - 1]
        for m in range(offsets[a], offsets[a + 1]):
            x = lo + (m - offsets[a])
            g = _gain(kind, cell, rows, d, i, j, x, left, col_j, fold, r)
            b = dst[m]
            m_src[e] = q
            m_gain[e] = g
            m_w[e] = np.exp(lf[di] - lf[x] - lf[di - x] + lf[below] - lf[left - x]
                            - lf[below - left + x] - norm)
            m_dst[e] = b
            if first + g < low[b]:
                low[b] = first + g
            if last + g > high[b]:
                high[b] = last + g
            e += 1
    run, offset, runs = _chunks(low, high, limit)
    order, run_start = _bucket(run[m_dst], runs)
    return _accumulate(n_next, low, high, run, offset, runs, order, run_start, m_src, m_dst,
                       m_gain, m_w, a_start, vals, mass, limit)


@njit
def settle_stage(n_start, vals, mass, hi_b, lo_b, lo_thr, hi_thr, prune):
    """Settle the pairs against the region with the bounds. Returns (extreme, ordinary, the
    states still carrying pairs, their starts, values, masses)."""
    n = n_start.shape[0] - 1
    extreme = 0.0
    ordinary = 0.0
    keep = np.zeros(vals.shape[0], np.bool_)
    states = 0
    for b in range(n):
        any_kept = False
        for k in range(n_start[b], n_start[b + 1]):
            v = vals[k]
            if prune:
                if v + lo_b[b] >= hi_thr or v + hi_b[b] <= lo_thr:
                    extreme += mass[k]
                    continue
                if v + hi_b[b] < hi_thr and v + lo_b[b] > lo_thr:
                    ordinary += mass[k]
                    continue
            keep[k] = True
            any_kept = True
        if any_kept:
            states += 1
    active = np.empty(states, np.int64)
    a_start = np.empty(states + 1, np.int64)
    kept = 0
    for k in range(vals.shape[0]):
        if keep[k]:
            kept += 1
    out_v = np.empty(kept, np.int64)
    out_p = np.empty(kept)
    q = 0
    pos = 0
    for b in range(n):
        start = pos
        for k in range(n_start[b], n_start[b + 1]):
            if keep[k]:
                out_v[pos] = vals[k]
                out_p[pos] = mass[k]
                pos += 1
        if pos > start:
            active[q] = b
            a_start[q] = start
            q += 1
    a_start[states] = pos
    return extreme, ordinary, active, a_start, out_v, out_p


@njit
def gather_stage(dig, needed, offsets, dst, i, j, after_j, col_j, fold, kind,
                 cell, rows, lf, b_start, b_vals, b_mass, limit):
    """The law of the rest of S from every `needed` state at a stage (the others get an empty
    law), from the laws one stage later (b_start has one entry more than the next stage's
    states). Same form as the input."""
    r = dig.shape[1]
    n = dig.shape[0]
    d = np.empty(r, np.int64)
    n_moves = offsets[n]
    m_src = np.empty(n_moves, np.int64)
    m_gain = np.empty(n_moves, np.int64)
    m_w = np.empty(n_moves)
    low = np.full(n, np.iinfo(np.int64).max)
    high = np.full(n, np.iinfo(np.int64).min)
    n_laws = b_start.shape[0] - 1
    for a in range(n):
        for m in range(offsets[a], offsets[a + 1]):
            m_src[m] = a
        if not needed[a]:
            continue
        total = _row(dig, a, d, r)
        lo, _, below, left = _range(d, total, i, after_j, col_j, r)
        di = d[i]
        norm = lf[di + below] - lf[left] - lf[di + below - left]
        for m in range(offsets[a], offsets[a + 1]):
            x = lo + (m - offsets[a])
            g = _gain(kind, cell, rows, d, i, j, x, left, col_j, fold, r)
            b = dst[m]
            m_gain[m] = g
            m_w[m] = np.exp(lf[di] - lf[x] - lf[di - x] + lf[below] - lf[left - x]
                            - lf[below - left + x] - norm)
            if b_vals[b_start[b]] + g < low[a]:
                low[a] = b_vals[b_start[b]] + g
            if b_vals[b_start[b + 1] - 1] + g > high[a]:
                high[a] = b_vals[b_start[b + 1] - 1] + g
    run, offset, runs = _chunks(low, high, limit)
    # within a run of sources, take the moves in order of the law they read (two stable
    # counting sorts: by law, then by run)
    dst64 = np.empty(n_moves, np.int64)
    for e in range(n_moves):
        dst64[e] = dst[e] if needed[m_src[e]] else 0
    by_law, _ = _bucket(dst64, n_laws)
    runs_of = np.empty(n_moves, np.int64)
    for e in range(n_moves):
        runs_of[e] = run[m_src[by_law[e]]] if needed[m_src[by_law[e]]] else runs
    by_run, starts = _bucket(runs_of, runs + 1)
    order = by_law[by_run]
    run_start = starts[:runs + 1]
    return _accumulate(n, low, high, run, offset, runs, order, run_start, dst64, m_src, m_gain,
                       m_w, b_start, b_vals, b_mass, limit)


@njit
def reach_mask(offsets, dst, mask, n_next):
    """Which states of the next stage the masked states of this one can reach."""
    out = np.zeros(n_next, np.bool_)
    for a in range(mask.shape[0]):
        if mask[a]:
            for m in range(offsets[a], offsets[a + 1]):
                out[dst[m]] = True
    return out


@njit
def join_stage(active, f_start, f_vals, f_mass, b_start, b_vals, b_mass, lo_thr, hi_thr):
    """Settle the forward pairs of each active state against the law of the rest of S from
    it: (extreme mass, ordinary mass, worst deviation of a law's total from 1). Tails are
    summed within each law from its own end, so a small p is not lost to rounding."""
    extreme = 0.0
    ordinary = 0.0
    worst = 0.0
    longest = 1
    for q in range(active.shape[0]):
        b = active[q]
        if b_start[b + 1] - b_start[b] > longest:
            longest = b_start[b + 1] - b_start[b]
    upper = np.empty(longest + 1)
    lower = np.empty(longest + 1)
    for q in range(active.shape[0]):
        b = active[q]
        s0 = b_start[b]
        n = b_start[b + 1] - s0
        upper[n] = 0.0
        for k in range(n - 1, -1, -1):          # upper[k] = sum of laws k.. (from the end)
            upper[k] = upper[k + 1] + b_mass[s0 + k]
        lower[0] = 0.0
        for k in range(n):                      # lower[k + 1] = sum of laws ..k
            lower[k + 1] = lower[k] + b_mass[s0 + k]
        total = upper[0]
        if abs(total - 1.0) > worst:
            worst = abs(total - 1.0)
        up = 0                                  # first law index with v + u >= hi_thr
        down = 0                                # law entries with v + u <= lo_thr
        for k in range(f_start[q + 1] - 1, f_start[q] - 1, -1):   # v from high to low:
            v = f_vals[k]                                          # both pointers move right
            while up < n and v + b_vals[s0 + up] < hi_thr:
                up += 1
            while down < n and v + b_vals[s0 + down] <= lo_thr:
                down += 1
            hit = upper[up] + lower[down]
            if down > up:                       # the two tails overlap: count once
                hit = total
            extreme += f_mass[k] * hit
            rest = total - hit
            if rest > 0.0:
                ordinary += f_mass[k] * rest
    return extreme, ordinary, worst
