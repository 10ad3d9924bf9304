"""Incomplete blocks: the statistics as one quadratic form in a vector of treatment totals.

A block holds each treatment at most once; some treatments are missing from some blocks (a
lost plot, a dropout, a balanced incomplete design). The reference set is every arrangement
of each block's values among the treatments present in that block, all equally likely; its
size is the product of k_i! over the blocks (k_i plots in block i). A block with one plot has
no within-block comparison and is left out (it changes no statistic here).

Every statistic is S' M S for S_j = sum over the blocks holding treatment j of a score a_ij
centred within its block, and a matrix M fixed by the design (and the within-block tie
pattern, which no arrangement changes):

- "within-block-f" (means): a_ij = y_ij - mean of block i, so S is the vector of adjusted
  treatment totals Q; M = C^+, C = sum_i (I_Pi - J_Pi / k_i) (the intrablock information
  matrix), and S' M S is the treatment sum of squares adjusted for blocks, i.e. RSS(blocks) -
  RSS(blocks + treatments) of the additive two-way model fitted with the cells that are there.
  Reported: F = (SS / (t - 1)) / ((W - SS) / (n - b - t + 1)), W the within-block sum of
  squares (the same for every arrangement), so F rises with SS.
- "skillings-mack" (ranks; Skillings & Mack 1981, Technometrics 23:171): mid-ranks r_ij
  within blocks, a_ij = sqrt(12 / (k_i + 1)) (r_ij - (k_i + 1) / 2); M = Sigma^+, Sigma the
  permutation covariance of S (for untied blocks Sigma_jj = sum of (k_i - 1) over the blocks
  holding j and Sigma_jl = -(number of blocks holding both), as in the paper; with ties, the
  exact covariance of the mid-ranks, so the statistic is tie-corrected). Complete blocks give
  Friedman's statistic; a balanced incomplete design without ties gives Durbin's.
- "durbin" (Durbin 1951, British Journal of Statistical Psychology 4:85): balanced incomplete
  blocks (every block k plots, every treatment r times); a_ij = r_ij - (k + 1) / 2 and
  T = (t - 1) sum_j S_j^2 / sum_ij a_ij^2.

For the exact algorithms the totals are kept as integers where the design allows: the
values on their decimal grid (means), doubled mid-ranks (ranks) - one vector of t per block
size for Skillings-Mack, whose weight depends on k_i. `x` is that integer state, S = L x - c,
and the statistic is x' G x + h' x + c0.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from ...errors import BindError, DataError
from ..core.grid import MAX_DECIMALS
from ..core.inverse import generalized_inverse

TESTS = ("within-block-f", "skillings-mack", "durbin")
STATISTIC_NAMES = {
    "within-block-f": "F for treatments adjusted for blocks (incomplete blocks, permuted "
                      "within blocks)",
    "skillings-mack": "Skillings-Mack statistic (mid-ranks within blocks, tie-corrected)",
    "durbin": "Durbin's statistic (mid-ranks within blocks)",
}


@dataclass(frozen=True)
class Block:
    present: np.ndarray      # treatment codes of the block's plots, as observed
    z: np.ndarray            # each plot's contribution to the state (integers or floats)
    offset: int              # where the block's size class starts in the state vector


@dataclass(frozen=True)
class Layout:
    test: str
    t: int                   # treatments
    blocks: tuple            # the blocks with two or more plots
    dim: int                 # length of the state vector
    M: np.ndarray            # the statistic is S' M S, S the treatment sums of the scores
    G: np.ndarray            # ... and x' G x + h' x + c0 in the state x
    h: np.ndarray
    c0: float
    x_obs: np.ndarray
    internal_obs: float      # the observed quadratic form S' M S
    reported: Callable       # quadratic form -> the reported statistic (increasing)
    t_obs: float
    scale: float             # a bound on the quadratic form, for the tolerance of ties
    integer: bool            # the state is held in exact integers
    df: int                  # rank of M: the chi-square df of the approximations
    warnings: tuple = ()

    @property
    def arrangements(self) -> float:
        out = 1.0
        for b in self.blocks:
            out *= float(np.prod(np.arange(1, len(b.present) + 1)))
        return out

    def statistic(self, x: np.ndarray) -> np.ndarray:
        """The quadratic form for each row of x (states)."""
        x = np.asarray(x, dtype=float)
        return np.einsum("nd,de,ne->n", x, self.G, x) + x @ self.h + self.c0


def arrays(values, groups, blocks, n_groups=None):
    v = np.asarray(values, dtype=float)
    g = np.asarray(groups)
    b = np.asarray(blocks)
    if v.ndim != 1 or g.shape != v.shape or b.shape != v.shape or v.size == 0:
        raise DataError("values, groups and blocks must be 1-D, of one length, not empty")
    if not np.all(np.isfinite(v)):
        raise DataError("values must be finite numbers")
    g, b = g.astype(np.int64), b.astype(np.int64)
    t = int(n_groups) if n_groups is not None else int(g.max()) + 1
    return v, g, b, t


def block_rows(g, b) -> list:
    """The plots of each block with two or more plots (indices), in block-code order; a
    treatment twice in a block is refused."""
    out = []
    for code in np.unique(b):
        rows = np.flatnonzero(b == code)
        if len(np.unique(g[rows])) < len(rows):
            raise DataError(f"block {int(code)} holds a treatment more than once")
        if len(rows) > 1:
            out.append(rows)
    return out


def information(t: int, rows_list, g, weights=None) -> np.ndarray:
    """sum_i c_i (I_Pi - J_Pi / k_i) over the blocks (c_i = 1 without weights)."""
    C = np.zeros((t, t))
    for i, rows in enumerate(rows_list):
        p = g[rows]
        k = len(p)
        c = 1.0 if weights is None else weights[i]
        C[np.ix_(p, p)] -= c / k
        C[p, p] += c
    return C


def _pinv(C: np.ndarray) -> tuple[np.ndarray, int]:
    inv, rank = generalized_inverse(C)
    return inv, int(rank)


def _decimal_ints(v):
    """(integers, step) with v == integers * step as recorded, or None."""
    for d in range(MAX_DECIMALS + 1):
        scaled = v * 10.0 ** d
        if np.max(np.abs(scaled), initial=0.0) > 2.0 ** 40:
            return None
        ints = np.round(scaled)
        if np.all(np.abs(scaled - ints) <= 1e-9 * np.maximum(1.0, np.abs(scaled))):
            return ints.astype(np.int64), 10.0 ** -d
    return None


def _midranks(x):
    from ..core.scores import midranks

    return midranks(x)


def prepare(test, values, groups, blocks, n_groups=None) -> Layout:
    if test not in TESTS:
        raise BindError(f"unknown incomplete-block test {test!r}")
    v, g, b, t = arrays(values, groups, blocks, n_groups)
    rows_list = block_rows(g, b)
    if not rows_list:
        raise BindError("no block holds two or more plots: there is no within-block comparison")
    C = information(t, rows_list, g)
    _, rank = _pinv(C)
    if rank < t - 1:
        raise BindError("the blocks do not connect every treatment: some treatments never meet "
                        "the others within a block, so they cannot be compared within blocks")
    if test == "within-block-f":
        return _means(v, g, t, rows_list, C)
    return _ranks(test, v, g, t, rows_list)


def _means(v, g, t, rows_list, C) -> Layout:
    grid = _decimal_ints(np.concatenate([v[r] for r in rows_list]))
    integer = grid is not None
    step = grid[1] if integer else 1.0
    blocks, c = [], np.zeros(t)
    within = 0.0
    for rows in rows_list:
        y = v[rows]
        z = np.round(y / step).astype(np.int64) if integer else y.copy()
        blocks.append(Block(g[rows], z, 0))
        np.add.at(c, g[rows], y.mean())
        within += float(((y - y.mean()) ** 2).sum())
    M, df1 = _pinv(C)
    n = sum(len(r) for r in rows_list)
    df2 = n - len(rows_list) - df1
    if df2 < 1:
        raise BindError("the additive model of blocks and treatments leaves no residual degrees "
                        "of freedom for the F within blocks")
    L = np.eye(t) * step
    warnings = ()

    def reported(ss):
        ss = np.asarray(ss, dtype=float)
        resid = np.maximum(within - ss, 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(resid > 1e-12 * max(within, 1e-300), (ss / df1) / (resid / df2),
                            np.where(ss > 0, np.inf, np.nan))

    if within <= 0:
        warnings = ("no variation within blocks: F is undefined and every arrangement is alike",)
    return _layout("within-block-f", t, blocks, t, L, M, c, reported, max(within, 1e-300),
                   integer, df1, warnings)


def _ranks(test, v, g, t, rows_list) -> Layout:
    sizes = sorted({len(r) for r in rows_list})
    if test == "durbin":
        reps = np.bincount(np.concatenate([g[r] for r in rows_list]), minlength=t)
        if len(sizes) > 1 or len(set(reps.tolist())) > 1:
            raise BindError("Durbin's test is for balanced incomplete blocks (every block the "
                            "same number of plots, every treatment as often)",
                            hint="use ranks (Skillings-Mack) for any pattern of missing plots")
    classes = {s: i for i, s in enumerate(sizes)} if test == "skillings-mack" else {sizes[0]: 0}
    dim = t * len(classes)
    L = np.zeros((t, dim))
    blocks, c, spread, total_ss = [], np.zeros(t), [], 0.0
    for rows in rows_list:
        k = len(rows)
        r = _midranks(v[rows])
        w = np.sqrt(12.0 / (k + 1)) if test == "skillings-mack" else 1.0
        off = classes[k] * t
        L[np.arange(t), off + np.arange(t)] = w / 2.0
        blocks.append(Block(g[rows], np.round(2 * r).astype(np.int64), off))
        np.add.at(c, g[rows], w * (k + 1) / 2.0)
        a = w * (r - (k + 1) / 2.0)
        spread.append(float((a * a).sum()) / (k - 1))      # s_i k_i / (k_i - 1)
        total_ss += float((a * a).sum())
    if test == "durbin":
        M = np.eye(t) * ((t - 1) / total_ss) if total_ss > 0 else np.zeros((t, t))
        df = t - 1
        scale = float(t - 1) * max(len(rows_list), 1)
    else:
        M, df = _pinv(information(t, rows_list, g, spread))
        scale = float(sum(len(r) - 1 for r in rows_list))
    warnings = ("every block is tied throughout: the test has no information",) \
        if total_ss == 0 else ()
    return _layout(test, t, blocks, dim, L, M, c, lambda q: np.asarray(q, dtype=float), scale,
                   True, df, warnings)


def _layout(test, t, blocks, dim, L, M, c, reported, scale, integer, df, warnings) -> Layout:
    G = L.T @ M @ L
    h = -2.0 * (L.T @ (M @ c))
    c0 = float(c @ M @ c)
    x = np.zeros(dim, dtype=np.int64 if integer else float)
    for bl in blocks:
        np.add.at(x, bl.offset + bl.present, bl.z)
    lay = Layout(test, t, tuple(blocks), dim, M, G, h, c0, x, 0.0, reported, 0.0, scale,
                 integer, df, warnings)
    q = float(max(lay.statistic(x[None, :])[0], 0.0))
    return Layout(test, t, tuple(blocks), dim, M, G, h, c0, x, q, reported,
                  float(reported(q)), max(scale, q), integer, df, warnings)
