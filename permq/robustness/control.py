"""The robustness check of the families that compare levels with a control, and of the
studentized two-sample tests: their layouts, recomputed statistics and counterparts.

- Doses against a control (kind "control"): the check simulates the global test, "does any
  level differ from the control": the permutation p is the smallest single-step max-T adjusted
  p, P(max_j T_j >= max_j t_j) over the joint arrangements (form "recomputed", statistic
  max_j of the oriented Welch-type t or pairwise-ranked z, recomputed for every arrangement);
  its counterpart is the smallest adjusted p of Dunnett's test (or of the normal approximation
  to the pairwise-ranked sums). Under the null its rejection rate is the family-wise error.
- The lowest effective dose (kind "dose-finding"): the step-down rejects anything only when
  its first step, the trend over every dose, is significant; so the check simulates that step
  (form "linear", weights the centred dose scores, as for ordered groups), whose rate under the
  null is the family-wise error of the whole step-down; counterpart Williams' test over every
  dose (its null law tabulated once by simulation) or the normal approximation to the rank trend.
- `welch` and `brunner-munzel` (`welch_check`, `brunner_munzel_check`): form "recomputed",
  the statistic recomputed for every arrangement of the two groups.

A recomputed statistic is returned for each data set (rows of A) and arrangement (rows of
codes) as its natural, signed value; the simulation orients it by the problem's alternative
(the global statistic over the levels is max |t|, max t or min t, by the alternative).
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from ..bind import designs
from ..errors import PlanError
from .spec import Check

BIG = 1e300
WILLIAMS_TABLE_DRAWS = 100_000
TABLE_SEED = 20261203


def _ranked(design) -> bool:
    """Whether the design's family ranks (its declared `ranked`), else it takes the values."""
    from ..families.registry import family_for

    return family_for(design).extra["ranked"]


def _clip(t):
    return np.clip(np.nan_to_num(t, nan=0.0, posinf=BIG, neginf=-BIG), -BIG, BIG)


# ---------------------------------------------------------------- layouts

def control_problem(d: designs.ControlDesign, check: Check):
    from .problem import Problem, _safe

    v, g = d.values, d.groups
    sizes = np.bincount(g)
    k, N = len(sizes), len(v)
    if N <= k or (not _ranked(d) and np.any(sizes < 2)):
        raise PlanError("robustness needs two or more values in each level")
    means = np.bincount(g, weights=v) / sizes
    sd = float(np.sqrt(((v - means[g]) ** 2).sum() / (N - k)))
    shape = " + ".join(str(s) for s in sizes)
    if d.kind == "dose-finding":
        s = d.scores[g]
        sc = s - s.mean()
        slope = float((sc * v).sum() / (sc * sc).sum())
        return Problem("ordered", "", d.settings.alternative, check.form, g.copy(), sc, s, sd,
                       "pooled within-group sd", slope,
                       "trend slope over every dose (per unit of dose score)",
                       slope * sc / _safe(sd), sc / np.ptp(d.scores),
                       f"a control and {k - 1} doses in order, {shape}",
                       sd / float(np.ptp(d.scores)))
    diffs = means[1:] - means[0]
    j = int(np.argmax(np.abs(diffs)))
    unit = (g > 0).astype(float)
    return Problem("control", "", d.settings.alternative, check.form, g.copy(), None, None, sd,
                   "pooled within-group sd", float(diffs[j]),
                   f"largest difference from the control ({d.labels[j + 1]} - {d.labels[0]})",
                   (means[g] - means[0]) / _safe(sd), unit,
                   f"a control and {k - 1} levels, {shape}", sd)


# ---------------------------------------------------------------- recomputed statistics

def _oriented(t, alternative):
    return np.abs(t) if alternative == "two-sided" else (t if alternative == "higher" else -t)


def extreme(t, alternative):
    """The global statistic over the levels (last axis): max |t| (two-sided), max t (higher),
    min t (lower), so that the problem's own alternative picks its tail."""
    if alternative == "two-sided":
        return np.abs(t).max(axis=-1)
    return t.max(axis=-1) if alternative == "higher" else t.min(axis=-1)


def largest(ranked: bool, alternative: str):
    """The most extreme statistic of the levels against the control: (D, R)."""
    def recompute(problem, A, rows):
        from ..engine.control import statistics

        rows = np.asarray(rows, dtype=np.int8)
        if not ranked:
            lay = statistics.layout(A, problem.codes, False)
            return _clip(extreme(statistics.statistics(rows, lay), alternative))
        out = np.empty((A.shape[0], rows.shape[0]))
        for i, a in enumerate(A):
            t = statistics.statistics(rows, statistics.layout(a, problem.codes, True))[0]
            out[i] = _clip(extreme(t, alternative))
        return out
    return recompute


def welch(problem, A, rows):
    from ..engine.studentized import welch_batch

    return _clip(welch_batch(np.asarray(rows), A))


def brunner_munzel(problem, A, rows):
    from ..engine.studentized import _layout, brunner_munzel_rows

    n1 = int((problem.codes == 0).sum())
    out = np.empty((A.shape[0], len(rows)))
    for i, a in enumerate(A):
        out[i] = _clip(brunner_munzel_rows(np.asarray(rows), _layout(a[:n1], a[n1:])))
    return out


def as_is(problem, a, t):
    return t


# ---------------------------------------------------------------- counterparts

@lru_cache(maxsize=16)
def _tail_table(lambdas: tuple, df, two_sided: bool):
    """log P(max |T| >= c) on a grid of c, for interpolation (one design's law)."""
    from ..normal.control import above

    grid = np.linspace(0.0 if two_sided else -10.0, 14.0, 281 if two_sided else 481)
    tails = np.array([above(c, np.array(lambdas), df, two_sided) for c in grid])
    return grid, np.log(np.maximum(tails, 1e-300))


def _global_tail(c, lambdas, df, two_sided):
    """P(max |T| >= c) for each c: exactly for df = inf, else from the design's table."""
    from ..normal.control import _inner

    lam = np.asarray(lambdas, dtype=float)
    if df is None:
        rest = np.sqrt(np.maximum(1.0 - lam ** 2, 1e-300))
        return np.clip(1.0 - _inner(c, lam, rest, two_sided), 0.0, 1.0)
    from scipy.interpolate import PchipInterpolator

    grid, logs = _tail_table(tuple(float(v) for v in lam), float(df), two_sided)
    inside = np.clip(c, grid[0], grid[-1])
    out = np.exp(PchipInterpolator(grid, logs)(inside))
    return np.where(c < grid[0], 1.0, out)


def dunnett_global(alternative):
    """The smallest adjusted p of Dunnett's test for each data set (pooled variance)."""
    def normal_p(pb, Y, A):
        sizes = pb.sizes.astype(float)
        k, N = len(sizes), pb.n
        onehot = (pb.codes[:, None] == np.arange(k)).astype(float)
        means = (Y @ onehot) / sizes
        ssw = ((Y - means[:, pb.codes]) ** 2).sum(axis=1)
        df = N - k
        s = np.sqrt(ssw / df)
        t = (means[:, 1:] - means[:, :1]) / (s[:, None] * np.sqrt(1 / sizes[1:] + 1 / sizes[0]))
        c = _oriented(t, alternative).max(axis=1)
        lam = np.sqrt(sizes[1:] / (sizes[1:] + sizes[0]))
        return _global_tail(c, lam, df, alternative == "two-sided")
    return normal_p


def rank_sums_global(alternative):
    """The smallest adjusted p of the normal approximation to the pairwise-ranked sums."""
    def normal_p(pb, Y, A):
        from ..normal.control import rank_sums

        sizes = pb.sizes.astype(float)
        lam = np.sqrt(sizes[1:] / (sizes[0] + sizes[1:] + 1))
        c = np.array([_oriented(rank_sums(y, pb.codes, alternative)["t"], alternative).max()
                      for y in Y])
        return _global_tail(c, lam, None, alternative == "two-sided")
    return normal_p


@lru_cache(maxsize=16)
def _williams_null(sizes: tuple, alternative: str) -> np.ndarray:
    """Williams' statistic over every dose, under the normal null: sorted draws (one design)."""
    from ..engine.montecarlo.sampling import blocks
    from ..normal.control import _williams_oriented

    n = np.array(sizes, dtype=float)
    k, df = len(n), int(n.sum()) - len(n)
    out = []
    for _, size, rng in blocks(TABLE_SEED, WILLIAMS_TABLE_DRAWS):
        means = rng.standard_normal((size, k)) / np.sqrt(n)
        s = np.sqrt(rng.chisquare(df, size) / df)
        out.append(_williams_oriented(means, n, s, k - 1, alternative))
    return np.sort(np.concatenate(out))


def williams_top(alternative):
    def normal_p(pb, Y, A):
        from ..normal.control import _williams_oriented

        sizes = pb.sizes.astype(float)
        k, N = len(sizes), pb.n
        onehot = (pb.codes[:, None] == np.arange(k)).astype(float)
        means = (Y @ onehot) / sizes
        s = np.sqrt(((Y - means[:, pb.codes]) ** 2).sum(axis=1) / (N - k))
        t = _williams_oriented(means, sizes, s, k - 1, alternative)
        null = _williams_null(tuple(int(v) for v in pb.sizes), alternative)
        above = len(null) - np.searchsorted(null, t - 1e-9 * np.maximum(1.0, np.abs(t)))
        return (above + 1) / (len(null) + 1)
    return normal_p


def rank_trend(pb, Y, A):
    """The normal approximation to the trend in mid-ranks (the dose-finding top step)."""
    from .counterparts import z_tails

    w = pb.weights
    N = pb.n
    t = A @ w
    sd = np.sqrt(((A - A.mean(axis=1, keepdims=True)) ** 2).sum(axis=1) / (N - 1) * (w @ w))
    return z_tails(np.where(sd > 0, t / np.where(sd > 0, sd, 1.0), 0.0), pb.alternative)


def trend_z(problem, a, t):
    """The step's z: the centred trend over its permutation sd."""
    w = problem.weights
    sd = np.sqrt(((a - a.mean()) ** 2).sum() / (problem.n - 1) * (w @ w))
    return t / sd if sd > 0 else 0 * t


# ---------------------------------------------------------------- the checks

def control_check(design) -> Check:
    from . import scoring

    s = design.settings
    if not _ranked(design):
        return Check("recomputed", scoring.values, "Dunnett's many-to-one t: the smallest "
                     "adjusted p", dunnett_global(s.alternative), as_is,
                     recompute=largest(False, s.alternative), test="many-to-one means")
    return Check("recomputed", scoring.values, "normal approximation to the pairwise-ranked "
                 "sums: the smallest adjusted p", rank_sums_global(s.alternative), as_is,
                 recompute=largest(True, s.alternative), test="many-to-one ranks")


def dose_check(design) -> Check:
    from . import scoring

    if not _ranked(design):
        return Check("linear", scoring.values, "Williams' test over every dose (its null law "
                     f"tabulated from {WILLIAMS_TABLE_DRAWS:,} simulated data sets)",
                     williams_top(design.settings.alternative), trend_z,
                     test="trend over every dose")
    return Check("linear", scoring.ranks, "normal approximation to the trend in mid-ranks",
                 rank_trend, trend_z, test="trend in mid-ranks over every dose")


def welch_check(design) -> Check:
    from . import counterparts, effects, scoring

    return Check("recomputed", scoring.values, "Welch t (unequal variances)",
                 counterparts.welch_t, as_is, effect=effects.mean_difference, recompute=welch)


def brunner_munzel_check(design) -> Check:
    from . import effects, scoring

    return Check("recomputed", scoring.values, "Brunner-Munzel t (Satterthwaite degrees of "
                 "freedom)", brunner_munzel_t, as_is, effect=effects.hodges_lehmann_shift,
                 recompute=brunner_munzel)


def brunner_munzel_t(pb, Y, A):
    from ..engine.studentized import brunner_munzel_parts
    from .counterparts import t_tails

    n1 = int((pb.codes == 0).sum())
    out = np.empty(len(Y))
    for i, y in enumerate(Y):
        parts = brunner_munzel_parts(y[:n1], y[n1:])
        se, df = parts["se"], parts["df"]
        t = (parts["estimate"] - 0.5) / se if se > 0 else math.nan
        out[i] = t_tails(t, df, pb.alternative) if se > 0 and np.isfinite(df) else 1.0
    return out


# ---------------------------------------------------------------- a pointer to them

def spread_note(problem, sim, other: str) -> str:
    """When unequal spread moves a plain two-group test off its level: the test for it
    (`other`, the family's declared `unequal_spread_test`; '' for none)."""
    if problem.kind != "two-sample" or not other:
        return ""
    for r in sim.rates:
        rate = r.permutation_null
        se = max(rate.se, math.sqrt(sim.alpha * (1 - sim.alpha) / sim.datasets))
        if r.law.spread == "groups" and abs(rate.value - sim.alpha) > 3 * se:
            return (f"under unequal spread the permutation test's level is "
                    f"{100 * rate.value:.3g}%, not {100 * sim.alpha:g}%: 'using {other}' "
                    "tests a difference in location that allows for it")
    return ""
