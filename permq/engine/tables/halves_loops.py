"""The loops of `halves.py`, compiled (numba); imported on first use only.

Categories are in ascending order of their integer scores z. A group of size n drawn from
the units of a vector r of category counts takes x (x <= r, |x| = n) with the multivariate
hypergeometric probability prod_j C(r_j, x_j) / C(|r|, n); its score sum is x . z.
"""
import numpy as np

from ..montecarlo.jit import njit


@njit
def _lchoose(lf, a, b):
    return lf[a] - lf[b] - lf[a - b]


@njit
def compositions(r, n):
    """Every x with 0 <= x <= r and |x| = n, one row each (in odometer order)."""
    K = r.shape[0]
    suffix = np.zeros(K + 1, np.int64)
    for j in range(K - 1, -1, -1):
        suffix[j] = suffix[j + 1] + r[j]
    if n > suffix[0] or n < 0:
        return np.zeros((0, K), np.int64)
    x = np.zeros(K, np.int64)
    rem = np.zeros(K + 1, np.int64)
    count = 0
    for sweep in range(2):
        if sweep == 1:
            out = np.zeros((count, K), np.int64)
        m = 0
        rem[0] = n
        j = 0
        while True:
            # descend from j: each cell takes the least it can (the rest must still fit)
            while j < K - 1:
                lo = rem[j] - suffix[j + 1]
                x[j] = lo if lo > 0 else 0
                rem[j + 1] = rem[j] - x[j]
                j += 1
            x[K - 1] = rem[K - 1]
            if sweep == 1:
                for k in range(K):
                    out[m, k] = x[k]
            m += 1
            # advance the last cell (before the forced one) that can still grow
            j = K - 2
            while j >= 0:
                hi = r[j] if r[j] < rem[j] else rem[j]
                if x[j] < hi:
                    break
                j -= 1
            if j < 0:
                break
            x[j] += 1
            rem[j + 1] = rem[j] - x[j]
            j += 1
        count = m
    return out


@njit
def _range(r, n, z):
    """Smallest and largest score sum of n units drawn from r (scores ascending)."""
    K = r.shape[0]
    low = 0
    need = n
    for j in range(K):
        t = r[j] if r[j] < need else need
        low += t * z[j]
        need -= t
    high = 0
    need = n
    for j in range(K - 1, -1, -1):
        t = r[j] if r[j] < need else need
        high += t * z[j]
        need -= t
    return low, high


@njit
def _law(r, n, z, ch, dense, low):
    """The law of the score sum of n units drawn from r, added into dense[S - low]; its mass.
    ch[a, b] = C(a, b) as a float. The cells are walked as an odometer carrying the partial
    sum and the partial product of binomials, so nothing is allocated per draw."""
    K = r.shape[0]
    total = 0
    for j in range(K):
        total += r[j]
    if n < 0 or n > total:
        return 0.0
    inv = 1.0 / ch[total, n]
    suffix = np.zeros(K + 1, np.int64)
    for j in range(K - 1, -1, -1):
        suffix[j] = suffix[j + 1] + r[j]
    x = np.zeros(K, np.int64)
    rem = np.zeros(K + 1, np.int64)
    sp = np.zeros(K + 1, np.int64)
    wp = np.ones(K + 1)
    rem[0] = n
    mass = 0.0
    j = 0
    while True:
        while j < K - 1:
            lo = rem[j] - suffix[j + 1]
            x[j] = lo if lo > 0 else 0
            rem[j + 1] = rem[j] - x[j]
            sp[j + 1] = sp[j] + x[j] * z[j]
            wp[j + 1] = wp[j] * ch[r[j], x[j]]
            j += 1
        last = rem[K - 1]
        w = wp[K - 1] * ch[r[K - 1], last] * inv
        dense[sp[K - 1] + last * z[K - 1] - low] += w
        mass += w
        j = K - 2
        while j >= 0:
            hi = r[j] if r[j] < rem[j] else rem[j]
            if x[j] < hi:
                break
            j -= 1
        if j < 0:
            break
        x[j] += 1
        rem[j + 1] = rem[j] - x[j]
        sp[j + 1] = sp[j] + x[j] * z[j]
        wp[j + 1] = wp[j] * ch[r[j], x[j]]
        j += 1
    return mass


@njit
def _f(a0, a1, s, tot):
    return a0 * s * s + a1 * (tot - s) * (tot - s)


@njit
def _fmin(a0, a1, tot, low, high):
    """Least of a0 s^2 + a1 (tot - s)^2 over the integers low..high."""
    v = float(a1) * float(tot) / float(a0 + a1)
    s = int(np.floor(v))
    best = _f(a0, a1, high, tot)
    other = _f(a0, a1, low, tot)
    if other < best:
        best = other
    for c in (s, s + 1):
        if low <= c <= high:
            val = _f(a0, a1, c, tot)
            if val < best:
                best = val
    return best


@njit
def _fmax(a0, a1, tot, low, high):
    a = _f(a0, a1, low, tot)
    b = _f(a0, a1, high, tot)
    return a if a > b else b


@njit
def _tail(cum, low, high, a0, a1, tot, t):
    """Mass of the S in low..high with a0 S^2 + a1 (tot - S)^2 >= t; cum[i] is the mass of
    low..low + i. The function is convex, so the set is two tails around its vertex; the
    float roots are only a start, every end is settled by exact integer comparisons."""
    mass = cum[high - low]
    if _fmin(a0, a1, tot, low, high) >= t:
        return mass
    if _fmax(a0, a1, tot, low, high) < t:
        return 0.0
    A = float(a0 + a1)
    v = float(a1) * float(tot) / A
    fv = int(np.floor(v))
    disc = v * v - (float(a1) * float(tot) * float(tot) - float(t)) / A   # in floats: no overflow
    root = np.sqrt(disc) if disc > 0 else 0.0
    # left tail: the largest s <= fv with f(s) >= t
    s1 = int(np.floor(v - root))
    if s1 > fv:
        s1 = fv
    if s1 < low - 1:
        s1 = low - 1
    while s1 + 1 <= fv and _f(a0, a1, s1 + 1, tot) >= t:
        s1 += 1
    while s1 >= low and _f(a0, a1, s1, tot) < t:
        s1 -= 1
    out = 0.0
    if s1 >= low:
        out += cum[(s1 if s1 < high else high) - low]
    # right tail: the smallest s > fv with f(s) >= t
    s2 = int(np.ceil(v + root))
    if s2 < fv + 1:
        s2 = fv + 1
    if s2 > high + 1:
        s2 = high + 1
    while s2 - 1 > fv and _f(a0, a1, s2 - 1, tot) >= t:
        s2 -= 1
    while s2 <= high and _f(a0, a1, s2, tot) < t:
        s2 += 1
    if s2 <= high:
        start = s2 if s2 > low else low
        out += mass - (cum[start - 1 - low] if start > low else 0.0)
    return out


@njit
def _split(c, u, z, lf, base, r):
    """The hypergeometric weight of the left half's column counts u and its score total U;
    the right half's counts c - u go into r."""
    lw = -base
    U = 0
    for j in range(c.shape[0]):
        lw += _lchoose(lf, c[j], u[j])
        U += u[j] * z[j]
        r[j] = c[j] - u[j]
    return np.exp(lw), U


@njit
def extreme_mass(c, z, left, aleft, right, aright, q, lf, ch):
    """P(Q >= q) over the tables with column margins c and the groups' sizes, where
    Q = sum_g a_g S_g^2. `left` holds one or two group sizes (a second size 0: one group),
    `right` two; both with their weights a_g. The units of the left groups are a vector u
    (|u| = left[0] + left[1]); given u, the left and right halves are independent splits.
    Returns (extreme mass, total mass): the total is 1 up to rounding."""
    K = c.shape[0]
    N = 0
    ztot = 0
    for j in range(K):
        N += c[j]
        ztot += c[j] * z[j]
    nl = left[0] + left[1]
    us = compositions(c, nl)
    width = (N + 1) * (z[K - 1] + 1) + 2
    dl = np.zeros(width)
    dr = np.zeros(width)
    cum = np.zeros(width)
    r = np.zeros(K, np.int64)
    base = _lchoose(lf, N, nl)
    extreme = 0.0
    total = 0.0
    for m in range(us.shape[0]):
        u = us[m]
        wu, U = _split(c, u, z, lf, base, r)
        T = ztot - U
        # the range of each half's statistic, for settling u whole
        if left[1] == 0:
            llo = lhi = 0
            fl_lo = fl_hi = aleft[0] * U * U
        else:
            llo, lhi = _range(u, left[0], z)
            fl_lo = _fmin(aleft[0], aleft[1], U, llo, lhi)
            fl_hi = _fmax(aleft[0], aleft[1], U, llo, lhi)
        rlo, rhi = _range(r, right[0], z)
        fr_lo = _fmin(aright[0], aright[1], T, rlo, rhi)
        fr_hi = _fmax(aright[0], aright[1], T, rlo, rhi)
        if fl_lo + fr_lo >= q:
            extreme += wu
            total += wu
            continue
        if fl_hi + fr_hi < q:
            total += wu
            continue
        span = rhi - rlo + 1
        for i in range(span):
            dr[i] = 0.0
        mr = _law(r, right[0], z, ch, dr, rlo)
        acc = 0.0
        for i in range(span):
            acc += dr[i]
            cum[i] = acc
        if left[1] == 0:
            extreme += wu * _tail(cum, rlo, rhi, aright[0], aright[1], T, q - fl_lo)
            total += wu * mr
            continue
        lspan = lhi - llo + 1
        for i in range(lspan):
            dl[i] = 0.0
        ml = _law(u, left[0], z, ch, dl, llo)
        part = 0.0
        for i in range(lspan):
            if dl[i] > 0.0:
                s = llo + i
                fl = _f(aleft[0], aleft[1], s, U)
                part += dl[i] * _tail(cum, rlo, rhi, aright[0], aright[1], T, q - fl)
        extreme += wu * part
        total += wu * ml * mr
    return extreme, total


@njit
def law_entries(c, z, left, aleft, right, aright, lf, ch, cap):
    """Every (Q, mass) of the tables with column margins c, one entry per (u, left sum, right
    sum), at most `cap` entries: (Q values, masses, count); count -1 when there are more."""
    K = c.shape[0]
    N = 0
    ztot = 0
    for j in range(K):
        N += c[j]
        ztot += c[j] * z[j]
    nl = left[0] + left[1]
    us = compositions(c, nl)
    width = (N + 1) * (z[K - 1] + 1) + 2
    dl = np.zeros(width)
    dr = np.zeros(width)
    qs = np.zeros(cap, np.int64)
    ws = np.zeros(cap)
    r = np.zeros(K, np.int64)
    base = _lchoose(lf, N, nl)
    n = 0
    for m in range(us.shape[0]):
        u = us[m]
        wu, U = _split(c, u, z, lf, base, r)
        T = ztot - U
        if left[1] == 0:
            llo = lhi = U
            dl[0] = 1.0
        else:
            llo, lhi = _range(u, left[0], z)
            for i in range(lhi - llo + 1):
                dl[i] = 0.0
            _law(u, left[0], z, ch, dl, llo)
        rlo, rhi = _range(r, right[0], z)
        for i in range(rhi - rlo + 1):
            dr[i] = 0.0
        _law(r, right[0], z, ch, dr, rlo)
        for i in range(lhi - llo + 1):
            if dl[i] == 0.0:
                continue
            s = llo + i
            if left[1] == 0:
                fl = aleft[0] * s * s
            else:
                fl = _f(aleft[0], aleft[1], s, U)
            for j in range(rhi - rlo + 1):
                if dr[j] == 0.0:
                    continue
                if n == cap:
                    return qs, ws, -1
                qs[n] = fl + _f(aright[0], aright[1], rlo + j, T)
                ws[n] = wu * dl[i] * dr[j]
                n += 1
    return qs[:n], ws[:n], n


@njit
def law_bound(c, z, left, right):
    """An upper bound on the entries of `law_entries`: over every u, the widths of the
    ranges of the two halves' sums multiplied (read before any law is worked out)."""
    K = c.shape[0]
    us = compositions(c, left[0] + left[1])
    r = np.zeros(K, np.int64)
    total = 0.0
    for m in range(us.shape[0]):
        u = us[m]
        for j in range(K):
            r[j] = c[j] - u[j]
        width = 1
        if left[1] != 0:
            llo, lhi = _range(u, left[0], z)
            width = lhi - llo + 1
        rlo, rhi = _range(r, right[0], z)
        total += float(width) * float(rhi - rlo + 1)
    return total
