"""Statistics for r x c tables, written as sums over cells S = sum_ij g_ij(n_ij).

Each statistic is a monotone function of its cell sum, so the network algorithm and the Monte
Carlo sampler both work with S and one extreme region (S <= lo or S >= hi):

- "fisher": S = sum log n_ij!; the table probability is K exp(-S). Extreme: probability no
  more than the observed one's, with relative tolerance 1e-7 (P <= P0 (1 + 1e-7)).
- "chi-square": S = sum n_ij^2 / (R_i C_j); Pearson X^2 = N S - N. Upper tail.
- "likelihood-ratio": S = sum n_ij log n_ij; G^2 = 2 (S - sum R log R - sum C log C + N log N).
  Upper tail.
- "trend": S = sum u_i v_j n_ij (linear-by-linear association, scores 1..r and 1..c unless
  given). Two-sided P(|S - E S| >= |s - E S|); "higher" / "lower" take one tail.

Tolerances on the reported statistic follow pvalues.tolerance (relative 1e-9), except the
table probability, whose tolerance is relative 1e-7 (common practice for this test).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np
from ...lazy import gammaln, xlogy

from ..core.grid import centred, integer_grid
from ..core.pvalues import PROBABILITY_RTOL, TWO_SIDED_LINEAR, TWO_SIDED_QUADRATIC, tolerance

STATISTICS = ("fisher", "chi-square", "likelihood-ratio", "trend")
ALTERNATIVES = ("two-sided", "higher", "lower")

NAMES = {"fisher": "table probability (Fisher-Freeman-Halton)",
         "chi-square": "Pearson chi-square",
         "likelihood-ratio": "likelihood-ratio G^2",
         "trend": "linear-by-linear sum of u_i v_j n_ij"}

RULES = {"fisher": "p = sum of the probabilities of tables no more probable than the observed "
                   "one (relative tolerance 1e-7)",
         "chi-square": TWO_SIDED_QUADRATIC,
         "likelihood-ratio": TWO_SIDED_QUADRATIC,
         "trend": TWO_SIDED_LINEAR}


@dataclass(frozen=True)
class Prepared:
    """One statistic set up for one table (margins all positive)."""

    statistic: str
    cell: np.ndarray          # (r, c, K + 1): g_ij(x); int64 when S is an integer
    observed: float           # S of the observed table
    region: tuple             # (lo, hi): extreme when S <= lo or S >= hi
    quantum: Optional[float]  # merging grid for S (None: integer S)
    offset: float             # reported = scale * S + offset (fisher: see reported())
    scale: float
    center: Optional[float] = None   # E S under the null (trend)
    everything: bool = False  # the region holds every table (p = 1)

    @property
    def name(self) -> str:
        return NAMES[self.statistic]

    def reported(self, s):
        """The statistic as the user sees it, from S."""
        s = np.asarray(s, dtype=float)
        if self.statistic == "fisher":
            return np.exp(self.offset - s)
        return self.scale * s + self.offset

    def sums(self, tables) -> np.ndarray:
        """S for a stack of tables, shape (m, r, c)."""
        r, c = self.cell.shape[:2]
        return self.cell[np.arange(r)[:, None], np.arange(c)[None, :], tables].sum(axis=(1, 2))

    def extreme(self, s) -> np.ndarray:
        s = np.asarray(s, dtype=float)
        if self.everything:
            return np.ones(s.shape, bool)
        return (s <= self.region[0]) | (s >= self.region[1])


def check_choice(statistic: str, alternative: str) -> None:
    if statistic not in STATISTICS:
        raise ValueError(f"unknown table statistic {statistic!r}; choose one of "
                         + ", ".join(STATISTICS))
    if alternative not in ALTERNATIVES:
        raise ValueError(f"unknown alternative {alternative!r}; choose one of "
                         + ", ".join(ALTERNATIVES))
    if statistic != "trend" and alternative != "two-sided":
        raise ValueError(f"the {statistic} statistic has no direction; a one-sided "
                         "alternative needs the trend statistic (or a 2 x 2 table)")


def prepare(table, statistic: str, alternative: str = "two-sided",
            row_scores=None, col_scores=None, stages: int = 1) -> Prepared:
    """Set a statistic up for `table` (no empty rows or columns)."""
    check_choice(statistic, alternative)
    t = np.asarray(table, dtype=np.int64)
    rows, cols, n = t.sum(axis=1), t.sum(axis=0), int(t.sum())
    x = np.arange(min(rows.max(), cols.max()) + 1, dtype=float)
    if statistic == "fisher":
        return _fisher(t, rows, cols, n, x, stages)
    if statistic == "chi-square":
        cell = x[None, None, :] ** 2 / (rows[:, None, None] * cols[None, :, None])
        return _upper(statistic, t, cell, scale=n, offset=-n, stages=stages)
    if statistic == "likelihood-ratio":
        cell = np.broadcast_to(xlogy(x, x), (len(rows), len(cols), x.size)).copy()
        const = xlogy(rows, rows).sum() + xlogy(cols, cols).sum() - xlogy(n, n)
        return _upper(statistic, t, cell, scale=2.0, offset=-2.0 * const, stages=stages)
    return _trend(t, rows, cols, n, x, alternative, row_scores, col_scores, stages)


def _observed(t, cell) -> float:
    r, c = t.shape
    return float(cell[np.arange(r)[:, None], np.arange(c)[None, :], t].sum())


def _fisher(t, rows, cols, n, x, stages) -> Prepared:
    cell = np.broadcast_to(gammaln(x + 1.0), (len(rows), len(cols), x.size)).copy()
    s0 = _observed(t, cell)
    log_k = gammaln(rows + 1.0).sum() + gammaln(cols + 1.0).sum() - gammaln(n + 1.0)
    tol = float(np.log1p(PROBABILITY_RTOL))
    return Prepared("fisher", cell, s0, (-np.inf, s0 - tol), tol / (20.0 * stages),
                    offset=float(log_k), scale=-1.0)


def _upper(statistic, t, cell, scale, offset, stages) -> Prepared:
    s0 = _observed(t, cell)
    shown = scale * s0 + offset
    tol = tolerance(shown) / scale
    return Prepared(statistic, cell, s0, (-np.inf, s0 - tol), tol / (20.0 * stages),
                    offset=float(offset), scale=float(scale))


def default_scores(k: int) -> np.ndarray:
    return np.arange(1, k + 1, dtype=float)


def _trend(t, rows, cols, n, x, alternative, row_scores, col_scores, stages) -> Prepared:
    u = default_scores(len(rows)) if row_scores is None else np.asarray(row_scores, float)
    v = default_scores(len(cols)) if col_scores is None else np.asarray(col_scores, float)
    if u.shape != rows.shape or v.shape != cols.shape:
        raise ValueError("one score is needed for each row and for each column")
    # scores on decimal grids become integers (S is then an exact integer, an increasing affine
    # function of the reported sum for the fixed margins); else they are centred on one of
    # their own values, so no offset drowns the differences between tables
    gu, gv = integer_grid(u), integer_grid(v)
    integer = gu is not None and gv is not None
    if integer:
        zu, zv = gu.integers.astype(float), gv.integers.astype(float)
        scale = gu.step * gv.step
        offset = (gu.origin * gv.origin * n + gu.origin * gv.step * float(zv @ cols)
                  + gu.step * gv.origin * float(zu @ rows))
    else:
        zu, zv = centred(u), centred(v)
        scale = 1.0
        offset = float((u - zu)[0] * (v - zv)[0] * n + (u - zu)[0] * float(zv @ cols)
                       + (v - zv)[0] * float(zu @ rows))
    cell = zu[:, None, None] * zv[None, :, None] * x[None, None, :]
    if integer:
        cell = np.round(cell).astype(np.int64)
    s0 = _observed(t, cell)
    center = float(zu @ rows) * float(zv @ cols) / n
    tol = tolerance(s0 - center, max(abs(s0), abs(center), 1.0))
    d = abs(s0 - center)
    if alternative == "higher":
        region = (-np.inf, s0 - tol)
    elif alternative == "lower":
        region = (s0 + tol, np.inf)
    else:
        region = (center - d + tol, center + d - tol)
    quantum = None if integer else tol / (20.0 * stages)
    return Prepared("trend", cell, s0, region, quantum, offset=offset, scale=scale, center=center,
                    everything=region[0] >= region[1])
