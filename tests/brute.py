"""A brute-force reference, written from scratch for the tests (it imports nothing from permq).

Two samples: every one of the C(N, n1) ways to choose the first group is listed, the
statistic is recomputed from the raw values for each, and the p-value is the share of
arrangements at least as extreme. Paired / one sample: every one of the 2^m sign patterns of
the m non-zero differences. Means, ranks and median scores are computed in exact rational
arithmetic (Fraction) from the decimal text of the data, so ties are ties exactly; normal
scores are irrational and use floats with a relative tolerance of 1e-9.

Conventions (design.md): two-sided p = P(|T - E0 T| >= |t - E0 T|), with E0 T the mean of T
over the reference set; mid-ranks for ties; zero differences are ranked with the others and
then left out of the sign flips (Pratt); the sign test drops zeros.
"""
from __future__ import annotations

import itertools
from fractions import Fraction
from math import comb
from statistics import NormalDist

TOL = 1e-9


def frac(v) -> Fraction:
    """The decimal value as written (repr of a float gives the shortest round-trip text)."""
    if isinstance(v, Fraction):
        return v
    return Fraction(repr(float(v)))


# ---------------------------------------------------------------- scores, from scratch

def midranks(values) -> list:
    """Rank = (number smaller) + (number equal + 1) / 2, as a Fraction."""
    vals = list(values)
    out = []
    for v in vals:
        less = sum(1 for w in vals if w < v)
        equal = sum(1 for w in vals if w == v)
        out.append(Fraction(2 * less + equal + 1, 2))
    return out


def normal_scores(values) -> list:
    """van der Waerden scores Phi^-1(r / (N + 1)) of the mid-ranks r (tied values share one)."""
    n = len(values)
    phi_inv = NormalDist().inv_cdf
    return [phi_inv(float(r) / (n + 1)) for r in midranks(values)]


def median_scores(values) -> list:
    """1 for a value above the pooled median, else 0."""
    s = sorted(values)
    n = len(s)
    med = s[n // 2] if n % 2 else (s[n // 2 - 1] + s[n // 2]) / 2
    return [Fraction(1) if v > med else Fraction(0) for v in values]


def two_sample_scores(family: str, pooled: list) -> list:
    if family == "means":
        return list(pooled)
    if family == "ranks":
        return midranks(pooled)
    if family == "normal-scores":
        return normal_scores(pooled)
    if family == "medians":
        return median_scores(pooled)
    raise KeyError(family)


# ---------------------------------------------------------------- the p-value rule

def _is_float(v) -> bool:
    return isinstance(v, float)


def tail_share(values: list, t_obs, alternative: str) -> Fraction:
    """Share of the (equally likely) values at least as extreme as t_obs."""
    total = len(values)
    center = sum(values) / total
    inexact = any(_is_float(v) for v in values) or _is_float(t_obs)
    scale = max([abs(v - center) for v in values] + [abs(t_obs - center), 1e-300])
    tol = TOL * float(scale) if inexact else 0

    def extreme(v):
        if alternative == "higher":
            return v >= t_obs - tol
        if alternative == "lower":
            return v <= t_obs + tol
        return abs(v - center) >= abs(t_obs - center) - tol

    return Fraction(sum(1 for v in values if extreme(v)), total)


# ---------------------------------------------------------------- two samples

def two_sample_statistic(family: str, scores: list, chosen: tuple):
    """Means: difference in means; other families: sum of the first group's scores."""
    n1, N = len(chosen), len(scores)
    s1 = sum(scores[i] for i in chosen)
    if family == "means":
        return s1 / n1 - (sum(scores) - s1) / (N - n1)
    return s1


def two_sample_null(family: str, x, y) -> tuple[list, object]:
    """(statistic over every split, the observed statistic)."""
    pooled = [frac(v) for v in list(x) + list(y)]
    scores = two_sample_scores(family, pooled)
    n1, N = len(x), len(pooled)
    values = [two_sample_statistic(family, scores, c)
              for c in itertools.combinations(range(N), n1)]
    assert len(values) == comb(N, n1)
    return values, two_sample_statistic(family, scores, tuple(range(n1)))


def two_sample_p(family: str, x, y, alternative: str) -> Fraction:
    values, t = two_sample_null(family, x, y)
    return tail_share(values, t, alternative)


def mann_whitney_u_counts(n1: int, n2: int) -> list:
    """counts[u] = number of splits of 1..N with U = u (no ties), by listing every split."""
    N = n1 + n2
    counts = [0] * (n1 * n2 + 1)
    for c in itertools.combinations(range(1, N + 1), n1):
        counts[sum(c) - n1 * (n1 + 1) // 2] += 1
    return counts


# ---------------------------------------------------------------- sign flips

def one_sample_null(family: str, d) -> tuple[list, object]:
    """(statistic over every sign pattern of the non-zero differences, the observed one)."""
    d = [frac(v) for v in d]
    n_all = len(d)
    if family == "ranks":
        ranks = midranks([abs(v) for v in d])       # zeros ranked (Pratt) ...
    else:
        ranks = None
    items = []   # (score, observed sign) of the non-zero differences ... zeros left out
    for i, v in enumerate(d):
        if v == 0:
            continue
        if family == "means":
            items.append((abs(v), v > 0))
        elif family == "ranks":
            items.append((ranks[i], v > 0))
        elif family == "signs":
            items.append((Fraction(1), v > 0))
        else:
            raise KeyError(family)

    def stat(signs):
        if family == "means":
            return sum(s if pos else -s for (s, _), pos in zip(items, signs)) / n_all
        return sum(s for (s, _), pos in zip(items, signs) if pos)

    values = [stat(signs) for signs in itertools.product((False, True), repeat=len(items))]
    return values, stat([pos for _, pos in items])


def one_sample_p(family: str, d, alternative: str) -> Fraction:
    values, t = one_sample_null(family, d)
    return tail_share(values, t, alternative)


def signed_rank_counts(n: int) -> list:
    """counts[t] = number of sign patterns of ranks 1..n with T+ = t, by listing them."""
    counts = [0] * (n * (n + 1) // 2 + 1)
    for signs in itertools.product((0, 1), repeat=n):
        counts[sum(r for r, s in zip(range(1, n + 1), signs) if s)] += 1
    return counts


def binomial_half_counts(n: int) -> list:
    return [comb(n, k) for k in range(n + 1)]


def critical_count(counts: list, side: float) -> int:
    """Largest c with P(X <= c) <= side, or -1 (X on 0, 1, ... with the given counts)."""
    total = sum(counts)
    c, cum = -1, 0
    for k, v in enumerate(counts):
        cum += v
        if Fraction(cum, total) <= Fraction(side).limit_denominator(10 ** 12):
            c = k
        else:
            break
    return c


def mahonian(n: int, upto=None) -> list:
    """Exact numbers of permutations of n items with k inversions, k = 0 .. upto (Python
    integers), by I_m(k) = sum_{i < m} I_{m-1}(k - i); truncation is exact."""
    top = n * (n - 1) // 2 if upto is None else min(upto, n * (n - 1) // 2)
    c = [1]
    for m in range(2, n + 1):
        length = min(len(c) + m - 1, top + 1)
        new, window = [], 0
        for k in range(length):
            window += c[k] if k < len(c) else 0
            if k - m >= 0 and k - m < len(c):
                window -= c[k - m]
            new.append(window)
        c = new
    return c


# ---------------------------------------------------------------- groups, orders, blocks, pairs

def assignments(labels) -> list:
    """Every distinct arrangement of a multiset of group labels (each once)."""
    return sorted(set(itertools.permutations(labels)))


def share_at_least(values: list, t) -> Fraction:
    return Fraction(sum(1 for v in values if v >= t), len(values))


def k_sample_p(family: str, values, groups) -> Fraction:
    """P(SSB >= ssb) over every assignment to groups of the observed sizes: means on the
    values, ranks on mid-ranks, medians on the above-the-median scores (F, Kruskal-Wallis and
    the median chi-square are increasing in SSB)."""
    x = [frac(v) for v in values]
    scores = {"means": x, "ranks": midranks(x), "medians": median_scores(x)}[family]
    labels = list(groups)

    def ssb(lab):
        out = Fraction(0)
        for g in set(lab):
            members = [s for s, h in zip(scores, lab) if h == g]
            out += sum(members) ** 2 / len(members)
        return out

    vals = [ssb(a) for a in assignments(labels)]
    return share_at_least(vals, ssb(labels))


def linear_p(values: list, t_obs, alternative: str) -> Fraction:
    """tail_share for exact values (no tolerance)."""
    return tail_share(values, t_obs, alternative)


def trend_p(values, groups, doses, alternative: str) -> Fraction:
    """T = sum_i dose_g(i) x_i over every assignment."""
    x = [frac(v) for v in values]
    d = [frac(v) for v in doses]

    def t(lab):
        return sum(d[g] * v for g, v in zip(lab, x))

    return tail_share([t(a) for a in assignments(list(groups))], t(list(groups)), alternative)


def jonckheere_p(values, groups, alternative: str) -> Fraction:
    """J = sum over g < h of #{x in g < y in h} + half the ties, over every assignment."""
    x = [frac(v) for v in values]

    def j(lab):
        out = Fraction(0)
        for a in range(len(x)):
            for b in range(len(x)):
                if lab[a] < lab[b]:
                    out += 1 if x[a] < x[b] else (Fraction(1, 2) if x[a] == x[b] else 0)
        return out

    return tail_share([j(a) for a in assignments(list(groups))], j(list(groups)), alternative)


def _within_blocks(groups, blocks):
    """Every arrangement of the group labels within each block (the labels' distinct orders)."""
    units = {}
    for i, b in enumerate(blocks):
        units.setdefault(b, []).append(i)
    per_block = [(idx, assignments([groups[i] for i in idx])) for idx in units.values()]
    for combo in itertools.product(*[orders for _, orders in per_block]):
        lab = [None] * len(groups)
        for (idx, _), order in zip(per_block, combo):
            for i, g in zip(idx, order):
                lab[i] = g
        yield lab


def _block_ranks(x, blocks):
    r = [None] * len(x)
    for b in set(blocks):
        idx = [i for i, c in enumerate(blocks) if c == b]
        for i, v in zip(idx, midranks([x[i] for i in idx])):
            r[i] = v
    return r


def stratified_p(family: str, values, groups, blocks, first, alternative: str) -> Fraction:
    """Sum over blocks of the `first` group's scores (values, or mid-ranks within blocks)."""
    x = [frac(v) for v in values]
    s = x if family == "means" else _block_ranks(x, blocks)

    def t(lab):
        return sum(v for v, g in zip(s, lab) if g == first)

    vals = [t(lab) for lab in _within_blocks(list(groups), list(blocks))]
    return tail_share(vals, t(list(groups)), alternative)


def complete_blocks_p(test: str, values, groups, blocks, alternative: str = "higher") -> Fraction:
    """Friedman (sum of squared rank totals), F within blocks (sum of squared treatment totals)
    and Page's L = sum_j j R_j (treatments 0..k-1 weighted 1..k), over every within-block order."""
    x = [frac(v) for v in values]
    s = x if test == "within-block-f" else _block_ranks(x, blocks)
    k = max(groups) + 1

    def totals(lab):
        out = [Fraction(0)] * k
        for v, g in zip(s, lab):
            out[g] += v
        return out

    def stat(lab):
        tot = totals(lab)
        if test == "page":
            return sum((j + 1) * r for j, r in enumerate(tot))
        return sum(r * r for r in tot)

    vals = [stat(lab) for lab in _within_blocks(list(groups), list(blocks))]
    if test == "page":
        return tail_share(vals, stat(list(groups)), alternative)
    return share_at_least(vals, stat(list(groups)))


def association_p(statistic: str, y, x, alternative: str) -> Fraction:
    """Every permutation of y against x: T = sum x_i y_pi(i) (pearson, slope), the same on
    mid-ranks (spearman), Kendall's S = sum_{i<j} sign(x_i - x_j) sign(y_i - y_j)."""
    xs, ys = [frac(v) for v in x], [frac(v) for v in y]
    if statistic == "spearman":
        xs, ys = midranks(xs), midranks(ys)

    def sign(v):
        return (v > 0) - (v < 0)

    def t(yp):
        if statistic == "kendall":
            n = len(xs)
            return sum(sign(xs[i] - xs[j]) * sign(yp[i] - yp[j])
                       for i in range(n) for j in range(i + 1, n))
        return sum(a * b for a, b in zip(xs, yp))

    vals = [t(list(p)) for p in itertools.permutations(ys)]
    return tail_share(vals, t(ys), alternative)
