"""Association of y with x: permutation tests of Pearson's r, Spearman's rho (mid-ranks),
Kendall's tau (tau-b when there are ties), the least-squares slope of y on x with an exact
interval, and the slope adjusted for covariates (residual permutation, Freedman and Lane).

Reference set: every pairing of y with x, i.e. every permutation of y against x held fixed,
each equally likely under the null of exchangeability. Tied values make several permutations
give the same pairing; enumeration lists each distinct arrangement once (every distinct
arrangement stands for the same number of permutations, so the p-value is unchanged).

Each coefficient is an increasing multiple of a statistic T with E0 T = 0 over the set:
    pearson, slope   T = sum (x_i - mean x) y_pi(i)
    spearman         the same on mid-ranks
    kendall          S = sum_{i<j} sign(x_i - x_j) sign(y_pi(i) - y_pi(j))
so p-values compare T, and the two-sided p-value is P(|T| >= |t|) (pvalues.TWO_SIDED_LINEAR).
Pearson, Spearman and Kendall are symmetric in x and y, so enumeration permutes whichever of
the two has fewer distinct arrangements.

Slope interval: under "y - beta x is exchangeable against x", each arrangement pi stops or
starts counting as extreme at one value of beta (its jump), so the one-sided p-values are
step functions of beta and the endpoints are read off exactly from the jumps of the same
reference set (all arrangements, or the same Monte Carlo draws for every beta).
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass
from math import comb, factorial, prod
from typing import Optional

import numpy as np
from scipy import stats

from ..errors import DataError
from ..plan.cost import Candidate
from ..result import EngineOutcome, Estimate
from .core import pvalues
from .montecarlo.draws import random_u32, shuffled_dots
from .montecarlo.sampling import iter_blocks, blocks, fresh_seed
from .core.progress import NO_PROGRESS, Progress

STATISTICS = ("pearson", "spearman", "kendall", "slope")
ALTERNATIVES = ("higher", "lower", "two-sided")
CHUNK = 1 << 16               # arrangements evaluated at a time
ROW_BYTES = 1 << 25           # bytes of permuted rows held at a time (Monte Carlo)
ENUMERATION_LIMIT = 1e10      # beyond this, listing arrangements is not offered
DEFAULT_DRAWS = 10_000

DESCRIPTIONS = {
    "enumeration": "complete enumeration",
    "dp-inversions": "dynamic programming on inversion counts",
    "monte-carlo": "Monte Carlo sampling of arrangements",
    "residual-permutation": "Monte Carlo permutation of reduced-model residuals (Freedman and Lane)",
}


# ---------------------------------------------------------------- the problem

@dataclass(frozen=True)
class Problem:
    """A statistic T = f(fixed, permuted moving) with E0 T = 0, and how it maps to the coefficient."""

    statistic: str
    name: str
    fixed: np.ndarray          # held in place (centred scores for linear statistics)
    moving: np.ndarray         # permuted
    t_obs: float
    scale: float               # bound on |T|, for the tie tolerance
    to_coef: float             # coefficient = T * to_coef
    ties: bool

    def coefficient(self, t):
        return np.asarray(t, dtype=float) * self.to_coef


def check_inputs(y, x, alternative: Optional[str] = None, covariates=None):
    y = np.asarray(y, dtype=float)
    x = np.asarray(x, dtype=float)
    if y.ndim != 1 or x.ndim != 1 or len(y) != len(x):
        raise DataError(f"the two variables must be lists of the same length (got {y.size} and {x.size})")
    if len(y) < 3:
        raise DataError(f"association needs at least 3 pairs (got {len(y)})")
    if not (np.all(np.isfinite(y)) and np.all(np.isfinite(x))):
        raise DataError("the values must be finite numbers (no missing values)")
    for name, v in (("the response", y), ("the predictor", x)):
        if np.ptp(v) == 0:
            raise DataError(f"{name} is constant, so no association can be measured")
    if alternative is not None and alternative not in ALTERNATIVES:
        raise ValueError(f"alternative must be one of {ALTERNATIVES}, not {alternative!r}")
    if covariates is not None:
        covariates = np.asarray(covariates, dtype=float)
        if covariates.ndim == 1:
            covariates = covariates[:, None]
        if covariates.ndim != 2 or covariates.shape[0] != len(y):
            raise DataError("the covariates must have one row for each pair")
        if not np.all(np.isfinite(covariates)):
            raise DataError("the covariates must be finite numbers (no missing values)")
    return y, x, covariates


def problem(statistic: str, y, x, fixed_is_x: bool = True) -> Problem:
    """The statistic's problem; fixed_is_x=False permutes x against y (symmetric statistics)."""
    if statistic not in STATISTICS:
        raise KeyError(statistic)
    if statistic == "spearman":
        y, x = stats.rankdata(y), stats.rankdata(x)
    if not fixed_is_x:
        if statistic == "slope":
            raise ValueError("the slope is not symmetric in x and y")
        x, y = y, x
    ties = _has_ties(x) or _has_ties(y)
    if statistic == "kendall":
        return _kendall_problem(y, x, ties)
    xc = x - x.mean()
    sxx, syy = float(xc @ xc), float(((y - y.mean()) ** 2).sum())
    t_obs = float(y @ xc)
    if statistic == "slope":
        return Problem("slope", "least-squares slope of y on x", xc, y, t_obs,
                       float(np.sqrt(sxx * syy)), 1.0 / sxx, ties)
    name = "Pearson's r" if statistic == "pearson" else "Spearman's rho (mid-ranks)"
    return Problem(statistic, name, xc, y, t_obs, float(np.sqrt(sxx * syy)),
                   1.0 / np.sqrt(sxx * syy), ties)


def _kendall_problem(y, x, ties) -> Problem:
    n = len(x)
    n0 = n * (n - 1) / 2
    n1, n2 = tied_pairs(x), tied_pairs(y)
    s_obs = kendall_s(y, x)
    name = "Kendall's tau-b" if ties else "Kendall's tau"
    return Problem("kendall", name, x, y, float(s_obs), n0, 1.0 / np.sqrt((n0 - n1) * (n0 - n2)), ties)


def _big(count: int) -> float:
    """A count as a float (inf beyond the float range)."""
    try:
        return float(count)
    except OverflowError:
        return float("inf")


def _has_ties(v) -> bool:
    return bool(np.unique(v).size < len(v))


def tied_pairs(v) -> float:
    _, c = np.unique(v, return_counts=True)
    return float((c * (c - 1) // 2).sum())


def kendall_s(y, x, rows: int = 256) -> int:
    """S = sum over pairs i < j of sign(x_i - x_j) sign(y_i - y_j), in row blocks."""
    s = 0
    n = len(x)
    for i0 in range(0, n, rows):
        sx = np.sign(x[i0:i0 + rows, None] - x[None, :])
        sy = np.sign(y[i0:i0 + rows, None] - y[None, :])
        s += int((sx * sy).sum())
    return s // 2


def arrangements(v) -> int:
    """Distinct arrangements of v: n! / prod(t!) over tied groups."""
    _, c = np.unique(v, return_counts=True)
    return factorial(len(v)) // prod(factorial(int(t)) for t in c)


def distinct_pairs(y, x):
    """The distinct (x, y) pairs and how often each occurs (for the slope's joint permutation)."""
    uniq, counts = np.unique(np.column_stack([x, y]), axis=0, return_counts=True)
    return uniq[:, 0], uniq[:, 1], counts


# ---------------------------------------------------------------- evaluation

def evaluate(pb: Problem, moved: np.ndarray) -> np.ndarray:
    """T for each row of permuted `moving` values (m x n)."""
    if pb.statistic != "kendall":
        return moved @ pb.fixed
    n = len(pb.fixed)
    i, j = np.triu_indices(n, 1)
    sx = np.sign(pb.fixed[i] - pb.fixed[j])
    step = max(1, (1 << 22) // max(1, len(i)))
    out = np.empty(len(moved))
    for r in range(0, len(moved), step):
        blk = moved[r:r + step]
        out[r:r + step] = np.sign(blk[:, i] - blk[:, j]) @ sx
    return out


# ---------------------------------------------------------------- listing arrangements

def _expand(rows: np.ndarray, label: int, size: int) -> np.ndarray:
    """Every way to put `size` copies of `label` into the free (-1) places of each row."""
    r, n = rows.shape
    free_count = int(np.count_nonzero(rows[0] < 0))
    if size == free_count:
        out = rows.copy()
        out[out < 0] = label
        return out
    free = np.argsort(rows >= 0, axis=1, kind="stable")[:, :free_count]
    combos = np.array(list(itertools.combinations(range(free_count), size)), dtype=np.intp)
    out = np.repeat(rows[:, None, :], len(combos), axis=1)
    np.put_along_axis(out, free[:, combos], label, axis=2)
    return out.reshape(-1, n)


def arrangement_chunks(counts, chunk: int = CHUNK):
    """Yield int16 label arrays (m, n) listing every distinct arrangement of a multiset once:
    counts[g] copies of label g. The last levels are expanded per chunk, the first ones once."""
    counts = [int(c) for c in counts]
    n = sum(counts)
    sizes, free = [], n
    for t in counts:
        sizes.append(comb(free, t))
        free -= t
    k, suffix = len(counts), 1
    while k > 0 and suffix * sizes[k - 1] <= chunk:
        k -= 1
        suffix *= sizes[k]
    prefix = np.full((1, n), -1, dtype=np.int16)
    for g in range(k):
        prefix = _expand(prefix, g, counts[g])
    per = max(1, chunk // suffix)
    for s in range(0, len(prefix), per):
        rows = prefix[s:s + per]
        for g in range(k, len(counts)):
            rows = _expand(rows, g, counts[g])
        yield rows


def _enumerate_t(pb: Problem, progress: Progress):
    """T over every distinct arrangement of pb.moving (equal weights)."""
    vals, counts = np.unique(pb.moving, return_counts=True)
    total = arrangements(pb.moving)
    out, done = [], 0
    for labels in arrangement_chunks(counts):
        out.append(evaluate(pb, vals[labels]))
        done += len(labels)
        progress.step(done / total, "enumerating")
    return np.concatenate(out), total


def _tally(values, scale):
    v = np.sort(values)
    new = np.empty(v.size, dtype=bool)
    new[0] = True
    new[1:] = np.diff(v) > pvalues.RTOL * max(scale, 1e-300)
    starts = np.flatnonzero(new)
    return v[starts], np.diff(np.append(starts, v.size)).astype(float)


# ---------------------------------------------------------------- Kendall by counting

def inversion_counts(n: int, upto: Optional[int] = None) -> list:
    """Exact counts (Python ints) of permutations of n items with k inversions, k = 0..upto
    (Mahonian numbers; default all k up to n(n-1)/2). Truncation is exact: count k depends
    only on counts at k' <= k for n - 1."""
    top = n * (n - 1) // 2 if upto is None else min(upto, n * (n - 1) // 2)
    c = np.array([1], dtype=object)
    for m in range(2, n + 1):
        length = min(len(c) + m - 1, top + 1)
        ext = np.zeros(length, dtype=object)
        ext[:min(len(c), length)] = c[:length]
        cs = np.cumsum(ext)
        new = cs.copy()
        new[m:] -= cs[:-m]
        c = new
    return list(c)


def _run_inversions(pb: Problem, alternative: str, progress: Progress) -> EngineOutcome:
    n = len(pb.fixed)
    K = n * (n - 1) // 2
    d = (K - int(round(pb.t_obs))) // 2                # discordant pairs
    half = inversion_counts(n, K // 2)
    progress.step(1.0, "counting inversions")
    full = half + half[:K + 1 - len(half)][::-1]       # symmetric about K / 2
    total = factorial(n)
    p = pvalues.clip(_inversion_tail(full, d, K, alternative) / total)
    tau = 1.0 - 4.0 * np.arange(K + 1) / (n * (n - 1))
    probs = np.array([c / total for c in full], dtype=float)
    return EngineOutcome(pb.name, float(pb.coefficient(pb.t_obs)), p, "exact",
                         DESCRIPTIONS["dp-inversions"], arrangements=_big(total),
                         null_support=tau[::-1], null_probs=probs[::-1])


def _inversion_tail(full, d, K, alternative) -> int:
    """Count of permutations at least as extreme as d discordant pairs (exact integers)."""
    if alternative == "higher":                        # positive association: few inversions
        return sum(full[:d + 1])
    if alternative == "lower":
        return sum(full[d:])
    dev = abs(2 * d - K)
    return sum(c for k, c in enumerate(full) if abs(2 * k - K) >= dev)


# ---------------------------------------------------------------- Monte Carlo

class Shuffler:
    """Independent uniform permutations of v, as rows of a buffer that is shuffled in place.

    Row r of the buffer holds v[sigma_r]; shuffling it again gives v[sigma_r o pi] with pi
    uniform and independent of everything before, so each new row is again uniform and
    independent of the earlier ones ((pi_1, ..., pi_m) -> (sigma_1, ..., sigma_m) is a
    bijection of S_n^m). Reusing the buffer saves refilling it. The number of rows depends
    on len(v) alone, so the draws for a seed never depend on anything else. Rows handed out
    are read-only views, valid until the next call."""

    def __init__(self, v: np.ndarray):
        v = np.asarray(v)
        self.rows = max(1, min(8192, ROW_BYTES // (v.itemsize * len(v))))
        self.buf = np.tile(v, (self.rows, 1))

    def draws(self, rng: np.random.Generator, size: int):
        for r0 in range(0, size, self.rows):
            blk = self.buf[:min(self.rows, size - r0)]
            rng.permuted(blk, axis=1, out=blk)
            yield blk


def _run_monte_carlo(pb: Problem, alternative, draws, seed, progress) -> EngineOutcome:
    if pb.statistic == "kendall":
        b, done = 0, 0
        shuffler = Shuffler(pb.moving)
        for _, size, rng in blocks(seed, draws):
            for blk in shuffler.draws(rng, size):
                b += pvalues.exceedances(evaluate(pb, blk), pb.t_obs, alternative, 0.0, pb.scale)
            done += size
            progress.step(done / draws, "sampling")
    else:   # linear statistics: compiled full shuffles, blocks on all cores
        def work(size, rng):
            r = random_u32(rng, size, max(1, len(pb.moving) - 1))
            t = shuffled_dots(pb.moving, pb.fixed, r)
            return pvalues.exceedances(t, pb.t_obs, alternative, 0.0, pb.scale)

        b = sum(iter_blocks(seed, draws, work, progress))
    p, p_int = pvalues.monte_carlo_p(b, draws)
    return EngineOutcome(pb.name, float(pb.coefficient(pb.t_obs)), p, "monte-carlo",
                         DESCRIPTIONS["monte-carlo"], arrangements=_big(arrangements(pb.moving)),
                         draws=draws, p_interval=p_int, seed=seed, warnings=_warnings(pb))


def _run_enumeration(pb: Problem, alternative, progress) -> EngineOutcome:
    t, total = _enumerate_t(pb, progress)
    b = pvalues.exceedances(t, pb.t_obs, alternative, 0.0, pb.scale)
    support, counts = _tally(t, pb.scale)
    what = DESCRIPTIONS["enumeration"] + (" of distinct arrangements (ties)" if pb.ties else "")
    return EngineOutcome(pb.name, float(pb.coefficient(pb.t_obs)), pvalues.clip(b / total),
                         "exact", what, arrangements=float(total),
                         null_support=pb.coefficient(support), null_probs=counts / total,
                         warnings=_warnings(pb))


def _warnings(pb: Problem) -> tuple:
    if pb.statistic == "kendall" and pb.ties:
        return ("ties: Kendall's tau-b, with the reference set conditional on the tie pattern",)
    return ()


# ---------------------------------------------------------------- the slope and its interval

@dataclass(frozen=True)
class SlopePass:
    """For each arrangement pi of the (x, y) pairs: T = sum xc_i y_pi(i) and
    den = (1/2) sum (x_i - x_pi(i))^2 = Sxx - sum xc_i xc_pi(i) (zero when pi leaves x as is)."""

    pb: Problem
    t: np.ndarray
    den: np.ndarray
    total: float               # reference-set size (exact) or draws + 1 (Monte Carlo)
    exact: bool
    draws: Optional[int] = None
    seed: Optional[int] = None


def slope_pass(y, x, algorithm: str, draws=None, seed=None, progress=NO_PROGRESS) -> SlopePass:
    if algorithm not in ("enumeration", "monte-carlo"):
        raise ValueError(f"the slope is tested by enumeration or monte-carlo, not {algorithm!r}")
    pb = problem("slope", y, x)
    ts, dens = [], []
    if algorithm == "enumeration":
        xr, yr, counts = distinct_pairs(y, x)
        total = factorial(len(x)) // prod(factorial(int(c)) for c in counts)
        done = 0
        for labels in arrangement_chunks(counts):
            _slope_rows(pb, x, xr[labels], yr[labels], ts, dens)
            done += len(labels)
            progress.step(done / total, "enumerating")
        return SlopePass(pb, np.concatenate(ts), np.concatenate(dens), float(total), True)
    shuffler = Shuffler(np.arange(len(x)))
    done = 0
    for _, size, rng in blocks(seed, draws):
        for idx in shuffler.draws(rng, size):
            _slope_rows(pb, x, x[idx], y[idx], ts, dens)
        done += size
        progress.step(done / draws, "sampling")
    return SlopePass(pb, np.concatenate(ts), np.concatenate(dens), float(draws + 1), False,
                     draws, seed)


def _slope_rows(pb, x, xp, yp, ts, dens):
    ts.append(yp @ pb.fixed)
    dens.append(0.5 * ((xp - x) ** 2).sum(axis=1))


def slope_outcome(sp: SlopePass, alternative: str) -> EngineOutcome:
    pb = sp.pb
    b = pvalues.exceedances(sp.t, pb.t_obs, alternative, 0.0, pb.scale)
    coef = float(pb.coefficient(pb.t_obs))
    if sp.exact:
        support, counts = _tally(sp.t, pb.scale)
        what = DESCRIPTIONS["enumeration"] + (" of distinct arrangements (ties)" if pb.ties else "")
        return EngineOutcome(pb.name, coef, pvalues.clip(b / sp.total), "exact", what,
                             arrangements=sp.total, null_support=pb.coefficient(support),
                             null_probs=counts / sp.total)
    p, p_int = pvalues.monte_carlo_p(b, sp.draws)
    return EngineOutcome(pb.name, coef, p, "monte-carlo", DESCRIPTIONS["monte-carlo"],
                         arrangements=_big(factorial(len(pb.fixed))), draws=sp.draws,
                         p_interval=p_int, seed=sp.seed)


def slope_jumps(sp: SlopePass, side: str):
    """(jumps, identity): arrangement pi counts as extreme for 'higher' exactly when
    beta >= jump_pi (for 'lower' when beta <= jump_pi); `identity` always count. The jumps
    carry the tie tolerance of the p-value rule (relative 1e-9 on the T scale), so that an
    arrangement tying with the observed one at beta counts there."""
    moved = sp.den > 0
    tol = pvalues.RTOL * sp.pb.scale
    num = sp.pb.t_obs - sp.t[moved]
    jumps = (num - tol if side == "higher" else num + tol) / sp.den[moved]
    identity = float(np.count_nonzero(~moved)) + (0.0 if sp.exact else 1.0)
    return jumps, identity


def p_at(sp: SlopePass, beta: float, side: str) -> float:
    """One-sided p-value of 'slope = beta' from the jumps ('higher' or 'lower')."""
    jumps, identity = slope_jumps(sp, side)
    k = np.count_nonzero(jumps <= beta) if side == "higher" else np.count_nonzero(jumps >= beta)
    return (identity + k) / sp.total


def interval_from_jumps(jumps_higher, jumps_lower, identity: float, total: float, level: float,
                        alternative: str) -> tuple:
    """{beta: p_higher(beta) > a and p_lower(beta) > a}, a = 1 - level (one-sided) or half
    of it (two-sided, equal tails); closed at finite ends."""
    side = (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0)
    ok = (identity + np.arange(len(jumps_higher) + 1)) / total > side
    need = int(np.argmax(ok)) if ok.any() else None      # jumps needed to stop rejecting
    lo, hi = -np.inf, np.inf
    if alternative in ("two-sided", "higher"):
        c = np.sort(np.asarray(jumps_higher, dtype=float))
        lo = np.inf if need is None else (-np.inf if need == 0 else float(c[need - 1]))
    if alternative in ("two-sided", "lower"):
        c = np.sort(np.asarray(jumps_lower, dtype=float))
        hi = -np.inf if need is None else (np.inf if need == 0 else float(c[c.size - need]))
    return lo, hi


def slope_estimate(sp: SlopePass, level: float, alternative: str) -> Estimate:
    up, identity = slope_jumps(sp, "higher")
    down, _ = slope_jumps(sp, "lower")
    lo, hi = interval_from_jumps(up, down, identity, sp.total, level, alternative)
    tails = "equal-tailed, " if alternative == "two-sided" else ""
    if sp.exact:
        how = f"all {int(sp.total)} arrangements (exact)"
    else:
        how = f"the same {sp.draws} Monte Carlo arrangements for every slope (seed {sp.seed})"
    method = (f"inverting the permutation test of y - beta x against x ({tails}"
              f"read off exactly at the jumps), over {how}")
    return Estimate("slope of y on x", float(sp.pb.coefficient(sp.pb.t_obs)), (lo, hi),
                    level, method)


# ---------------------------------------------------------------- adjusted slope (Freedman-Lane)

@dataclass(frozen=True)
class Reduced:
    """The reduced model y ~ 1 + Z and what the full model's t for x needs.

    With Q an orthonormal basis of [1, Z], xt = x - QQ'x and permuted residuals e*:
    coefficient = xt'e* / xt'xt, RSS = e*'e* - |Q'e*|^2 - (xt'e*)^2 / xt'xt, since
    Q'yhat = Q'y and xt is orthogonal to the fitted values."""

    basis: np.ndarray          # n x (rank + 1): Q, then xt
    resid: np.ndarray
    ee: float
    sxx: float
    df: int


def reduced_model(y, x, covariates) -> Reduced:
    n = len(y)
    design = np.column_stack([np.ones(n), covariates])
    u, s, _ = np.linalg.svd(design, full_matrices=False)
    q = u[:, s > 1e-10 * s[0]]
    resid = y - q @ (q.T @ y)
    xt = x - q @ (q.T @ x)
    sxx = float(xt @ xt)
    if sxx <= 1e-12 * float(((x - x.mean()) ** 2).sum()):
        raise DataError("the predictor is a linear combination of the covariates")
    df = n - q.shape[1] - 1
    if df < 1:
        raise DataError(f"too few pairs ({n}) for {q.shape[1]} fitted terms and the predictor")
    return Reduced(np.column_stack([q, xt]), resid, float(resid @ resid), sxx, df)


def adjusted_t(rm: Reduced, e: np.ndarray) -> np.ndarray:
    """t of x's coefficient in the full model fitted to fitted + e (rows of e)."""
    proj = np.atleast_2d(e) @ rm.basis
    c = proj[:, -1]
    rss = np.maximum(rm.ee - (proj[:, :-1] ** 2).sum(axis=1) - c * c / rm.sxx, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (c / rm.sxx) / np.sqrt(rss / rm.df / rm.sxx)


def _run_freedman_lane(y, x, covariates, alternative, draws, seed, progress) -> EngineOutcome:
    rm = reduced_model(y, x, covariates)
    t_obs = float(adjusted_t(rm, rm.resid)[0])
    if not np.isfinite(t_obs):
        raise DataError("the full model fits the data exactly, so its t is undefined")
    b, done = 0, 0
    shuffler = Shuffler(rm.resid)
    for _, size, rng in blocks(seed, draws):
        for blk in shuffler.draws(rng, size):
            b += pvalues.exceedances(adjusted_t(rm, blk), t_obs, alternative, 0.0, abs(t_obs))
        done += size
        progress.step(done / draws, "sampling")
    p, p_int = pvalues.monte_carlo_p(b, draws)
    return EngineOutcome("t of the slope of y on x, adjusted for covariates", t_obs, p,
                         "monte-carlo", DESCRIPTIONS["residual-permutation"],
                         arrangements=_big(factorial(len(y))), draws=draws, p_interval=p_int,
                         seed=seed, warnings=("permuting residuals of the reduced model gives "
                                              "an approximate test, not an exact one",))


def adjusted_coefficient(y, x, covariates) -> float:
    rm = reduced_model(y, x, covariates)
    return float(rm.basis[:, -1] @ rm.resid / rm.sxx)


# ---------------------------------------------------------------- cost

def _adjusted(covariates) -> bool:
    return covariates is not None and np.asarray(covariates).size > 0


def reference_size(statistic: str, y, x) -> int:
    """Distinct arrangements enumeration would list."""
    if statistic == "slope":
        counts = distinct_pairs(y, x)[2]
        return factorial(len(x)) // prod(factorial(int(c)) for c in counts)
    if statistic == "spearman":
        y, x = stats.rankdata(y), stats.rankdata(x)
    return min(arrangements(y), arrangements(x))


def candidates(statistic: str, y, x, draws: int = DEFAULT_DRAWS, covariates=None) -> list[Candidate]:
    y, x, covariates = check_inputs(y, x, covariates=covariates)
    n = len(x)
    if _adjusted(covariates):
        if statistic != "slope":
            raise ValueError("covariates apply to the slope only")
        width = covariates.shape[1] + 2
        return [Candidate("enumeration", DESCRIPTIONS["enumeration"], True, float("inf"),
                          float("inf"), feasible=False,
                          note="residual permutation is approximate; there is no exact reference set"),
                Candidate("residual-permutation", DESCRIPTIONS["residual-permutation"], False,
                          draws * n * (6.0 + width), min(draws, 8192) * n * 8 * 2,
                          arrangements=_big(factorial(n)), note=f"{draws} draws")]
    total = _big(reference_size(statistic, y, x))
    pairs = n * (n - 1) / 2
    per = {"kendall": 4 * n + 3 * pairs, "slope": 10.0 * n}.get(statistic, 4.0 * n)
    out = []
    if statistic == "kendall":
        out.append(_inversions_candidate(y, x))
    out.append(Candidate("enumeration", DESCRIPTIONS["enumeration"], True, total * per,
                         min(total, CHUNK) * n * 8 * 3 + (CHUNK * pairs * 8 if statistic == "kendall" else 0),
                         feasible=total <= ENUMERATION_LIMIT, arrangements=total,
                         note=f"{total:.4g} distinct arrangements"))
    per_draw = {"kendall": 6 * n + 3 * pairs, "slope": 12.0 * n}.get(statistic, 6.0 * n)
    out.append(Candidate("monte-carlo", DESCRIPTIONS["monte-carlo"], False, draws * per_draw,
                         min(draws, 8192) * n * 8 * 2, arrangements=total, note=f"{draws} draws"))
    return out


def _inversions_candidate(y, x) -> Candidate:
    n = len(x)
    K = n * (n - 1) // 2
    total = _big(factorial(n))
    if _has_ties(x) or _has_ties(y):
        return Candidate("dp-inversions", DESCRIPTIONS["dp-inversions"], True, float("inf"),
                         float("inf"), feasible=False, note="ties: counting inversions needs distinct values",
                         arrangements=total)
    ops = n * (K / 2 + 1) * 20.0          # Python integers cost about 20 array operations each
    return Candidate("dp-inversions", DESCRIPTIONS["dp-inversions"], True, ops, (K / 2 + 1) * 64.0 * 3,
                     arrangements=total, note="no ties: exact counts of permutations by inversions")


# ---------------------------------------------------------------- run

def run(statistic: str, y, x, alternative: str, algorithm: str, draws: Optional[int] = None,
        seed: Optional[int] = None, progress: Progress = NO_PROGRESS, covariates=None) -> EngineOutcome:
    """The permutation p-value of the association of y with x ('higher' = positive)."""
    y, x, covariates = check_inputs(y, x, alternative, covariates)
    draws, seed = _mc_settings(algorithm, draws, seed)
    if _adjusted(covariates):
        if statistic != "slope":
            raise ValueError("covariates apply to the slope only")
        if algorithm != "residual-permutation":
            raise ValueError("the adjusted slope is tested by residual permutation only")
        return _run_freedman_lane(y, x, covariates, alternative, draws, seed, progress)
    if statistic == "slope":
        return slope_outcome(slope_pass(y, x, algorithm, draws, seed, progress), alternative)
    if algorithm == "dp-inversions":
        if statistic != "kendall" or _has_ties(x) or _has_ties(y):
            raise ValueError("counting inversions applies to Kendall's tau without ties")
        return _run_inversions(problem("kendall", y, x), alternative, progress)
    if algorithm == "enumeration":
        fixed_is_x = arrangements(_scores(statistic, y)) <= arrangements(_scores(statistic, x))
        return _run_enumeration(problem(statistic, y, x, fixed_is_x), alternative, progress)
    if algorithm == "monte-carlo":
        return _run_monte_carlo(problem(statistic, y, x), alternative, draws, seed, progress)
    raise ValueError(f"unknown algorithm {algorithm!r}")


def _scores(statistic, v):
    return stats.rankdata(v) if statistic == "spearman" else v


def _mc_settings(algorithm, draws, seed):
    if algorithm in ("monte-carlo", "residual-permutation"):
        return (DEFAULT_DRAWS if draws is None else int(draws)), (fresh_seed() if seed is None else seed)
    return draws, seed


def estimate(statistic: str, y, x, alternative: str, algorithm: str, level: float = 0.95,
             draws: Optional[int] = None, seed: Optional[int] = None,
             progress: Progress = NO_PROGRESS, covariates=None) -> Estimate:
    """The coefficient; for the simple slope, with its interval from inverting the test."""
    return run_with_estimate(statistic, y, x, alternative, algorithm, level, draws, seed,
                             progress, covariates)[1]


def run_with_estimate(statistic: str, y, x, alternative: str, algorithm: str, level: float = 0.95,
                      draws: Optional[int] = None, seed: Optional[int] = None,
                      progress: Progress = NO_PROGRESS, covariates=None):
    """(EngineOutcome, Estimate) from one pass over the reference set."""
    y, x, covariates = check_inputs(y, x, alternative, covariates)
    draws, seed = _mc_settings(algorithm, draws, seed)
    if statistic == "slope" and not _adjusted(covariates):
        sp = slope_pass(y, x, algorithm, draws, seed, progress)
        return slope_outcome(sp, alternative), slope_estimate(sp, level, alternative)
    out = run(statistic, y, x, alternative, algorithm, draws, seed, progress, covariates)
    if _adjusted(covariates):
        est = Estimate("slope of y on x, adjusted for covariates",
                       adjusted_coefficient(y, x, covariates), None, level,
                       "least squares; no permutation interval (see the normal-theory interval)")
    else:
        est = Estimate(out.statistic_name, out.statistic, None, level,
                       "sample coefficient; no permutation interval (see the normal-theory interval)")
    return out, est
