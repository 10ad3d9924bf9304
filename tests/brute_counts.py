"""Brute-force references for the count forms, written from scratch (nothing from permq).

Every outcome is listed and every probability is a Fraction, so ties are ties exactly:

- two binomials: each of the (n1 + 1)(n2 + 1) outcomes with its exact weight C(n1, a) C(n2, b);
  Barnard's z compared through its sign and its rational square, Fisher's p-values as exact
  hypergeometric sums; the unconditional p-value is the maximum over pi in [0, 1] of a
  polynomial with integer coefficients, found from the sign changes of its derivative on a
  grid of 4,000 rational points, each root bisected in Fractions to 1e-15;
- stratified 2 x 2 tables: every configuration of the strata's first-group counts, with the
  product of exact hypergeometric probabilities;
- a binary response in strata: every choice of the event units in every stratum (scores are
  Fractions of their decimal text), so the law of sum(x y) is exact;
- rates: exact binomial sums given the total; Poisson sums in 50-digit decimals.

The risk-difference and risk-ratio intervals invert tests whose statistic is irrational (a
root of a cubic): `one_sided_unconditional` recomputes it independently (the restricted MLE by
a numerical search of the likelihood, not the closed form) in floating point, and takes the
supremum over the nuisance on a grid of 3,000 points with a golden-section refinement.
"""
from __future__ import annotations

import itertools
import math
from decimal import Decimal, getcontext
from fractions import Fraction

# ---------------------------------------------------------------- two binomials


def _pooled_z_key(a, n1, b, n2):
    """(sign, z squared) of the pooled score z, as exact rationals (0 when p1^ = p2^)."""
    d = Fraction(a, n1) - Fraction(b, n2)
    if d == 0:
        return (0, Fraction(0))
    p = Fraction(a + b, n1 + n2)
    var = p * (1 - p) * (Fraction(1, n1) + Fraction(1, n2))
    return (1 if d > 0 else -1, d * d / var)


def _z_value(key):
    sign, sq = key
    return sign * math.sqrt(sq)


def _z_ge(k1, k2):
    """z(k1) >= z(k2), exactly."""
    s1, q1 = k1
    s2, q2 = k2
    v1 = s1 * q1    # sign * z^2 orders the same way as z
    v2 = s2 * q2
    return v1 >= v2


def hypergeometric(n1, n2, s):
    """{a: P(X1 = a | X1 + X2 = s)} as Fractions."""
    total = math.comb(n1 + n2, s)
    return {a: Fraction(math.comb(n1, a) * math.comb(n2, s - a), total)
            for a in range(max(0, s - n2), min(n1, s) + 1)}


def fisher_p(a, b, n1, n2, alternative):
    law = hypergeometric(n1, n2, a + b)
    if alternative == "higher":
        return sum(p for k, p in law.items() if k >= a)
    if alternative == "lower":
        return sum(p for k, p in law.items() if k <= a)
    return sum(p for p in law.values() if p <= law[a])


def unconditional_region(x1, n1, x2, n2, test, alternative):
    """The outcomes (a, b) at least as extreme as (x1, x2)."""
    out = []
    if test == "barnard":
        obs = _pooled_z_key(x1, n1, x2, n2)
        for a in range(n1 + 1):
            for b in range(n2 + 1):
                k = _pooled_z_key(a, n1, b, n2)
                if alternative == "higher":
                    keep = _z_ge(k, obs)
                elif alternative == "lower":
                    keep = _z_ge(obs, k)
                else:
                    keep = k[1] >= obs[1]
                if keep:
                    out.append((a, b))
        return out
    obs = fisher_p(x1, x2, n1, n2, alternative)
    return [(a, b) for a in range(n1 + 1) for b in range(n2 + 1)
            if fisher_p(a, b, n1, n2, alternative) <= obs]


def _poly_mul(p, q):
    out = [0] * (len(p) + len(q) - 1)
    for i, u in enumerate(p):
        for j, v in enumerate(q):
            out[i + j] += u * v
    return out


def _poly_eval(p, x):
    v = 0
    for c in reversed(p):
        v = v * x + c
    return v


def region_polynomial(region, n1, n2):
    """Integer coefficients (powers of pi) of P_pi(region) with p1 = p2 = pi."""
    n = n1 + n2
    c = [0] * (n + 1)
    for a, b in region:
        c[a + b] += math.comb(n1, a) * math.comb(n2, b)
    poly = [0] * (n + 1)
    for s, cs in enumerate(c):
        if cs == 0:
            continue
        term = [cs]
        for _ in range(s):
            term = _poly_mul(term, [0, 1])
        for _ in range(n - s):
            term = _poly_mul(term, [1, -1])
        for i, v in enumerate(term):
            poly[i] += v
    return poly


def polynomial_max(poly, grid=4000, tol=Fraction(1, 10 ** 15)):
    """max over [0, 1] of an integer polynomial: ends and every root of its derivative."""
    deriv = [i * c for i, c in enumerate(poly)][1:] or [0]
    best = max(_poly_eval(poly, Fraction(0)), _poly_eval(poly, Fraction(1)))
    points = [Fraction(i, grid) for i in range(grid + 1)]
    values = [_poly_eval(deriv, x) for x in points]
    for (x0, v0), (x1, v1) in zip(zip(points, values), zip(points[1:], values[1:])):
        if v0 > 0 and v1 <= 0 or v0 >= 0 and v1 < 0:
            lo, hi = x0, x1
            while hi - lo > tol:
                mid = (lo + hi) / 2
                if _poly_eval(deriv, mid) > 0:
                    lo = mid
                else:
                    hi = mid
            best = max(best, _poly_eval(poly, lo), _poly_eval(poly, hi))
    return best


def unconditional_p(x1, n1, x2, n2, test, alternative):
    region = unconditional_region(x1, n1, x2, n2, test, alternative)
    return polynomial_max(region_polynomial(region, n1, n2))


# ------------------------------------------------- off the null: intervals (floating point)

def _restricted(a, n1, b, n2, line, lo, hi):
    """The MLE of p2 (p1 = line(p2)) by a golden-section search of the log-likelihood."""
    def loglik(p2):
        p1 = line(p2)
        out = 0.0
        for k, n, p in ((a, n1, p1), (b, n2, p2)):
            if k > 0:
                out += k * math.log(max(p, 1e-300))
            if n - k > 0:
                out += (n - k) * math.log(max(1 - p, 1e-300))
        return out

    return _golden(loglik, lo, hi, 1e-13)


def _golden(f, lo, hi, tol):
    g = (math.sqrt(5) - 1) / 2
    a, b = lo, hi
    c, d = b - g * (b - a), a + g * (b - a)
    fc, fd = f(c), f(d)
    while b - a > tol:
        if fc >= fd:
            b, d, fd = d, c, fc
            c = b - g * (b - a)
            fc = f(c)
        else:
            a, c, fc = c, d, fd
            d = a + g * (b - a)
            fd = f(d)
    best = max((f(lo), lo), (f(hi), hi), (f((a + b) / 2), (a + b) / 2))
    return best[1]


def score_statistic(a, n1, b, n2, scale, value):
    """The score z of H0: p1 - p2 = value ('difference') or p1 / p2 = value ('ratio')."""
    if scale == "difference":
        line = lambda p2: p2 + value
        lo, hi = max(0.0, -value), min(1.0, 1.0 - value)
        num = a / n1 - b / n2 - value
    else:
        line = lambda p2: value * p2
        lo, hi = 0.0, min(1.0, 1.0 / value)
        num = a / n1 - value * b / n2
    q2 = _restricted(a, n1, b, n2, line, lo, hi)
    q1 = line(q2)
    k = 1.0 if scale == "difference" else value * value
    var = q1 * (1 - q1) / n1 + k * q2 * (1 - q2) / n2
    if abs(num) < 1e-12:
        return 0.0
    if var <= 1e-15:
        return math.copysign(math.inf, num)
    return num / math.sqrt(var)


def one_sided_unconditional(x1, n1, x2, n2, scale, value, upper, grid=3000):
    """sup over the nuisance of P(z >= z_obs) (upper) or P(z <= z_obs), floating point."""
    z = {(a, b): score_statistic(a, n1, b, n2, scale, value)
         for a in range(n1 + 1) for b in range(n2 + 1)}
    obs = z[(x1, x2)]
    tol = 1e-7 * max(1.0, abs(obs)) if math.isfinite(obs) else 0.0
    region = [k for k, v in z.items() if (v >= obs - tol if upper else v <= obs + tol)]
    if scale == "difference":
        line = lambda p2: p2 + value
        lo, hi = max(0.0, -value), min(1.0, 1.0 - value)
    else:
        line = lambda p2: value * p2
        lo, hi = 0.0, min(1.0, 1.0 / value)

    def prob(p2):
        p1 = min(1.0, max(0.0, line(p2)))
        return sum(math.comb(n1, a) * p1 ** a * (1 - p1) ** (n1 - a)
                   * math.comb(n2, b) * p2 ** b * (1 - p2) ** (n2 - b) for a, b in region)

    xs = [lo + (hi - lo) * i / grid for i in range(grid + 1)]
    vals = [prob(x) for x in xs]
    i = max(range(len(vals)), key=vals.__getitem__)
    a, b = xs[max(i - 1, 0)], xs[min(i + 1, grid)]
    best = prob(_golden(prob, a, b, 1e-12))
    return max(best, vals[i])


# ---------------------------------------------------------------- strata

def strata_law(tables):
    """{t: P(T = t)} for T = sum of the strata's top-left counts, each stratum's margins fixed;
    tables are [[a, b], [c, d]] (rows the groups, columns event / no event)."""
    laws = []
    for (a, b), (c, d) in tables:
        r1, r2, c1 = a + b, c + d, a + c
        law = hypergeometric(r1, r2, c1)
        laws.append(law)
    out = {0: Fraction(1)}
    for law in laws:
        new = {}
        for t, p in out.items():
            for k, q in law.items():
                new[t + k] = new.get(t + k, 0) + p * q
        out = new
    return out


def tail_probability_rule(law, observed, alternative):
    if alternative == "higher":
        return sum(p for t, p in law.items() if t >= observed)
    if alternative == "lower":
        return sum(p for t, p in law.items() if t <= observed)
    return sum(p for p in law.values() if p <= law[observed])


def tilted_tails(law, observed, psi):
    """(P_psi(T >= t), P_psi(T <= t), E_psi T) under the tilted law c(t) psi^t (Fractions)."""
    weights = {t: p * psi ** t for t, p in law.items()}
    total = sum(weights.values())
    up = sum(w for t, w in weights.items() if t >= observed) / total
    down = sum(w for t, w in weights.items() if t <= observed) / total
    mean = sum(t * w for t, w in weights.items()) / total
    return up, down, mean


def zelen_p(tables):
    laws = []
    for (a, b), (c, d) in tables:
        laws.append((a, hypergeometric(a + b, c + d, a + c)))
    laws = [(a, law) for a, law in laws if len(law) > 1]
    target = sum(a for a, _ in laws)
    observed = 1
    for a, law in laws:
        observed *= law[a]
    total = extreme = Fraction(0)
    for conf in itertools.product(*[sorted(law) for _, law in laws]):
        if sum(conf) != target:
            continue
        p = 1
        for k, (_, law) in zip(conf, laws):
            p *= law[k]
        total += p
        if p <= observed:
            extreme += p
    return extreme / total


# ---------------------------------------------------------------- binary response in strata

def trend_law(strata):
    """{t: number of choices} of sum(x y) with every stratum's events fixed; strata are lists
    of (x, y) with x a decimal value (its text's Fraction) and y 0 / 1."""
    out = {Fraction(0): 1}
    for units in strata:
        xs = [Fraction(repr(float(x))) for x, _ in units]
        m = sum(y for _, y in units)
        law = {}
        for chosen in itertools.combinations(range(len(xs)), m):
            t = sum(xs[i] for i in chosen)
            law[t] = law.get(t, 0) + 1
        new = {}
        for t, c in out.items():
            for u, d in law.items():
                new[t + u] = new.get(t + u, 0) + c * d
        out = new
    return out


def trend_observed(strata):
    return sum(Fraction(repr(float(x))) for units in strata for x, y in units if y)


def linear_tail(law, observed, alternative):
    total = sum(law.values())
    if alternative == "higher":
        return Fraction(sum(c for t, c in law.items() if t >= observed), total)
    if alternative == "lower":
        return Fraction(sum(c for t, c in law.items() if t <= observed), total)
    centre = sum(t * c for t, c in law.items()) / total
    dev = abs(observed - centre)
    return Fraction(sum(c for t, c in law.items() if abs(t - centre) >= dev), total)


# ---------------------------------------------------------------- rates

def binomial_tails(k, n, p):
    """(P(X >= k), P(X <= k), two-sided by the probability rule) for Bin(n, p), p a Fraction."""
    pmf = [math.comb(n, j) * p ** j * (1 - p) ** (n - j) for j in range(n + 1)]
    return (sum(pmf[k:]), sum(pmf[:k + 1]), sum(v for v in pmf if v <= pmf[k]))


def poisson_tails(x, mu, digits=50):
    """(P(X >= x), P(X <= x)) for Poisson(mu) in `digits`-digit decimals."""
    getcontext().prec = digits
    mu = Decimal(repr(float(mu)))
    term = (-mu).exp()
    below = Decimal(0)
    for k in range(x + 1):
        if k:
            term = term * mu / k
        below += term
        if k == x - 1:
            lower_than_x = below
    ge = 1 - (lower_than_x if x > 0 else Decimal(0))
    return float(ge), float(below)
