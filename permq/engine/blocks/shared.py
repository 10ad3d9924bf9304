"""Shared pieces of the blocked engines: the algorithms' structural limits, names, exact tails
on integer statistics with a fractional centre, exact convolutions. Mid-ranks, the grid, the
counts and the resource limits are the numerical core's (`engine/core`)."""
from __future__ import annotations

from fractions import Fraction

import numpy as np

from ...errors import BindError
from ...result import EngineOutcome
from ..core import pvalues
from ..core.limits import EXACT_COUNT_LIMIT

PAGE_MAX_TREATMENTS = 12       # the per-block Page DP runs over the 2^k subsets of units
VECTOR_MAX_TREATMENTS = 8      # the vector DP applies each block's k! permutations
CHUNK_ROWS = 1 << 21

STRATIFIED = ("stratified-ranks", "stratified-means")
COMPLETE = ("friedman", "within-block-f", "page")
TESTS = STRATIFIED + COMPLETE

STATISTIC_NAMES = {
    "stratified-ranks": "stratified rank sum of the first group (mid-ranks within blocks)",
    "stratified-means": "stratified sum of the first group's values (within-block permutation)",
    "friedman": "Friedman chi-square (mid-ranks within blocks, tie-corrected)",
    "within-block-f": "F for treatments (additive two-way model, permuted within blocks)",
    "page": "Page's L (mid-ranks within blocks)",
}

DESCRIPTIONS = {
    "dp-integer": "dynamic programming on integer scores within blocks, convolved across blocks",
    "dp-vector": "dynamic programming over blocks on the vector of treatment totals",
    "enumeration": "complete enumeration of within-block arrangements",
    "monte-carlo": "Monte Carlo sampling of within-block arrangements",
}

COUNT_WARNING = ("the reference set has more than 2^53 members: counts are held in double "
                 "precision (relative error near 1e-16)")


# ---------------------------------------------------------------- shared helpers

def design_arrays(values, groups, blocks):
    v = np.asarray(values, dtype=float)
    g = np.asarray(groups)
    b = np.asarray(blocks)
    if v.ndim != 1 or g.shape != v.shape or b.shape != v.shape:
        raise BindError("values, groups and blocks must be 1-D and of the same length")
    if v.size == 0:
        raise BindError("there are no observations")
    if not np.all(np.isfinite(v)):
        raise BindError("values must be finite numbers (missing values are not allowed here)")
    if not (np.issubdtype(g.dtype, np.integer) and np.issubdtype(b.dtype, np.integer)):
        raise BindError("group and block codes must be integers")
    if g.min() < 0 or b.min() < 0:
        raise BindError("group and block codes must be non-negative")
    return v, g.astype(np.int64), b.astype(np.int64)


def _name(names, code, word):
    return f"{word} {names[code]!r}" if names is not None else f"{word} {code}"


def _fraction_sum(pairs) -> Fraction:
    """Sum of num/den over (num, den) integer pairs, exactly."""
    return sum((Fraction(int(n), int(d)) for n, d in pairs), Fraction(0))


def integer_tail_mask(support, s_obs: int, center: Fraction, alternative: str) -> np.ndarray:
    """Exact tail for integer statistics; two-sided is |S - center| >= |s_obs - center|."""
    center = Fraction(center)
    return pvalues.integer_tail_mask(support, s_obs, alternative, center.numerator,
                                     center.denominator)


def _check_alternative(test, alternative):
    if alternative not in ("higher", "lower", "two-sided"):
        raise BindError(f"unknown alternative {alternative!r}")
    if test in ("friedman", "within-block-f") and alternative != "two-sided":
        raise BindError(f"{STATISTIC_NAMES[test]} has no direction: only the two-sided "
                        "alternative applies (Page's test handles ordered treatments)")


def convolve_exact(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Convolution of two count arrays by direct sums (exact for integer counts below 2^53)."""
    ia, ib = np.flatnonzero(a), np.flatnonzero(b)
    if len(a) * len(b) <= 4 * len(ia) * len(ib):
        return np.convolve(a, b)
    out = np.zeros(len(a) + len(b) - 1)
    step = max(1, CHUNK_ROWS // max(1, len(ib)))
    for s in range(0, len(ia), step):
        part = ia[s:s + step]
        idx = (part[:, None] + ib[None, :]).ravel()
        w = (a[part][:, None] * b[ib][None, :]).ravel()
        out += np.bincount(idx, weights=w, minlength=len(out))
    return out


def _outcome(test, statistic, p, algorithm, arrangements, support=None, probs=None,
             warnings=(), draws=None, p_interval=None, seed=None) -> EngineOutcome:
    method = "monte-carlo" if algorithm == "monte-carlo" else "exact"
    if method == "exact" and arrangements >= EXACT_COUNT_LIMIT and algorithm != "enumeration":
        warnings = tuple(warnings) + (COUNT_WARNING,)
    return EngineOutcome(STATISTIC_NAMES[test], float(statistic), pvalues.clip(p), method,
                         DESCRIPTIONS[algorithm], arrangements=arrangements, draws=draws,
                         p_interval=p_interval, seed=seed, null_support=support, null_probs=probs,
                         warnings=tuple(warnings))


def _merge_tallies(vals, counts, scale):
    """Values merged within 1e-10 of scale, with summed counts (for the null's picture only:
    p-values never use this merge)."""
    unit = max(abs(scale), 1e-300) * 1e-10
    _, inverse = np.unique(np.round(vals / unit), return_inverse=True)
    c = np.bincount(inverse, weights=counts)
    v = np.bincount(inverse, weights=vals * counts) / c
    return v, c
