"""Exact and Monte Carlo engines for blocked and stratified designs.

Inputs are plain arrays: `values` (1-D float), `groups` (int codes 0..k-1 in the user's level
order) and `blocks` (int codes). The reference set is every arrangement of the group labels
within each block, all equally likely; its size is the product of the per-block multinomial
coefficients.

Tests:
- "stratified-ranks": two groups, any block sizes; sum over blocks of the group-0 mid-rank sum
  (ranks taken within each block).
- "stratified-means": two groups, any block sizes; sum over blocks of the group-0 sum of values.
- "friedman": complete blocks; Friedman's chi-square with mid-ranks and the tie correction.
- "within-block-f": complete blocks; F for treatments in the additive two-way model.
- "page": complete blocks, ordered treatments; Page's L = sum_j j * R_j (j = 1..k in level order).

For two groups the effect is group 0 minus group 1, and "higher" means group 0 tends to be
larger. For Page's test "higher" means the response rises along the level order.

Exact counts are held in float64. Every count is an integer, and integers below 2^53 are held
exactly, as are the sums and products of the dynamic programmes and convolutions while the
reference set has fewer than 2^53 members; beyond that each count carries a relative error
near 1e-16 and the result says so."""
from __future__ import annotations

from typing import Optional

from ...errors import BindError, PlanError
from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core.limits import DEFAULT_DRAWS, EXACT_CEILING_SECONDS, NO_LIMITS_GIVEN, Limits
from ..core.progress import NO_PROGRESS, Progress
from ..montecarlo.sampling import require_seed
from .complete import (_complete_candidates, _complete_monte_carlo, _f_enumeration, _page_dp,
                       _quadratic_dp, prepare_complete)
from .shared import COMPLETE, STATISTIC_NAMES, STRATIFIED, TESTS, _check_alternative
from .stratified import (_stratified_candidates, _stratified_dp, _stratified_enumeration,
                         _stratified_monte_carlo, prepare_stratified)

# ================================================================ entry points

def prepare(test, values, groups, blocks, n_groups=None, block_names=None, group_names=None):
    """Validate the design for the test and compute what every algorithm shares."""
    if test in STRATIFIED:
        return prepare_stratified(test, values, groups, blocks, block_names)
    if test in COMPLETE:
        return prepare_complete(test, values, groups, blocks, n_groups, block_names, group_names)
    raise BindError(f"unknown blocked test {test!r}; known: {', '.join(TESTS)}")


def candidates(test, values, groups, blocks, draws: int = DEFAULT_DRAWS,
               n_groups: Optional[int] = None, block_names=None,
               group_names=None) -> list[Candidate]:
    """What each algorithm would cost; raises BindError when the design does not fit."""
    prep = prepare(test, values, groups, blocks, n_groups, block_names, group_names)
    if test in STRATIFIED:
        return _stratified_candidates(prep, draws)
    return _complete_candidates(prep, draws)


def _require_feasible(prep, algorithm, limits: Limits):
    """An exact algorithm that cannot apply, or past the plan's memory or the exact ceiling, is
    refused rather than left to exhaust memory."""
    if algorithm == "monte-carlo":
        return
    found = (_stratified_candidates(prep, 1) if prep.test in STRATIFIED
             else _complete_candidates(prep, 1))
    for c in found:
        if c.algorithm == algorithm and not c.feasible:
            raise PlanError(f"{c.description} does not apply to this design ({c.note}); "
                            "use Monte Carlo")
        if c.algorithm == algorithm and (c.memory > limits.memory_bytes
                                         or c.seconds > EXACT_CEILING_SECONDS):
            raise PlanError(f"{c.description} would pass the limits for this design "
                            f"({c.note}); use Monte Carlo")


def run(test, values, groups, blocks, alternative, algorithm, draws: Optional[int] = None,
        seed: Optional[int] = None, progress: Progress = NO_PROGRESS,
        n_groups: Optional[int] = None, block_names=None, group_names=None,
        limits: Limits = NO_LIMITS_GIVEN) -> EngineOutcome:
    """The permutation p-value of `test` by `algorithm` (a Candidate key).

    `n_groups` is the number of levels (when the last has no rows); `block_names` and
    `group_names` (indexed by code) only make messages and warnings speak the user's names.
    """
    _check_alternative(test, alternative)
    prep = prepare(test, values, groups, blocks, n_groups, block_names, group_names)
    _require_feasible(prep, algorithm, limits)
    if algorithm == "monte-carlo":
        draws = int(draws) if draws is not None else DEFAULT_DRAWS
        seed = require_seed(seed)
        if test in STRATIFIED:
            return _stratified_monte_carlo(prep, alternative, draws, seed, progress)
        return _complete_monte_carlo(prep, alternative, draws, seed, progress)
    if test in STRATIFIED and algorithm == "dp-integer":
        return _stratified_dp(prep, alternative, progress)
    if test in STRATIFIED and algorithm == "enumeration":
        return _stratified_enumeration(prep, alternative, progress)
    if test == "page" and algorithm == "dp-integer":
        return _page_dp(prep, alternative, progress)
    if test in ("friedman", "within-block-f") and algorithm == "dp-vector":
        return _quadratic_dp(prep, progress)
    if test == "within-block-f" and algorithm == "enumeration":
        return _f_enumeration(prep, progress)
    raise PlanError(f"algorithm {algorithm!r} does not apply to {STATISTIC_NAMES[test]}")
