"""The association problem (y paired with x), its statistic per arrangement, the listing of
distinct arrangements, Kendall's S by counting inversions, and Monte Carlo pairings."""
from __future__ import annotations

from dataclasses import dataclass
import itertools
from math import comb, factorial
from typing import Optional

import numpy as np

from ...errors import DataError
from ...result import EngineOutcome
from ..core import pvalues
from ..core.counting import distinct_orderings
from ..core.grid import centred, is_constant
from ..core.scores import midranks
from ..core.progress import Progress
from ..core.tally import Tally
from ..montecarlo.draws import KendallPairs, random_u32, shuffled_dots
from ..montecarlo.draws import kendall_s as shuffled_kendall_s
from ..montecarlo.sampling import iter_blocks

STATISTICS = ("pearson", "spearman", "kendall", "slope")
ALTERNATIVES = ("higher", "lower", "two-sided")
CHUNK = 1 << 16               # arrangements evaluated at a time
ROW_BYTES = 1 << 25           # bytes of permuted rows held at a time (Monte Carlo)

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
        if is_constant(v):
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
        y, x = midranks(y), midranks(x)
    if not fixed_is_x:
        if statistic == "slope":
            raise ValueError("the slope is not symmetric in x and y")
        x, y = y, x
    ties = _has_ties(x) or _has_ties(y)
    if statistic == "kendall":
        return _kendall_problem(y, x, ties)
    # both centred on one of their own values first: no offset drowns the differences (T moves
    # by the same constant for every arrangement, so no p-value changes)
    xc = centred(x)
    xc = xc - xc.mean()
    y = centred(y)
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
    return distinct_orderings(v)


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
    """Chunks of T over every distinct arrangement of pb.moving (equal weights)."""
    vals, counts = np.unique(pb.moving, return_counts=True)
    total = arrangements(pb.moving)
    done = 0
    for labels in arrangement_chunks(counts):
        yield evaluate(pb, vals[labels])
        done += len(labels)
        progress.step(done / total, "enumerating")


def _tally(values, scale):
    v = np.sort(values)
    new = np.empty(v.size, dtype=bool)
    new[0] = True
    new[1:] = np.diff(v) > pvalues.RTOL * max(scale, 1e-300)
    starts = np.flatnonzero(new)
    return v[starts], np.diff(np.append(starts, v.size)).astype(float)


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
    # compiled full shuffles, blocks on all cores; Kendall's S in O(n log n) a draw
    pairs = KendallPairs(pb.fixed, pb.moving) if pb.statistic == "kendall" else None

    def work(size, rng):
        r = random_u32(rng, size, max(1, len(pb.moving) - 1))
        t = shuffled_kendall_s(pairs, r) if pairs else shuffled_dots(pb.moving, pb.fixed, r)
        return pvalues.exceedances(t, pb.t_obs, alternative, 0.0, pb.scale)

    b = sum(iter_blocks(seed, draws, work, progress))
    p, p_int = pvalues.monte_carlo_p(b, draws)
    return EngineOutcome(pb.name, float(pb.coefficient(pb.t_obs)), p, "monte-carlo",
                         DESCRIPTIONS["monte-carlo"], arrangements=_big(arrangements(pb.moving)),
                         draws=draws, p_interval=p_int, seed=seed, warnings=_warnings(pb))


def _run_enumeration(pb: Problem, alternative, progress) -> EngineOutcome:
    """Exceedances counted and the law tallied chunk by chunk (memory stays bounded)."""
    total = arrangements(pb.moving)
    tally = Tally(pb.scale)
    b = 0
    for t in _enumerate_t(pb, progress):
        b += pvalues.exceedances(t, pb.t_obs, alternative, 0.0, pb.scale)
        tally.add(t)
    support, counts = tally.law()
    what = DESCRIPTIONS["enumeration"] + (" of distinct arrangements (ties)" if pb.ties else "")
    return EngineOutcome(pb.name, float(pb.coefficient(pb.t_obs)), pvalues.clip(b / total),
                         "exact", what, arrangements=total,
                         null_support=None if support is None else pb.coefficient(support),
                         null_probs=None if counts is None else counts / total,
                         warnings=_warnings(pb))


def _warnings(pb: Problem) -> tuple:
    if pb.statistic == "kendall" and pb.ties:
        return ("ties: Kendall's tau-b, with the reference set conditional on the tie pattern",)
    return ()
