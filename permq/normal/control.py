"""Normal-theory counterparts of the comparisons against a control.

- Dunnett (1955, JASA 50:1096): t_j = (mean_j - mean_0) / (s sqrt(1/n_j + 1/n_0)) with the
  pooled within-group s on N - k df; the t_j share a multivariate t law whose correlations
  are lambda_j lambda_l, lambda_j = sqrt(n_j / (n_j + n_0)). That one-factor form lets the
  probability P(max_j |T_j| < c) be written as a double integral over the common factor W
  and the scale S = sqrt(chi^2_df / df) (Dunnett's own route): Gauss-Legendre in W, and in S
  on panels fitted to c, of the tail area itself, deterministic, to about 1e-7 relative.
  Adjusted p_j = P(max |T| >= |t_j|) (one-sided: max T); simultaneous intervals est +- c se
  with P(max |T| < c) = level.
- The many-to-one rank sums by their normal approximation: the pair's Mann-Whitney count,
  tie-corrected within the pair, with the correlations of pairwise-ranked sums sharing a
  control, sqrt(n_j n_l / ((n_0 + n_j + 1)(n_0 + n_l + 1))) (Cov(U_j, U_l) = n_0 n_j n_l / 12
  against Var U_j = n_0 n_j (n_0 + n_j + 1) / 12, common practice), on infinite df.
- Williams (1971, Biometrics 27:103) for doses in order: the isotonic (amalgamated) mean of
  the top dose among doses 1 .. m, max over u of the weighted mean of doses u .. m, less the
  control mean, over s sqrt(1/n_m + 1/n_0) with s pooled over all groups; tested from m = K
  down. Its null law under normal errors is free of the mean and variance, and here is had
  by seeded simulation of the group means and s (not from the printed tables).
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy import special, stats

from ..result import NormalTheory

PANELS, NODES = 12, 16          # Gauss-Legendre panels x nodes for the common factor W
S_NODES = 10                     # Gauss-Legendre nodes per panel for the scale S
WILLIAMS_DRAWS = 200_000


# ---------------------------------------------------------------- the one-factor integral

@lru_cache(maxsize=1)
def _w_grid():
    x, w = np.polynomial.legendre.leggauss(NODES)
    edges = np.linspace(-9.0, 9.0, PANELS + 1)
    half = (edges[1:] - edges[:-1]) / 2
    mid = (edges[1:] + edges[:-1]) / 2
    nodes = (mid[:, None] + half[:, None] * x[None, :]).ravel()
    weights = (half[:, None] * w[None, :]).ravel() * stats.norm.pdf(nodes)
    return nodes, weights


def _inner(u, lam, rest, two_sided) -> np.ndarray:
    """P(max_j |Z_j| < u) (or max_j Z_j < u) for each u, by quadrature in the factor W."""
    w, ww = _w_grid()
    u = np.atleast_1d(np.asarray(u, dtype=float))[:, None, None]     # (U, 1, 1)
    shift = lam[None, None, :] * w[None, :, None]                     # (1, W, m)
    upper = special.ndtr((u - shift) / rest)
    prob = upper - special.ndtr((-u - shift) / rest) if two_sided else upper
    return np.prod(prob, axis=2) @ ww


@lru_cache(maxsize=32)
def _s_quantiles(df: float) -> tuple:
    probs = (1e-13, 1e-6, 1e-3, 0.02, 0.2, 0.5, 0.8, 0.98, 0.999, 1 - 1e-6, 1 - 1e-13)
    return tuple(math.sqrt(stats.chi2.ppf(q, df) / df) for q in probs)


def above(c, lambdas, df, two_sided: bool) -> float:
    """P(max_j |T_j| >= c) (or max_j T_j >= c), T_j = Z_j / S, corr lambda_j lambda_l, with
    S = sqrt(chi^2_df / df). The tail area itself is integrated over S (Gauss-Legendre on
    panels cut at quantiles of S and at fractions of 9.5 / c, past which it vanishes), so that
    small tail areas keep their relative accuracy."""
    lam = np.asarray(lambdas, dtype=float)
    rest = np.sqrt(np.maximum(1.0 - lam ** 2, 1e-300))
    if not np.isfinite(c):
        return 0.0 if c > 0 else 1.0
    if df is None or not np.isfinite(df) or df > 1e6:
        return float(np.clip(1.0 - _inner(c, lam, rest, two_sided)[0], 0.0, 1.0))
    qs = _s_quantiles(float(df))
    hi = min(9.5 / c, qs[-1]) if c > 0 else qs[-1]
    cuts = {0.0, hi} | {q for q in qs if q < hi}
    if c > 0:
        cuts |= {hi * f for f in (1 / 32, 1 / 16, 1 / 8, 1 / 4, 1 / 2)}
    edges = np.array(sorted(cuts))
    x, w = np.polynomial.legendre.leggauss(S_NODES)
    half, mid = np.diff(edges) / 2, (edges[1:] + edges[:-1]) / 2
    s = (mid[:, None] + half[:, None] * x[None, :]).ravel()
    weights = (half[:, None] * w[None, :]).ravel()
    log_dens = (math.log(2.0) + (df / 2) * math.log(df / 2) - special.gammaln(df / 2)
                + (df - 1) * np.log(s) - df * s * s / 2)
    tail = 1.0 - _inner(c * s, lam, rest, two_sided)
    return float(np.clip(np.sum(weights * np.exp(log_dens) * tail), 0.0, 1.0))


def below(c, lambdas, df, two_sided: bool) -> np.ndarray:
    """P(max_j |T_j| < c) (or max_j T_j < c) for each c."""
    return np.array([1.0 - above(ci, lambdas, df, two_sided) for ci in np.atleast_1d(c)])


def adjusted_p(t, lambdas, df, alternative) -> np.ndarray:
    t = np.asarray(t, dtype=float)
    two = alternative == "two-sided"
    c = np.abs(t) if two else (t if alternative == "higher" else -t)
    return np.array([above(ci, lambdas, df, two) for ci in c])


def critical(level, lambdas, df, alternative) -> float:
    """c with P(max |T| < c) = level (max T one-sided): between the one-test and the
    Bonferroni points of t, found by Brent's method."""
    from scipy.optimize import brentq

    two = alternative == "two-sided"
    m = len(lambdas)
    tail = (1.0 - level) / (2.0 if two else 1.0)
    law = stats.norm if df is None or not np.isfinite(df) else stats.t(df)
    lo, hi = float(law.isf(tail)) - 1e-6, float(law.isf(tail / m)) + 1e-6
    f = lambda c: (1.0 - above(c, lambdas, df, two)) - level
    return float(brentq(f, lo, hi, xtol=1e-9))


# ---------------------------------------------------------------- Dunnett

def dunnett(values, groups, level, alternative) -> dict:
    """Dunnett's many-to-one comparison: t, adjusted p and simultaneous interval per dose."""
    x, g = np.asarray(values, float), np.asarray(groups)
    k = int(g.max()) + 1
    n = np.bincount(g, minlength=k).astype(float)
    means = np.array([x[g == i].mean() for i in range(k)])
    ss = sum(float(((x[g == i] - means[i]) ** 2).sum()) for i in range(k))
    df = len(x) - k
    name = f"Dunnett's many-to-one t (pooled variance, {df} df)"
    if df <= 0 or ss <= 0:
        nan = np.full(k - 1, np.nan)
        return {"test": name + ": not available (no spread within the groups)", "t": nan,
                "p": nan, "intervals": [None] * (k - 1), "critical": math.nan, "df": df}
    s = math.sqrt(ss / df)
    se = s * np.sqrt(1 / n[1:] + 1 / n[0])
    est = means[1:] - means[0]
    t = est / se
    lam = np.sqrt(n[1:] / (n[1:] + n[0]))
    p = adjusted_p(t, lam, df, alternative)
    c = critical(level, lam, df, alternative)
    return {"test": name, "t": t, "p": p, "df": df, "critical": c,
            "intervals": _intervals(est, c * se, alternative)}


def _intervals(est, half, alternative) -> list:
    out = []
    for e, h in zip(est, half):
        lo = e - h if alternative != "lower" else -math.inf
        hi = e + h if alternative != "higher" else math.inf
        out.append((float(lo), float(hi)))
    return out


# ---------------------------------------------------------------- rank sums, normal approximation

def rank_sums(values, groups, alternative) -> dict:
    """Pairwise-ranked sums (dose j with the control), tie-corrected, multivariate normal."""
    x, g = np.asarray(values, float), np.asarray(groups)
    k = int(g.max()) + 1
    n = np.bincount(g, minlength=k).astype(float)
    control = x[g == 0]
    z = np.empty(k - 1)
    for j in range(1, k):
        dose = x[g == j]
        u = float(np.sum(dose[:, None] > control[None, :]) +
                  0.5 * np.sum(dose[:, None] == control[None, :]))
        pooled = np.concatenate([dose, control])
        m = len(pooled)
        _, ties = np.unique(pooled, return_counts=True)
        var = n[0] * n[j] / 12.0 * ((m + 1) - float(np.sum(ties ** 3 - ties)) / (m * (m - 1)))
        z[j - 1] = (u - n[0] * n[j] / 2.0) / math.sqrt(var) if var > 0 else 0.0
    lam = np.sqrt(n[1:] / (n[0] + n[1:] + 1))
    return {"test": "many-to-one rank sums, normal approximation (pairwise ranking, "
                    "tie-corrected)", "t": z, "p": adjusted_p(z, lam, None, alternative),
            "df": None, "critical": math.nan, "intervals": [None] * (k - 1)}


# ---------------------------------------------------------------- Williams

def williams_statistic(means, n, s, m: int, direction: str) -> np.ndarray:
    """t-bar for doses 1 .. m (means (..., k), n (k,), s (...)): 'higher' or 'lower'."""
    w = n[1:m + 1]
    mu = means[..., 1:m + 1]
    # weighted means of doses u .. m for every u: suffix sums
    num = np.cumsum((mu * w)[..., ::-1], axis=-1)[..., ::-1]
    den = np.cumsum(w[::-1])[::-1]
    tail = num / den
    top = tail.max(axis=-1) if direction == "higher" else tail.min(axis=-1)
    se = s * math.sqrt(1.0 / n[m] + 1.0 / n[0])
    diff = top - means[..., 0]
    return diff / se if direction == "higher" else -diff / se


def williams(values, groups, alternative, seed, draws: int = WILLIAMS_DRAWS) -> dict:
    """Williams' t-bar for m = K .. 1 doses, with p-values by simulation of the normal model."""
    from ..engine.montecarlo.sampling import blocks

    x, g = np.asarray(values, float), np.asarray(groups)
    k = int(g.max()) + 1
    n = np.bincount(g, minlength=k).astype(float)
    means = np.array([x[g == i].mean() for i in range(k)])
    ss = sum(float(((x[g == i] - means[i]) ** 2).sum()) for i in range(k))
    df = len(x) - k
    steps = list(range(k - 1, 0, -1))
    name = (f"Williams' test (isotonic means, pooled variance on {df} df; p by simulation of "
            f"the normal model, {draws:,} draws, seed {seed})")
    if df <= 0 or ss <= 0:
        return {"test": "Williams' test: not available (no spread within the groups)",
                "t": [math.nan] * len(steps), "p": [math.nan] * len(steps), "steps": steps}
    s = math.sqrt(ss / df)
    observed = [_williams_oriented(means, n, s, m, alternative) for m in steps]
    hits = np.zeros(len(steps))
    for _, size, rng in blocks(seed, draws):
        sim_means = rng.standard_normal((size, k)) / np.sqrt(n)
        sim_s = np.sqrt(rng.chisquare(df, size) / df)
        for i, m in enumerate(steps):
            sim = _williams_oriented(sim_means, n, sim_s, m, alternative)
            hits[i] += np.count_nonzero(sim >= observed[i] - 1e-9 * max(1.0, abs(observed[i])))
    p = (hits + 1) / (draws + 1)
    return {"test": name, "t": [float(v) for v in observed], "p": [float(v) for v in p],
            "steps": steps, "df": df}


def _williams_oriented(means, n, s, m, alternative):
    if alternative == "two-sided":
        return np.maximum(williams_statistic(means, n, s, m, "higher"),
                          williams_statistic(means, n, s, m, "lower"))
    return williams_statistic(means, n, s, m, alternative)


# ---------------------------------------------------------------- Brunner-Munzel

def brunner_munzel(x, y, level, alternative) -> NormalTheory:
    """The Brunner-Munzel t approximation for P(X > Y) + 1/2 P(X = Y) (X the first group)."""
    from ..engine.studentized import brunner_munzel_parts

    parts = brunner_munzel_parts(np.asarray(x, float), np.asarray(y, float))
    est, se, df = parts["estimate"], parts["se"], parts["df"]
    name = "Brunner-Munzel t (Satterthwaite degrees of freedom)"
    if not se > 0 or not np.isfinite(df):
        return NormalTheory(name + ": not available (the placements have no spread)",
                            math.nan, None, math.nan)
    from .tails import p_from_t, t_interval

    t = (est - 0.5) / se
    lo, hi = t_interval(est, se, df, level, alternative)
    return NormalTheory(name, float(t), float(df), p_from_t(t, df, alternative),
                        (max(0.0, lo), min(1.0, hi)), "Brunner-Munzel t interval (clipped to "
                        "[0, 1])")
