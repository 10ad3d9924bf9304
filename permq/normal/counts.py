"""The textbook counterparts of the count forms: two proportions, strata, rates, dose response.

- Two proportions: the score (pooled) z test of p1 = p2 (Pearson's chi-square for the 2 x 2
  table, signed); Newcombe's hybrid score interval for p1 - p2 (Newcombe 1998, method 10); the
  Miettinen-Nurminen score interval for p1 / p2 (variance with their N / (N - 1) factor).
- Strata: the Mantel-Haenszel chi-square (no continuity correction) with the Mantel-Haenszel
  common odds ratio and its Robins-Breslow-Greenland interval; the Breslow-Day test of
  homogeneous odds ratios with Tarone's correction, on K - 1 df; the stratified trend z
  (Mantel's extension of Cochran-Armitage: the conditional mean and variance within strata).
- Rates: one rate, the score z (x - lambda0 t) / sqrt(lambda0 t) with its score interval;
  two rates, the score z of the rate ratio (the normal form of the conditional binomial test)
  and the Wald interval for log(R), se = sqrt(1/x1 + 1/x2).
- Dose response: the asymptotic logistic fit (Newton-Raphson), its Wald z for the slope and
  Wald interval; the likelihood-ratio test beside it. Under complete separation the fit has no
  finite maximum: the counterpart says so (p and interval not available).

`alternative` is "higher", "lower" or "two-sided"; one-sided intervals have one open end.
"""
from __future__ import annotations

import math

import numpy as np

from ..result import NormalTheory

NAN = float("nan")


def _q(level, alternative) -> float:
    from statistics import NormalDist

    return NormalDist().inv_cdf(1.0 - (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0))


def _p(z, alternative) -> float:
    if z != z:
        return NAN
    upper = 0.5 * math.erfc(z / math.sqrt(2.0))
    if alternative == "higher":
        return upper
    if alternative == "lower":
        return 1.0 - upper
    return min(1.0, math.erfc(abs(z) / math.sqrt(2.0)))


def _chi2_sf(x, df) -> float:
    from scipy.stats import chi2

    return float(chi2.sf(x, df))


def _ends(lo, hi, alternative, low_end, high_end):
    if alternative == "higher":
        return (lo, high_end)
    if alternative == "lower":
        return (low_end, hi)
    return (lo, hi)


# ---------------------------------------------------------------- two proportions

def wilson(x, n, q):
    p = x / n
    centre = (p + q * q / (2 * n)) / (1 + q * q / n)
    half = q / (1 + q * q / n) * math.sqrt(p * (1 - p) / n + q * q / (4 * n * n))
    return max(0.0, centre - half), min(1.0, centre + half)


def newcombe(x1, n1, x2, n2, level=0.95, alternative="two-sided"):
    q = _q(level, alternative)
    p1, p2 = x1 / n1, x2 / n2
    l1, u1 = wilson(x1, n1, q)
    l2, u2 = wilson(x2, n2, q)
    d = p1 - p2
    lo = d - math.sqrt((p1 - l1) ** 2 + (u2 - p2) ** 2)
    hi = d + math.sqrt((u1 - p1) ** 2 + (p2 - l2) ** 2)
    return _ends(lo, hi, alternative, -1.0, 1.0)


def two_proportions(x1, n1, x2, n2, level=0.95, alternative="two-sided") -> NormalTheory:
    """Score (pooled) z for p1 - p2, with Newcombe's interval for the difference."""
    pooled = (x1 + x2) / (n1 + n2)
    var = pooled * (1 - pooled) * (1 / n1 + 1 / n2)
    diff = x1 / n1 - x2 / n2
    z = 0.0 if var <= 0 or diff == 0 else diff / math.sqrt(var)
    return NormalTheory("score z (pooled) for p1 - p2 (Pearson chi-square, signed)", z, None,
                        _p(z, alternative), newcombe(x1, n1, x2, n2, level, alternative),
                        "Newcombe hybrid score (from Wilson intervals)")


def _mn_ratio_z(x1, n1, x2, n2, r):
    big = n1 + n2
    a = big * r
    b = -(n1 * r + x1 + n2 + x2 * r)
    c = x1 + x2
    q2 = (-b - math.sqrt(max(b * b - 4 * a * c, 0.0))) / (2 * a)
    q1 = r * q2
    var = (q1 * (1 - q1) / n1 + r * r * q2 * (1 - q2) / n2) * big / (big - 1.0)
    num = x1 / n1 - r * x2 / n2
    if var <= 0:
        return 0.0 if num == 0 else math.copysign(math.inf, num)
    return num / math.sqrt(var)


def ratio_score_interval(x1, n1, x2, n2, level=0.95, alternative="two-sided") -> tuple:
    """Miettinen-Nurminen score interval for p1 / p2 (0 or inf where the data allow)."""
    from scipy.optimize import brentq

    q = _q(level, alternative)
    if x1 == 0 and x2 == 0:
        return (0.0, math.inf)
    if x1 > 0 and x2 > 0:
        centre = math.log((x1 / n1) / (x2 / n2))
    else:
        centre = math.log((x1 + 0.5) / (n1 + 0.5) / ((x2 + 0.5) / (n2 + 0.5)))
    f = lambda v: _mn_ratio_z(x1, n1, x2, n2, math.exp(v))   # decreasing in v
    lo, hi = 0.0, math.inf
    if x1 > 0 and alternative in ("two-sided", "higher"):
        a = centre
        while f(a) >= q and a < centre + 50:
            a += 1.0
        b = a - 1.0
        while f(b) < q and b > centre - 60:
            b -= 1.0
        lo = math.exp(brentq(lambda v: f(v) - q, b, a, xtol=1e-12)) if f(b) >= q else 0.0
    if x2 > 0 and alternative in ("two-sided", "lower"):
        a = centre
        while f(a) <= -q and a > centre - 50:
            a -= 1.0
        b = a + 1.0
        while f(b) > -q and b < centre + 60:
            b += 1.0
        hi = math.exp(brentq(lambda v: f(v) + q, a, b, xtol=1e-12)) if f(b) <= -q else math.inf
    return (lo, hi)


# ---------------------------------------------------------------- strata

def mantel_haenszel(tables, level=0.95, alternative="two-sided") -> NormalTheory:
    """Mantel-Haenszel chi-square (no continuity correction), MH odds ratio and its
    Robins-Breslow-Greenland interval."""
    t = np.asarray(tables, float)
    a, b, c, d = t[:, 0, 0], t[:, 0, 1], t[:, 1, 0], t[:, 1, 1]
    n = a + b + c + d
    keep = n > 1
    a, b, c, d, n = a[keep], b[keep], c[keep], d[keep], n[keep]
    r1, r2, c1, c2 = a + b, c + d, a + c, b + d
    expected = r1 * c1 / n
    var = r1 * r2 * c1 * c2 / (n * n * (n - 1))
    name = "Mantel-Haenszel chi-square (no continuity correction)"
    if var.sum() <= 0:
        return NormalTheory(name, 0.0, 1.0, 1.0)
    dev = float((a - expected).sum())
    x2 = dev * dev / float(var.sum())
    p = _chi2_sf(x2, 1) if alternative == "two-sided" else _p(math.copysign(math.sqrt(x2), dev),
                                                                alternative)
    r_, s_ = a * d / n, b * c / n
    R, S = float(r_.sum()), float(s_.sum())
    interval, how = None, ""
    if R > 0 and S > 0:
        pp, qq = (a + d) / n, (b + c) / n
        v = (float((pp * r_).sum()) / (2 * R * R) + float((pp * s_ + qq * r_).sum()) / (2 * R * S)
             + float((qq * s_).sum()) / (2 * S * S))
        z = _q(level, alternative)
        centre = math.log(R / S)
        interval = _ends(math.exp(centre - z * math.sqrt(v)), math.exp(centre + z * math.sqrt(v)),
                         alternative, 0.0, math.inf)
        how = f"Robins-Breslow-Greenland, about the Mantel-Haenszel odds ratio {R / S:.4g}"
    if alternative != "two-sided":
        name = "Mantel-Haenszel z (signed root of the chi-square)"
        return NormalTheory(name, math.copysign(math.sqrt(x2), dev), None, p, interval, how)
    return NormalTheory(name, x2, 1.0, p, interval, how)


def mh_odds_ratio(tables) -> float:
    t = np.asarray(tables, float)
    n = t.sum(axis=(1, 2))
    keep = n > 0
    t, n = t[keep], n[keep]
    r = float((t[:, 0, 0] * t[:, 1, 1] / n).sum())
    s = float((t[:, 0, 1] * t[:, 1, 0] / n).sum())
    if s == 0:
        return math.inf if r > 0 else NAN
    return r / s


def breslow_day(tables) -> NormalTheory:
    """Breslow-Day chi-square of homogeneous odds ratios, with Tarone's correction."""
    name = "Breslow-Day chi-square with Tarone's correction"
    psi = mh_odds_ratio(tables)
    t = np.asarray(tables, float)
    rows = []
    for k in t:
        a = k[0, 0]
        r1, r2, c1 = k[0].sum(), k[1].sum(), k[:, 0].sum()
        lo, hi = max(0.0, c1 - r2), min(r1, c1)
        if hi <= lo:
            continue
        rows.append((a, r1, r2, c1, lo, hi))
    if len(rows) < 2 or not (0 < psi < math.inf):
        return NormalTheory(name, NAN, float(max(len(rows) - 1, 1)), NAN)
    stat, dev_sum, var_sum = 0.0, 0.0, 0.0
    for a, r1, r2, c1, lo, hi in rows:
        # expected top-left count e under odds ratio psi: e (r2 - c1 + e) = psi (r1 - e)(c1 - e)
        qa = 1.0 - psi
        qb = (r2 - c1) + psi * (r1 + c1)
        qc = -psi * r1 * c1
        if abs(qa) < 1e-12:
            e = -qc / qb
        else:
            disc = math.sqrt(max(qb * qb - 4 * qa * qc, 0.0))
            roots = [(-qb + disc) / (2 * qa), (-qb - disc) / (2 * qa)]
            e = next(r for r in roots if lo - 1e-9 <= r <= hi + 1e-9)
        cells = [e, r1 - e, c1 - e, r2 - c1 + e]
        if min(cells) <= 0:
            continue
        v = 1.0 / sum(1.0 / x for x in cells)
        stat += (a - e) ** 2 / v
        dev_sum += a - e
        var_sum += v
    stat -= dev_sum ** 2 / var_sum if var_sum > 0 else 0.0
    df = float(len(rows) - 1)
    return NormalTheory(name, float(stat), df, _chi2_sf(stat, df))


def stratified_trend(mean, var, observed, alternative="two-sided") -> NormalTheory:
    """z = (T - E0 T) / sd0 T with the conditional (hypergeometric) moments within strata."""
    name = "trend z (Cochran-Armitage, conditional within strata)"
    if var <= 0:
        return NormalTheory(name, 0.0, None, 1.0)
    z = float((observed - mean) / math.sqrt(var))
    return NormalTheory(name, z, None, _p(z, alternative))


# ---------------------------------------------------------------- rates

def one_rate(x, t, rate0, level=0.95, alternative="two-sided") -> NormalTheory:
    mu = rate0 * t
    z = (x - mu) / math.sqrt(mu)
    q = _q(level, alternative)
    centre = x + q * q / 2.0
    half = q * math.sqrt(x + q * q / 4.0)
    interval = _ends((centre - half) / t, (centre + half) / t, alternative, 0.0, math.inf)
    return NormalTheory("score z for the rate, (x - rate0 t) / sqrt(rate0 t)", z, None,
                        _p(z, alternative), interval, "score interval (Poisson)")


def two_rates(x1, t1, x2, t2, level=0.95, alternative="two-sided") -> NormalTheory:
    n = x1 + x2
    pi0 = t1 / (t1 + t2)
    z = 0.0 if n == 0 else (x1 - n * pi0) / math.sqrt(n * pi0 * (1 - pi0))
    interval, how = None, ""
    if x1 > 0 and x2 > 0:
        centre, se = math.log((x1 / t1) / (x2 / t2)), math.sqrt(1 / x1 + 1 / x2)
        q = _q(level, alternative)
        interval = _ends(math.exp(centre - q * se), math.exp(centre + q * se), alternative,
                         0.0, math.inf)
        how = "Wald on log(rate ratio), se = sqrt(1/x1 + 1/x2)"
    return NormalTheory("score z for the rate ratio (normal form of the binomial given the total)",
                        z, None, _p(z, alternative), interval, how)


def wald_log_rate_ratio(x1, t1, x2, t2, alternative="two-sided") -> NormalTheory:
    name = "Wald z for log(rate ratio)"
    if x1 == 0 or x2 == 0:
        return NormalTheory(name, NAN, None, NAN)
    z = math.log((x1 / t1) / (x2 / t2)) / math.sqrt(1 / x1 + 1 / x2)
    return NormalTheory(name, z, None, _p(z, alternative))


# ---------------------------------------------------------------- dose response

def logistic_fit(y, x, max_iter: int = 60):
    """(intercept, slope, se of the slope, log-likelihood, converged) by Newton-Raphson;
    (nan, ...) with converged False when the fit runs away (separation)."""
    y, x = np.asarray(y, float), np.asarray(x, float)
    X = np.column_stack([np.ones_like(x), x])
    beta = np.zeros(2)
    m = y.mean()
    beta[0] = math.log(m / (1 - m))
    loglik = -math.inf
    for _ in range(max_iter):
        eta = X @ beta
        p = 1.0 / (1.0 + np.exp(-eta))
        w = p * (1 - p)
        info = X.T @ (X * w[:, None])
        try:
            step = np.linalg.solve(info, X.T @ (y - p))
        except np.linalg.LinAlgError:
            return NAN, NAN, NAN, NAN, False
        beta = beta + step
        eta = X @ beta
        new = float(np.sum(y * eta - np.logaddexp(0.0, eta)))
        if abs(new - loglik) < 1e-10 and np.max(np.abs(step)) < 1e-8:
            loglik = new
            break
        loglik = new
    else:
        return NAN, NAN, NAN, loglik, False
    p = 1.0 / (1.0 + np.exp(-(X @ beta)))
    info = X.T @ (X * (p * (1 - p))[:, None])
    try:
        cov = np.linalg.inv(info)
    except np.linalg.LinAlgError:
        return NAN, NAN, NAN, loglik, False
    fitted_extreme = np.mean((p < 1e-8) | (p > 1 - 1e-8))
    if fitted_extreme > 0 and abs(beta[1]) * np.ptp(x) > 30:
        return NAN, NAN, NAN, loglik, False
    return float(beta[0]), float(beta[1]), float(math.sqrt(cov[1, 1])), loglik, True


def logistic(y, x, level=0.95, alternative="two-sided"):
    """(Wald z for the slope with its interval, likelihood-ratio chi-square)."""
    _, b, se, loglik, ok = logistic_fit(y, x)
    name = "Wald z for the logistic slope (maximum likelihood)"
    lr_name = "likelihood-ratio chi-square for the slope"
    y = np.asarray(y, float)
    m = y.mean()
    null = float(len(y) * (m * math.log(m) + (1 - m) * math.log(1 - m)))
    if not ok:
        how = "no finite maximum-likelihood slope (the outcomes are separated by x)"
        return (NormalTheory(name, NAN, None, NAN, None, how),
                NormalTheory(lr_name, NAN, 1.0, NAN))
    z = b / se
    q = _q(level, alternative)
    interval = _ends(b - q * se, b + q * se, alternative, -math.inf, math.inf)
    lr = max(0.0, 2.0 * (loglik - null))
    lr_p = _chi2_sf(lr, 1) if alternative == "two-sided" else _p(math.copysign(math.sqrt(lr), b),
                                                                  alternative)
    return (NormalTheory(name, z, None, _p(z, alternative), interval,
                         "Wald: slope -+ z se (maximum likelihood)"),
            NormalTheory(lr_name, lr, 1.0, lr_p))
