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
reference set (all arrangements, or the same Monte Carlo draws for every beta)."""
from __future__ import annotations

from math import factorial
from typing import Optional

import numpy as np
from ...lazy import stats

from ...plan.cost import Candidate
from ...plan.sizes import big, words
from ..core.tally import BYTES_PER_VALUE as TALLY_BYTES, DEFAULT_LIMIT as TALLY_LIMIT
from ...result import EngineOutcome, Estimate
from ..core.counting import multinomial
from ..core.limits import DEFAULT_DRAWS
from ..core.progress import NO_PROGRESS, Progress
from ..core.scores import midranks
from ..montecarlo.sampling import parallel_ops, require_seed, sampled_bytes
from ..tables import ranked
from .adjusted import _run_freedman_lane, adjusted_coefficient
from .pairings import (CHUNK, DESCRIPTIONS, _big, _has_ties, _run_enumeration, _run_monte_carlo,
                       _warnings, arrangements,
                       check_inputs, distinct_pairs, problem)
from . import inversions
from .slope import slope_estimate, slope_outcome, slope_pass

# ---------------------------------------------------------------- cost

def _adjusted(covariates) -> bool:
    return covariates is not None and np.asarray(covariates).size > 0


def reference_size(statistic: str, y, x) -> int:
    """Distinct arrangements enumeration would list."""
    if statistic == "slope":
        counts = distinct_pairs(y, x)[2]
        return multinomial(counts)
    if statistic == "spearman":
        y, x = midranks(y), midranks(x)
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
                          arrangements=factorial(n), note=f"{draws:,} draws")]
    count = reference_size(statistic, y, x)
    total = big(count)
    pairs = n * (n - 1) / 2
    per = {"kendall": 4 * n + 3 * pairs, "slope": 10.0 * n}.get(statistic, 4.0 * n)
    out = []
    if statistic == "kendall":
        out.append(_inversions_candidate(y, x))
        if ranked.offered(x) and ranked.offered(y):
            t, _, _ = ranked.table_of(x, y)
            out.append(ranked.candidate(t, "concordance", "x values x y values", total))
    listing = min(total, CHUNK) * n * 8 * 3 + (CHUNK * pairs * 8 if statistic == "kendall" else 0)
    # the law's tally (bounded); the slope keeps T and its denominator for every arrangement
    held = total * 16 * 3 if statistic == "slope" else min(total, TALLY_LIMIT) * TALLY_BYTES
    out.append(Candidate("enumeration", DESCRIPTIONS["enumeration"], True, total * per,
                         listing + held, arrangements=count,
                         note=f"{words(count)} distinct arrangements"))
    # Kendall's S of a draw by merge sort: about n log2 n steps (compiled)
    per_draw = {"kendall": 6 * n + 4 * n * np.log2(n), "slope": 12.0 * n}.get(statistic, 6.0 * n)
    # a block of shuffles and the gathered scores; the slope also holds its shuffled copies
    item_bytes = 38.0 if statistic == "slope" else 8.0
    out.append(Candidate("monte-carlo", DESCRIPTIONS["monte-carlo"], False,
                         parallel_ops(draws * per_draw, draws), sampled_bytes(draws, n, item_bytes), arrangements=count,
                         note=f"{draws:,} draws"))
    return out


def _inversions_candidate(y, x) -> Candidate:
    n = len(x)
    total = factorial(n)
    if _has_ties(x) or _has_ties(y):
        return Candidate("dp-inversions", DESCRIPTIONS["dp-inversions"], True, float("inf"),
                         float("inf"), feasible=False, note="ties: counting inversions needs distinct values",
                         arrangements=total)
    ops, memory = inversions.cost(n, _discordant(y, x), "two-sided")
    return Candidate("dp-inversions", DESCRIPTIONS["dp-inversions"], True, ops, memory,
                     arrangements=total, note="no ties: exact counts of permutations by inversions")


def _discordant(y, x) -> int:
    """Discordant pairs without ties, in O(n log n): S = tau * n(n-1)/2 (exact after rounding)."""
    n = len(x)
    K = n * (n - 1) // 2
    s = int(round(stats.kendalltau(x, y).statistic * K))
    return (K - s) // 2


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
        pb = problem("kendall", y, x)
        return inversions.run(pb.name, pb.coefficient(pb.t_obs), int(round(pb.t_obs)), len(x),
                              alternative, progress)
    if algorithm == ranked.TABLE:
        if statistic != "kendall":
            raise ValueError("the table route applies to Kendall's tau")
        pb = problem("kendall", y, x)
        p, _ = ranked.kendall(y, x, alternative, progress)
        return EngineOutcome(pb.name, float(pb.coefficient(pb.t_obs)), p, "exact",
                             ranked.WORDS.format(what="x values x y values"),
                             arrangements=_big(reference_size("kendall", y, x)),
                             warnings=_warnings(pb))
    if algorithm == "enumeration":
        fixed_is_x = arrangements(_scores(statistic, y)) <= arrangements(_scores(statistic, x))
        return _run_enumeration(problem(statistic, y, x, fixed_is_x), alternative, progress)
    if algorithm == "monte-carlo":
        return _run_monte_carlo(problem(statistic, y, x), alternative, draws, seed, progress)
    raise ValueError(f"unknown algorithm {algorithm!r}")


def _scores(statistic, v):
    return midranks(v) if statistic == "spearman" else v


def _mc_settings(algorithm, draws, seed):
    if algorithm in ("monte-carlo", "residual-permutation"):
        return (DEFAULT_DRAWS if draws is None else int(draws)), require_seed(seed)
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
