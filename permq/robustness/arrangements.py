"""The reference set the simulated permutation tests use, as one matrix for many data sets.

- linear statistics T = sum_i w_pi(i) a_i: a matrix W whose rows are the arranged weights, so
  that the statistics of a block of data sets are one product W @ a (a: units x data sets);
- sign flips T = sum_i s_i a_i: rows of signs;
- quadratic statistics sum_g S_g^2 / n_g: a one-hot matrix H, one row per (arrangement,
  group), so that the group sums of every arrangement are H @ a;
- Kendall's S ("pairs"): rows of sign(x_j - x_i) over the pairs i < j with x arranged, so that
  S of every arrangement is the product with the data set's pair signs sign(y_j - y_i);
- residual permutation ("residual"): one row per (arrangement, column of the basis), the
  basis's rows arranged, so that the projections of the permuted residuals are one product;
- a recomputed statistic ("recomputed"): the arranged group codes, one row an arrangement.

With blocks (`problem.strata`) arrangements move units only within their block.

`exact_reference` lists every distinct arrangement once (each stands for the same number of
permutations, so the p-value is unchanged) when there are at most EXACT_LIMIT of them; else
`sampled_reference` draws Monte Carlo arrangements, fresh for every block of data sets.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from ..engine.core.counting import multinomial
from ..engine.core.enumeration import distinct_arrangements  # noqa: F401  (used and re-exported)
from .problem import Problem

EXACT_LIMIT = 20_000


@dataclass(frozen=True)
class Reference:
    exact: bool
    matrix: np.ndarray
    count: int          # arrangements listed (exact) or drawn (Monte Carlo)


def _base_codes(problem: Problem) -> tuple[np.ndarray, np.ndarray]:
    """(code of each unit, value per code): what an arrangement moves around."""
    if problem.form in ("quadratic", "quadform", "recomputed"):
        return problem.codes, np.arange(len(problem.sizes), dtype=float)
    if problem.form == "residual":
        return np.arange(problem.n, dtype=np.int64), np.arange(problem.n, dtype=float)
    moved = problem.x if problem.form == "pairs" and problem.kind == "slope" else (
        problem.codes if problem.form == "pairs" else problem.weights)
    values, codes = np.unique(moved, return_inverse=True)
    return codes.astype(np.int64), values


def _strata(problem: Problem) -> list:
    """The units of each block (one block of every unit without blocks)."""
    if problem.strata is None:
        return [np.arange(problem.n)]
    return [np.nonzero(problem.strata == s)[0] for s in np.unique(problem.strata)]


def reference_size(problem: Problem) -> int:
    """The number of distinct arrangements (sign patterns) of the design."""
    if problem.form == "signs":
        return 2 ** problem.n
    codes, _ = _base_codes(problem)
    out = 1
    for units in _strata(problem):
        out *= multinomial(np.bincount(codes[units]))
    return out


def _within_strata(problem: Problem, codes: np.ndarray) -> np.ndarray:
    """Every distinct arrangement of `codes` that keeps each unit in its block."""
    rows = np.zeros((1, problem.n), dtype=np.int64)
    for units in _strata(problem):
        part = distinct_arrangements(codes[units])
        rows = np.repeat(rows, len(part), axis=0)
        rows[:, units] = np.tile(part, (len(rows) // len(part), 1))
    return rows


def _as_matrix(problem: Problem, arranged_codes: np.ndarray, values: np.ndarray) -> np.ndarray:
    if problem.form == "recomputed":   # the group codes themselves: the check recomputes
        return arranged_codes.astype(np.int8)
    if problem.form in ("quadratic", "quadform"):
        k = len(problem.sizes)
        onehot = arranged_codes[:, None, :] == np.arange(k)[None, :, None]
        return onehot.reshape(-1, problem.n).astype(float)
    if problem.form == "pairs":
        i, j = np.triu_indices(problem.n, 1)
        return np.sign(values[arranged_codes[:, j]] - values[arranged_codes[:, i]])
    if problem.form == "residual":     # rows (arrangement, basis column)
        moved = problem.basis[arranged_codes]          # arrangements x units x columns
        return np.ascontiguousarray(moved.transpose(0, 2, 1)).reshape(-1, problem.n)
    return values[arranged_codes]


def exact_reference(problem: Problem, limit: int = EXACT_LIMIT) -> Optional[Reference]:
    size = reference_size(problem)
    if size > limit:
        return None
    if problem.form == "signs":
        bits = np.arange(problem.n, dtype=np.int64)
        codes = np.arange(size, dtype=np.int64)
        signs = ((codes[:, None] >> bits) & 1) * 2.0 - 1.0
        return Reference(True, signs, size)
    codes, values = _base_codes(problem)
    arranged = _within_strata(problem, codes)
    return Reference(True, _as_matrix(problem, arranged, values), len(arranged))


def random_permutations(problem: Problem, rng: np.random.Generator, draws: int) -> np.ndarray:
    """`draws` random permutations of the units (rows), each within the blocks."""
    if problem.strata is None:
        return rng.permuted(np.tile(np.arange(problem.n), (draws, 1)), axis=1)
    perms = np.tile(np.arange(problem.n), (draws, 1))
    for units in _strata(problem):
        perms[:, units] = units[rng.permuted(np.tile(np.arange(len(units)), (draws, 1)),
                                             axis=1)]
    return perms


def sampled_reference(problem: Problem, rng: np.random.Generator, draws: int) -> Reference:
    if problem.form == "signs":
        return Reference(False, rng.integers(0, 2, (draws, problem.n)) * 2.0 - 1.0, draws)
    codes, values = _base_codes(problem)
    perms = random_permutations(problem, rng, draws)
    return Reference(False, _as_matrix(problem, codes[perms], values), draws)
