"""Two samples with unequal spread: permutation tests of studentized statistics.

- `WELCH`: the Welch t, (mean_1 - mean_2) / sqrt(s_1^2 / n_1 + s_2^2 / n_2), recomputed for
  every arrangement. Permuting a studentized statistic keeps the test exact when the groups
  are exchangeable and makes it asymptotically valid for a difference in means when the
  spreads differ (Janssen 1997, Stat. Prob. Letters 36:9; Chung and Romano 2013, Ann. Stat.
  41:484), where the unstudentized difference is not.
- `BRUNNER_MUNZEL`: the Brunner-Munzel statistic (p - 1/2) / se(p) for
  p = P(X > Y) + 1/2 P(X = Y) (X the first group), from the placements (the number of the
  other group's values below each value, ties 1/2), recomputed for every arrangement
  (Neubert and Brunner 2007, CSDA 51:5192). A sample whose placements have no spread
  (complete separation) gives +-inf.

The reference set is every choice of the first group's units (C(N, n_1), listed in chunks) or
the observed split and `draws` seeded ones (the two-sample engine's streams). Two-sided
p = P(|T| >= |t|); `higher` P(T >= t); `lower` P(T <= t). The interval is
estimate -+ c x se, c the (K + 1)-th largest oriented statistic of the R arrangements,
K = floor((1 - level) R): 0 (1/2 for Brunner-Munzel) lies outside it exactly when p <= 1 - level.

A family hands the engine one of these rules (`StudentizedRule`): its statistic for rows of
codes, its observed estimate and standard error, and its cost per unit.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from ..plan.cost import Candidate
from ..result import EngineOutcome
from .core import pvalues
from .core.enumeration import combinations_chunks
from .core.progress import NO_PROGRESS, Progress

ENUMERATION_MAX = 5_000_000
WINDOW_ROWS = 1 << 16
BIG = 1e300
ZERO_VARIANCE = 1e-10

@dataclass(frozen=True)
class StudentizedRule:
    """A studentized two-sample statistic: what the engine recomputes for every arrangement."""

    statistic_name: str
    statistic: Callable      # (rows of codes, layout of the pooled values, n1, n2) -> (R,)
    estimate: Callable       # (x, y) -> (estimate, its standard error)
    row_cost: float          # operations per unit for one listed arrangement
    draw_cost: float         # ... added for one sampled arrangement


@dataclass(frozen=True)
class StudentizedOutcome:
    outcome: EngineOutcome
    critical: float          # c on the oriented scale
    estimate: float
    se: float


def candidates(rule: StudentizedRule, x, y, draws: int) -> list:
    n1, N = len(x), len(x) + len(y)
    total = float(math.comb(N, n1))
    per_row = N * rule.row_cost
    feasible = total <= ENUMERATION_MAX
    return [Candidate("enumeration", "complete enumeration of the splits", True,
                      total * (per_row + n1), min(total, 100_000) * N * 40.0 + total * 16,
                      feasible=feasible, arrangements=total,
                      note="" if feasible else f"{total:.3g} splits are too many to list"),
            Candidate("monte-carlo", "Monte Carlo: random splits", False,
                      (draws + 1) * (per_row + rule.draw_cost * N),
                      WINDOW_ROWS * N * 40.0 + draws * 8,
                      arrangements=total, note=f"{draws} draws")]


# ---------------------------------------------------------------- statistics per arrangement

def _layout(x, y):
    v = np.concatenate([np.asarray(x, float), np.asarray(y, float)])
    order = np.argsort(v, kind="stable")
    sv = v[order]
    new = np.r_[True, sv[1:] != sv[:-1]]
    block = np.cumsum(new) - 1
    starts = np.flatnonzero(new)
    ends = np.r_[starts[1:], len(sv)]
    return v, order, starts[block], ends[block]


def welch_rows(rows, v, n1, n2) -> np.ndarray:
    """Welch t of group 0 - group 1 for each row of codes (0: first group)."""
    centre, scale = v.mean(), v.std() or 1.0
    z = (v - centre) / scale
    first = (rows == 0)
    s1 = first @ z
    q1 = first @ (z * z)
    s2, q2 = z.sum() - s1, (z * z).sum() - q1
    m1, m2 = s1 / n1, s2 / n2
    v1 = np.maximum((q1 - s1 * m1) / (n1 - 1), 0.0)
    v2 = np.maximum((q2 - s2 * m2) / (n2 - 1), 0.0)
    v1[v1 < ZERO_VARIANCE] = 0.0
    v2[v2 < ZERO_VARIANCE] = 0.0
    return _ratio(m1 - m2, v1 / n1 + v2 / n2)


def welch_batch(rows, A) -> np.ndarray:
    """Welch t of group 0 - group 1 for every data set (rows of A) and arrangement: (D, R)."""
    A = np.asarray(A, dtype=float)
    centre = A.mean(axis=1, keepdims=True)
    scale = A.std(axis=1, keepdims=True)
    scale[scale == 0] = 1.0
    Z = (A - centre) / scale
    first = (np.asarray(rows) == 0).astype(float)                 # (R, N)
    n1 = float(first[0].sum())
    n2 = A.shape[1] - n1
    s1, q1 = Z @ first.T, (Z * Z) @ first.T                       # (D, R)
    s2 = Z.sum(axis=1, keepdims=True) - s1
    q2 = (Z * Z).sum(axis=1, keepdims=True) - q1
    m1, m2 = s1 / n1, s2 / n2
    v1 = np.maximum((q1 - s1 * m1) / (n1 - 1), 0.0)
    v2 = np.maximum((q2 - s2 * m2) / (n2 - 1), 0.0)
    v1[v1 < ZERO_VARIANCE] = 0.0
    v2[v2 < ZERO_VARIANCE] = 0.0
    return _ratio(m1 - m2, v1 / n1 + v2 / n2)


def _ratio(num, se2) -> np.ndarray:
    with np.errstate(invalid="ignore", divide="ignore"):
        t = num / np.sqrt(se2)
    return np.where(se2 > 0, t, np.where(np.abs(num) > 1e-12, np.copysign(np.inf, num), 0.0))


def placements_rows(rows, lay):
    """(p estimate, se) for each row: p = P(first > second) + 1/2 P(tie)."""
    v, order, start, end = lay
    cs = rows[:, order]
    R, N = cs.shape
    first = cs == 0
    n1 = int(first[0].sum())
    n2 = N - n1
    cum1 = np.zeros((R, N + 1), dtype=np.int32)
    cum2 = np.zeros((R, N + 1), dtype=np.int32)
    np.cumsum(first, axis=1, out=cum1[:, 1:])
    np.cumsum(~first, axis=1, out=cum2[:, 1:])
    below2 = (cum2[:, start] + cum2[:, end]) * 0.5      # second-group values below, ties 1/2
    below1 = (cum1[:, start] + cum1[:, end]) * 0.5
    a = np.where(first, below2, 0.0)
    b = np.where(first, 0.0, below1)
    sa, sb = a.sum(axis=1), b.sum(axis=1)
    va = np.maximum(((a * a).sum(axis=1) - sa * sa / n1) / (n1 - 1), 0.0)
    vb = np.maximum(((b * b).sum(axis=1) - sb * sb / n2) / (n2 - 1), 0.0)
    va[va < 1e-12] = 0.0
    vb[vb < 1e-12] = 0.0
    p = sa / (n1 * n2)
    se2 = va / (n1 * n2 * n2) + vb / (n2 * n1 * n1)
    return p, se2


def brunner_munzel_rows(rows, lay) -> np.ndarray:
    p, se2 = placements_rows(rows, lay)
    return _ratio(p - 0.5, se2)


def brunner_munzel_parts(x, y) -> dict:
    """The observed estimate, its standard error and the Satterthwaite df."""
    lay = _layout(x, y)
    n1, n2 = len(x), len(y)
    rows = np.r_[np.zeros(n1, np.int8), np.ones(n2, np.int8)][None, :]
    p, se2 = placements_rows(rows, lay)
    v, order, start, end = lay
    codes = rows[0][order]
    cum1 = np.r_[0, np.cumsum(codes == 0)]
    cum2 = np.r_[0, np.cumsum(codes == 1)]
    a = ((cum2[start] + cum2[end]) * 0.5)[codes == 0]
    b = ((cum1[start] + cum1[end]) * 0.5)[codes == 1]
    sa, sb = a.var(ddof=1) if n1 > 1 else 0.0, b.var(ddof=1) if n2 > 1 else 0.0
    num = (n1 * sa + n2 * sb) ** 2
    den = (n1 * sa) ** 2 / max(n1 - 1, 1) + (n2 * sb) ** 2 / max(n2 - 1, 1)
    df = num / den if den > 0 else math.inf
    return {"estimate": float(p[0]), "se": math.sqrt(float(se2[0])), "df": float(df)}


# ---------------------------------------------------------------- the rules

def _welch_statistic(rows, lay, n1, n2):
    return welch_rows(rows, lay[0], n1, n2)


def _welch_estimate(x, y):
    return float(x.mean() - y.mean()), math.sqrt(x.var(ddof=1) / len(x) + y.var(ddof=1) / len(y))


def _brunner_munzel_statistic(rows, lay, n1, n2):
    return brunner_munzel_rows(rows, lay)


def _brunner_munzel_estimate(x, y):
    parts = brunner_munzel_parts(x, y)
    return parts["estimate"], parts["se"]


WELCH = StudentizedRule("Welch t (recomputed for every arrangement)", _welch_statistic,
                        _welch_estimate, 30.0, 10.0)
BRUNNER_MUNZEL = StudentizedRule("Brunner-Munzel statistic (recomputed for every arrangement)",
                                 _brunner_munzel_statistic, _brunner_munzel_estimate, 40.0, 45.0)


# ---------------------------------------------------------------- the test

def oriented(t, alternative) -> np.ndarray:
    t = np.asarray(t, dtype=float)
    out = np.abs(t) if alternative == "two-sided" else (t if alternative == "higher" else -t)
    return np.clip(np.nan_to_num(out, nan=0.0, posinf=BIG, neginf=-BIG), -BIG, BIG)


def reference_rows(n1, N, algorithm, draws, seed, progress):
    """Rows of codes (0: first group): every split, or the observed and `draws` sampled."""
    if algorithm == "enumeration":
        total = math.comb(N, n1)
        done = 0
        for idx in combinations_chunks(N, n1):
            rows = np.ones((len(idx), N), dtype=np.int8)
            rows[np.arange(len(idx))[:, None], idx] = 0
            done += len(idx)
            progress.step(done / total, "listing splits")
            yield rows
        return
    from .many.arrangements import sampled_windows

    codes = np.r_[np.zeros(n1, np.int8), np.ones(N - n1, np.int8)]
    yield from sampled_windows(codes, seed, draws, WINDOW_ROWS, progress)


def run(rule: StudentizedRule, x, y, alternative, algorithm, draws, seed, level,
        progress: Progress = NO_PROGRESS) -> StudentizedOutcome:
    x, y = np.asarray(x, float), np.asarray(y, float)
    n1, n2 = len(x), len(y)
    N = n1 + n2
    lay = _layout(x, y)
    observed = np.r_[np.zeros(n1, np.int8), np.ones(n2, np.int8)][None, :]
    t_obs = float(rule.statistic(observed, lay, n1, n2)[0])
    t_or = float(oriented([t_obs], alternative)[0])
    tol = pvalues.RTOL * max(abs(t_or), 1.0)
    null = np.concatenate([oriented(rule.statistic(rows, lay, n1, n2), alternative)
                           for rows in reference_rows(n1, N, algorithm, draws, seed, progress)])
    hits = int(np.count_nonzero(null >= t_or - tol))
    R = len(null)
    K = int(math.floor((1.0 - level) * R + 1e-9))
    critical = float(np.partition(null, R - 1 - K)[R - 1 - K]) if K < R else -math.inf
    est, se = rule.estimate(x, y)
    common = dict(statistic_name=rule.statistic_name, statistic=t_obs)
    if algorithm == "enumeration":
        out = EngineOutcome(p_value=pvalues.clip(hits / R), method="exact",
                            algorithm="complete enumeration of the splits", arrangements=float(R),
                            **common)
    else:
        p, interval = pvalues.monte_carlo_p(hits - 1, R - 1)
        out = EngineOutcome(p_value=p, method="monte-carlo", draws=R - 1, p_interval=interval,
                            seed=seed, algorithm="Monte Carlo: random splits", **common)
    return StudentizedOutcome(out, critical, est, se)


def interval(est, se, critical, alternative, bounds=(-math.inf, math.inf)):
    """est -+ c se (one end for one-sided tests), within the bounds; None without a spread."""
    if not se > 0 or not np.isfinite(critical):
        return None
    if critical >= BIG / 10:
        return bounds
    h = critical * se
    lo = est - h if alternative != "lower" else -math.inf
    hi = est + h if alternative != "higher" else math.inf
    return (max(bounds[0], lo), min(bounds[1], hi))
