"""Two crossed factors: the cells, each term's basis, and every F from the cell sums.

Every space of the two-way model (the grand mean, the two main effects, the interaction) is
constant within cells, so each sum of squares is a quadratic form in the cell sums
s = C'y (C: the rows' cell indicators, D = C'C the cell sizes). A term's basis W (cells x df)
spans the term's columns made orthogonal, in the metric D, to the terms it is adjusted for,
with W'DW = I; then

    SS_term = |W's|^2,   SS_error = y'y - sum_c s_c^2 / n_c,
    F = (SS_term / df_term) / (SS_error / (N - cells)).

The sums of squares are of type II: each main effect adjusted for the other (not for the
interaction), the interaction for both main effects. In a balanced design they equal the
sequential (type I) and the type III sums.

Any rearrangement of y over the rows changes only s (y'y stays), so the engines compute F for
many arrangements from their cell sums alone.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ...errors import DataError

TERMS = ("first", "second", "interaction")
# the scale of the comparison tolerance (pvalues.tolerance): an F below RTOL * F_FLOOR = 1e-15
# is zero up to rounding (a term whose cell sums fit the smaller model exactly), so rounding
# never splits the ties at zero
F_FLOOR = 1e-6


@dataclass(frozen=True)
class Term:
    key: str                 # "first", "second", "interaction"
    basis: np.ndarray        # cells x df, W'DW = I
    df: int


@dataclass(frozen=True)
class Layout:
    y: np.ndarray            # the response, one value a row
    first: np.ndarray        # level code of the first factor, per row
    second: np.ndarray       # level code of the second factor, per row
    levels: tuple            # (levels of the first, levels of the second)
    cells: np.ndarray        # cell code per row: first * levels[1] + second
    sizes: np.ndarray        # rows per cell
    terms: dict              # key -> Term
    additive: np.ndarray     # cells x p: orthonormal (metric D) basis of 1 + first + second
    df_error: int

    @property
    def n(self) -> int:
        return len(self.y)

    @property
    def n_cells(self) -> int:
        return len(self.sizes)

    def onehot(self) -> np.ndarray:
        """N x cells indicators: values @ onehot() gives the cell sums."""
        out = np.zeros((self.n, self.n_cells))
        out[np.arange(self.n), self.cells] = 1.0
        return out


def layout(y, first, second) -> Layout:
    y = np.asarray(y, dtype=float)
    first = np.asarray(first, dtype=np.int64)
    second = np.asarray(second, dtype=np.int64)
    a, b = int(first.max()) + 1, int(second.max()) + 1
    cells = first * b + second
    sizes = np.bincount(cells, minlength=a * b)
    if np.any(sizes == 0):
        raise DataError("every combination of the two factors needs at least one row")
    df_error = len(y) - a * b
    if df_error < 1:
        raise DataError("every combination of the two factors has one row: nothing is left to "
                        "estimate the error")
    cell_first = np.repeat(np.arange(a), b)
    cell_second = np.tile(np.arange(b), a)
    ones = np.ones((a * b, 1))
    A = (cell_first[:, None] == np.arange(a)).astype(float)
    B = (cell_second[:, None] == np.arange(b)).astype(float)
    d = sizes.astype(float)
    terms = {
        "first": Term("first", _basis(A, np.hstack([ones, B]), d), a - 1),
        "second": Term("second", _basis(B, np.hstack([ones, A]), d), b - 1),
        "interaction": Term("interaction", _basis(np.eye(a * b), np.hstack([ones, A, B]), d),
                            (a - 1) * (b - 1)),
    }
    for t in terms.values():
        if t.basis.shape[1] != t.df:
            raise DataError("the two factors are confounded in these data")
    additive = _orthonormal(np.sqrt(d)[:, None] * np.hstack([ones, A, B])) / np.sqrt(d)[:, None]
    return Layout(y, first, second, (a, b), cells, sizes, terms, additive, df_error)


def _orthonormal(m: np.ndarray) -> np.ndarray:
    u, s, _ = np.linalg.svd(m, full_matrices=False)
    keep = s > 1e-10 * max(float(s.max(initial=0.0)), 1e-300)
    return u[:, keep]


def _basis(target: np.ndarray, given: np.ndarray, d: np.ndarray) -> np.ndarray:
    """W with W'DW = I spanning `target`'s columns residualised on `given` (metric D)."""
    root = np.sqrt(d)[:, None]
    q = _orthonormal(root * given)
    t = root * target
    rest = t - q @ (q.T @ t)
    if not np.any(np.abs(rest) > 1e-10 * max(1.0, float(np.abs(t).max()))):
        return np.zeros((len(d), 0))
    return _orthonormal(rest) / root


def cell_sums(layout_: Layout, rows: np.ndarray) -> np.ndarray:
    """Cell sums of each row of `rows` (arrangements x N)."""
    out = np.zeros((rows.shape[0], layout_.n_cells))
    for c in range(layout_.n_cells):
        out[:, c] = rows[:, layout_.cells == c].sum(axis=1)
    return out


def f_of(layout_: Layout, key: str, s: np.ndarray, total_ss: float) -> np.ndarray:
    """F of a term from cell sums s (arrangements x cells); total_ss = the values' y'y."""
    term = layout_.terms[key]
    ss_term = ((s @ term.basis) ** 2).sum(axis=1)
    ss_error = np.maximum(total_ss - (s * s / layout_.sizes).sum(axis=1), 0.0)
    return f_ratio(ss_term, term.df, ss_error, layout_.df_error)


def f_ratio(ss_term, df, ss_error, df_error) -> np.ndarray:
    """F of many arrangements; 0 / 0 (no spread left at all) counts as extreme, +inf."""
    with np.errstate(divide="ignore", invalid="ignore"):
        f = (ss_term / df) / (ss_error / df_error)
    return np.where(np.isnan(f), np.inf, f)


def sums_of_squares(layout_: Layout) -> dict:
    """The observed type II sums of squares of every term, and the error's."""
    s = cell_sums(layout_, layout_.y[None, :])
    out = {key: float(((s @ t.basis) ** 2).sum()) for key, t in layout_.terms.items()}
    out["error"] = float(max(layout_.y @ layout_.y - (s * s / layout_.sizes).sum(), 0.0))
    return out


def additive_residuals(layout_: Layout) -> np.ndarray:
    """y minus its fit in the additive model (both main effects, no interaction)."""
    s = cell_sums(layout_, layout_.y[None, :])[0]
    fitted_cells = layout_.additive @ (layout_.additive.T @ s)
    return layout_.y - fitted_cells[layout_.cells]
