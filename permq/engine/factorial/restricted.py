"""Main effects by restricted permutation: one factor's levels permuted within the levels of
the other (Anderson and ter Braak 2003, J. Stat. Comput. Simul. 73:85).

Under "no effect of the first factor and no interaction", the rows within each level of the
second factor are exchangeable whatever the second factor does, so rearranging the values
within those strata gives an exact test of the first factor's F (and the other way round).
The reference set is the product over strata of the distinct ways to share a stratum's values
among its cells, prod_j n_j! / prod_i n_ij!, each equally likely.

- "listing": every arrangement of every stratum is listed once; a stratum's arrangement adds
  its share to the term's W's and to sum_c s_c^2 / n_c (both are sums over strata), so the
  reference set is the product of the strata's lists, walked in chunks without building it.
- "monte-carlo": values shuffled within strata, in seeded blocks.
"""
from __future__ import annotations

from math import factorial, prod

import numpy as np

from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core import pvalues
from ..core.limits import EXACT_COUNT_LIMIT
from ..core.enumeration import distinct_arrangements
from ..core.progress import NO_PROGRESS, Progress
from ..montecarlo.sampling import blocks
from .layout import F_FLOOR, Layout, cell_sums, f_of, f_ratio

CHUNK = 1 << 16

DESCRIPTIONS = {
    "listing": "complete listing of the arrangements within strata",
    "monte-carlo": "Monte Carlo sampling of arrangements within strata",
}


def strata_of(lay: Layout, key: str) -> tuple[np.ndarray, np.ndarray]:
    """(stratum code, moved level code) per row: the other factor's level, and this one's."""
    if key == "first":
        return lay.second, lay.first
    return lay.first, lay.second


def stratum_counts(lay: Layout, key: str) -> list[int]:
    return [m for m, _ in _strata_sizes(lay, key)]


def _strata_sizes(lay: Layout, key: str) -> list[tuple[int, int]]:
    """(distinct arrangements, rows) of each stratum."""
    strata, moved = strata_of(lay, key)
    out = []
    for j in range(int(strata.max()) + 1):
        inside = moved[strata == j]
        counts = np.bincount(inside)
        out.append((factorial(len(inside)) // prod(factorial(int(c)) for c in counts),
                    len(inside)))
    return out


def reference_size(lay: Layout, key: str) -> int:
    return prod(stratum_counts(lay, key))


def candidates(lay: Layout, key: str, draws: int) -> list[Candidate]:
    sizes = _strata_sizes(lay, key)
    counts = [m for m, _ in sizes]
    total = float(prod(counts))
    df = lay.terms[key].df
    per = len(counts) * (df + 2) + 3 * df + 12
    listed = float(sum(counts))
    build = float(sum(m * rows for m, rows in sizes))
    peak = max(float(m) * rows * 8 * 3 for m, rows in sizes)    # one stratum's list being built
    # time and memory are the plan's to judge (`set budget`, `set memory`); a count past
    # double precision's integers could not be tallied exactly
    ok = total < EXACT_COUNT_LIMIT
    note = f"{total:.4g} arrangements" if ok else f"{total:.3g} arrangements: too many to count"
    return [
        Candidate("listing", DESCRIPTIONS["listing"], True, total * per + build * 4.0,
                  peak + listed * (df + 1) * 8 + CHUNK * (df + 2) * 8 * 4, feasible=ok,
                  arrangements=total, note=note),
        Candidate("monte-carlo", DESCRIPTIONS["monte-carlo"], False,
                  draws * (lay.n * (8.0 + np.log2(max(lay.n, 2))) + lay.n_cells * (df + 3)),
                  min(draws, 8192) * lay.n * 8 * 3, arrangements=total,
                  note=f"{draws} draws"),
    ]


def observed_f(lay: Layout, key: str) -> float:
    s = cell_sums(lay, lay.y[None, :])
    return float(f_of(lay, key, s, float(lay.y @ lay.y))[0])


def run(lay: Layout, key: str, algorithm: str, draws=None, seed=None,
        progress: Progress = NO_PROGRESS) -> EngineOutcome:
    f_obs = observed_f(lay, key)
    if not np.isfinite(f_obs):
        from ...errors import DataError

        raise DataError("the values are equal within every combination of the factors, so F "
                        "is undefined")
    if algorithm == "listing":
        return _listing(lay, key, f_obs, progress)
    if algorithm == "monte-carlo":
        return _monte_carlo(lay, key, f_obs, int(draws), int(seed), progress)
    raise ValueError(f"unknown algorithm {algorithm!r}")


# ---------------------------------------------------------------- listing

def _stratum_shares(lay: Layout, key: str, j: int) -> tuple[np.ndarray, np.ndarray]:
    """For every arrangement of stratum j: (its share of W's, its share of sum s_c^2 / n_c)."""
    strata, moved = strata_of(lay, key)
    rows = np.flatnonzero(strata == j)
    y = lay.y[rows]
    arranged = distinct_arrangements(moved[rows], np.int8)   # arrangements x rows: levels
    k = lay.levels[0] if key == "first" else lay.levels[1]
    basis = lay.terms[key].basis
    shares = np.zeros((len(arranged), basis.shape[1]))
    quad = np.zeros(len(arranged))
    for level in range(k):
        cell = level * lay.levels[1] + j if key == "first" else j * lay.levels[1] + level
        s = (arranged == level) @ y
        shares += s[:, None] * basis[cell][None, :]
        quad += s * s / lay.sizes[cell]
    return shares, quad


def _listing(lay, key, f_obs, progress) -> EngineOutcome:
    strata, _ = strata_of(lay, key)
    parts = [_stratum_shares(lay, key, j) for j in range(int(strata.max()) + 1)]
    sizes = [len(q) for _, q in parts]
    total = prod(sizes)
    term = lay.terms[key]
    ss_total = float(lay.y @ lay.y)
    tol = pvalues.tolerance(f_obs, F_FLOOR)
    b = 0
    for start in range(0, total, CHUNK):
        flat = np.arange(start, min(total, start + CHUNK), dtype=np.int64)
        shares = np.zeros((len(flat), term.df))
        quad = np.zeros(len(flat))
        rest = flat
        for (sh, q), m in zip(parts, sizes):
            digit = rest % m
            rest = rest // m
            shares += sh[digit]
            quad += q[digit]
        ss_error = np.maximum(ss_total - quad, 0.0)
        f = f_ratio((shares ** 2).sum(axis=1), term.df, ss_error, lay.df_error)
        b += int(np.count_nonzero(f >= f_obs - tol))
        progress.step(min(1.0, (start + len(flat)) / total), "listing")
    return EngineOutcome("F", f_obs, pvalues.clip(b / total), "exact", DESCRIPTIONS["listing"],
                         arrangements=float(total))


# ---------------------------------------------------------------- Monte Carlo

def shuffle_within(values: np.ndarray, strata: np.ndarray, keys: np.ndarray) -> np.ndarray:
    """Each row of `keys` (draws x N uniform numbers) orders the values within each stratum."""
    out = np.empty(keys.shape)
    for j in np.unique(strata):
        rows = np.flatnonzero(strata == j)
        order = np.argsort(keys[:, rows], axis=1, kind="stable")
        out[:, rows] = values[rows][order]
    return out


def _monte_carlo(lay, key, f_obs, draws, seed, progress) -> EngineOutcome:
    strata, _ = strata_of(lay, key)
    ss_total = float(lay.y @ lay.y)
    b, done = 0, 0
    for _, size, rng in blocks(seed, draws):
        shuffled = shuffle_within(lay.y, strata, rng.random((size, lay.n)))
        f = f_of(lay, key, cell_sums(lay, shuffled), ss_total)
        b += pvalues.exceedances(f, f_obs, "higher", 0.0, F_FLOOR)
        done += size
        progress.step(done / draws, "sampling")
    p, p_int = pvalues.monte_carlo_p(b, draws)
    return EngineOutcome("F", f_obs, p, "monte-carlo", DESCRIPTIONS["monte-carlo"],
                         arrangements=float(reference_size(lay, key)), draws=draws,
                         p_interval=p_int, seed=seed)
