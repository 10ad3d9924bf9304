"""Widths of the exact and the normal-theory interval on the simulated data sets, and their ratio.

Under the shift model the data at effect D are y + D w (w: the design's weights, the first
group's indicator for two samples, x for a slope, 1 for pairs and one sample), so an
interval's width does not depend on the true effect: the null data sets the check simulates
give the widths at every effect.

The exact interval inverts the permutation test of y - D w over the reference set (every
arrangement, or the block's Monte Carlo draws), for a statistic linear in the data
(`Check.width`: families whose scores are the values themselves). Each arrangement's weights
w_p give T_p(D) - T(D) = (T_p - T) + D (w.w - w_p.w), with w.w - w_p.w >= 0, so the test of
D "higher" counts the arrangements whose crossing c_p = (T - T_p) / (w.w - w_p.w) is at most
D (and those that never cross: w_p = w). With the interval-end rule of
`engine.core.confidence` (a count above floor(alpha_side * total) keeps D), the lower end is
the K-th smallest crossing and the upper end the K-th largest, K = floor(alpha_side * total)
+ 1 - (arrangements that never cross) - (1 for a Monte Carlo reference: the observed
arrangement's own count). Where K < 1 no arrangement can reject: the interval is the whole line.

The normal-theory interval is the counterpart's t interval, 2 t(1 - alpha_side; df) se,
written here for each counterpart a family declares (`Check.width`).

Intervals at order statistics of the values (`Check.order_widths`: the Hodges-Lehmann
interval of the pairwise differences with the rank-sum test, of the Walsh averages with the
signed-rank test, the sign interval of the values) have their ends at fixed ranks, c and
m - 1 - c from 0: the exact interval's c from the test's exact law, the normal-theory one's
from normal-approximation ranks, both by engine.rankintervals as the analysis finds them; so
both widths are read off each data set's order statistics.

The ratio reported is the mean over data sets of exact width / normal-theory width, with its
standard error (the spread of the ratios over sqrt of their number); data sets whose exact
interval is unbounded are counted apart. A family's own exact width, found one data set at a
time, is taken on the first ONE_BY_ONE data sets of each law.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np

from ..engine.core.confidence import alpha_side, rejected_up_to

ONE_BY_ONE = 400         # data sets a law whose widths a family's own exact_width finds, one
                         # data set at a time (the generic inversion takes every data set)


def t_quantile(level, df):
    from scipy import stats

    return stats.t.isf(float(alpha_side(level, "two-sided")), df)


def welch(pb, Y, level):
    """The Welch t interval's width for the difference in means of each data set."""
    g1 = pb.codes == 0
    n1, n2 = int(g1.sum()), int((~g1).sum())
    v1, v2 = Y[:, g1].var(axis=1, ddof=1) / n1, Y[:, ~g1].var(axis=1, ddof=1) / n2
    df = (v1 + v2) ** 2 / (v1 ** 2 / (n1 - 1) + v2 ** 2 / (n2 - 1))
    return 2 * t_quantile(level, df) * np.sqrt(v1 + v2)


def one_sample_t(pb, Y, level):
    """The t interval's width for the mean (of the differences) of each data set."""
    n = Y.shape[1]
    return 2 * t_quantile(level, n - 1) * Y.std(axis=1, ddof=1) / np.sqrt(n)


def slope_t(pb, Y, level):
    """The least-squares t interval's width for the slope on the design's x of each data set."""
    n = Y.shape[1]
    w = pb.weights - pb.weights.mean()
    sxx = float(w @ w)
    yc = Y - Y.mean(axis=1, keepdims=True)
    b = (yc @ w) / sxx
    rss = np.maximum((yc * yc).sum(axis=1) - b * b * sxx, 0.0)
    return 2 * t_quantile(level, n - 2) * np.sqrt(rss / (n - 2) / sxx)


def exact(pb, A, reference, level) -> np.ndarray:
    """The exact interval's width for each data set (rows of A, the values), inf where it is
    unbounded."""
    if pb.form == "signs":
        w = np.ones(pb.n)
    else:
        w = np.asarray(pb.weights, dtype=float)
    W = reference.matrix
    t_obs = A @ w
    t_arr = W @ A.T                                  # arrangements x data sets
    k = float(w @ w) - W @ w                         # >= 0: w_p.w <= w.w
    never = k <= 1e-9 * max(float(w @ w), 1.0)
    total = reference.count if reference.exact else reference.count + 1
    K = rejected_up_to(alpha_side(level, "two-sided"), total) + 1 - int(never.sum()) - (
        0 if reference.exact else 1)
    if K < 1 or K > int((~never).sum()):
        return np.full(A.shape[0], np.inf)
    c = (t_obs[None, :] - t_arr[~never]) / k[~never][:, None]
    low = np.partition(c, K - 1, axis=0)[K - 1]
    high = -np.partition(-c, K - 1, axis=0)[K - 1]
    return high - low


CHUNK = 4_000_000        # values held at once for the order statistics of many data sets


def _order_widths(V, c: int) -> np.ndarray:
    """Width between the order statistics c and m - 1 - c (from 0) of each row of V, inf where
    c < 0 (no arrangement can reject)."""
    m = V.shape[1]
    if c < 0 or 2 * c >= m:
        return np.full(V.shape[0], np.inf)
    P = np.partition(V, [c, m - 1 - c], axis=1)
    return P[:, m - 1 - c] - P[:, c]


def _by_order(values, Y, criticals) -> tuple:
    """(exact widths, normal-theory widths) from the order statistics of values(rows of Y), in
    chunks of data sets."""
    m = values(Y[:1]).shape[1]
    step = max(1, CHUNK // max(m, 1))
    out = [[], []]
    for start in range(0, Y.shape[0], step):
        V = values(Y[start:start + step])
        for i, c in enumerate(criticals):
            out[i].append(_order_widths(V, c))
    return np.concatenate(out[0]), np.concatenate(out[1])


@lru_cache(maxsize=64)
def _criticals(which: str, sizes: tuple, level) -> tuple:
    """(exact c, normal c) of engine.rankintervals for a two-sided interval, found once per
    design and level (the exact law is formed once, not once a block)."""
    from ..engine import rankintervals as R

    if which == "two-sample":
        return (R.two_sample_critical(*sizes, level, "two-sided")[0],
                R.two_sample_normal_critical(*sizes, level, "two-sided"))
    if which == "signed-rank":
        return (R.one_sample_critical(*sizes, level, "two-sided")[0],
                R.one_sample_normal_critical(*sizes, level, "two-sided"))
    return (R.sign_critical(*sizes, level, "two-sided"),
            R.sign_normal_critical(*sizes, level, "two-sided"))


def hodges_lehmann(pb, Y, level) -> tuple:
    """The Hodges-Lehmann shift's exact (rank-sum law) and normal-theory interval widths."""
    g1 = pb.codes == 0
    n1, n2 = int(g1.sum()), int((~g1).sum())

    def differences(Z):
        return (Z[:, g1][:, :, None] - Z[:, ~g1][:, None, :]).reshape(Z.shape[0], -1)

    return _by_order(differences, Y, _criticals("two-sample", (n1, n2), level))


def pseudo_median(pb, Y, level) -> tuple:
    """The Hodges-Lehmann pseudo-median's exact (signed-rank law) and normal-theory widths."""
    n = Y.shape[1]
    i, j = np.triu_indices(n)
    return _by_order(lambda Z: (Z[:, i] + Z[:, j]) / 2, Y,
                     _criticals("signed-rank", (n,), level))


def sign_interval(pb, Y, level) -> tuple:
    """The median's exact (binomial law) and normal-theory sign-interval widths."""
    return _by_order(lambda Z: Z, Y, _criticals("sign", (Y.shape[1],), level))


def ratios(pb, E, A, reference, level) -> list:
    """[sum of ratios, sum of squared ratios, data sets with both widths finite, data sets
    whose exact interval is unbounded] on these null data sets."""
    if pb.check.order_widths is not None:
        ex, nt = pb.check.order_widths(pb, E, level)
    else:
        ex = (pb.check.exact_width or exact)(pb, A, reference, level)
        nt = pb.check.width(pb, E, level)
    finite = np.isfinite(ex) & np.isfinite(nt) & (nt > 0)
    r = ex[finite] / nt[finite]
    return [float(r.sum()), float((r * r).sum()), int(finite.sum()),
            int(np.count_nonzero(~np.isfinite(ex)))]


def wanted(problem, done: int) -> bool:
    """Whether the block starting after `done` data sets of a law has its widths found."""
    return problem.check.exact_width is None or done < ONE_BY_ONE


def applies(problem) -> bool:
    """The family declares both widths at order statistics, or the normal-theory width with
    an exact width of its own or one the generic inversion fits (a statistic linear in the
    values); and the interval is two-sided (a one-sided interval has no width)."""
    from . import scoring

    check = problem.check
    if problem.alternative != "two-sided" or problem.strata is not None:
        return False
    if getattr(check, "order_widths", None) is not None:
        return True
    if getattr(check, "width", None) is None:
        return False
    return check.exact_width is not None or (check.scores is scoring.values
                                             and problem.form in ("linear", "signs"))


def summary(sums) -> tuple:
    """(mean ratio, its standard error, data sets with finite widths, unbounded ones) from the
    summed `ratios` of every block."""
    s, ss, m, unbounded = (float(v) for v in sums)
    if m < 2:
        return None, None, int(m), int(unbounded)
    mean = s / m
    var = max(ss / m - mean * mean, 0.0) * m / (m - 1)
    return mean, float(np.sqrt(var / m)), int(m), int(unbounded)
