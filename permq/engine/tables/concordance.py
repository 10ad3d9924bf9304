"""Kendall's S on a table with ordered rows and ordered columns, as gains of the network.

Two units in cells (i, j) and (i', j') form a concordant pair when i' < i and j' < j (or both
greater), a discordant pair when the orders disagree, and a tied pair when they share a row
or a column; S = concordant - discordant pairs. With both margins fixed, S is a function of
the table, so its conditional law is over the tables with those margins, each with its
hypergeometric probability: the permutation law of S when one variable is shuffled against
the other, ties in both kept as they are.

In the network (columns left to right, rows top to bottom) a pair is counted when its unit in
the later column is placed: x units put in cell (i, j) gain

    x * (units in columns < j and rows < i  -  units in columns < j and rows > i),

and both counts follow from the state left: a row k's units placed so far are R_k - r_k, which
for the rows above i include their cells of column j (together C_j - left). So S is carried
exactly as an integer, the columns in their own order (the rows may be either variable: S is
symmetric, so the network may transpose the table). E S = 0 under the null; two-sided
P(|S| >= |s|).

Jonckheere-Terpstra's J on a groups x categories table is (S + pairs in different groups) / 2,
and Kendall's tau-b is S over a constant of the margins.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .stats import Prepared

NAME = "Kendall's S (concordant - discordant pairs)"


def kendall_s(tables) -> np.ndarray:
    """S of a table (r, c) or of a stack of tables (m, r, c)."""
    t = np.asarray(tables, dtype=np.int64)
    single = t.ndim == 2
    t = t[None] if single else t
    # units in columns < j, cumulated over rows: below[i] rows < i, above rows > i
    left = np.cumsum(t, axis=2) - t                       # columns < j, same row
    upper = np.cumsum(left, axis=1) - left                # rows < i, columns < j
    lower = left.sum(axis=1, keepdims=True) - np.cumsum(left, axis=1)   # rows > i
    s = np.sum(t * (upper - lower), axis=(1, 2))
    return s[0] if single else s


@dataclass(frozen=True)
class ConcordanceGain:
    """The network's gain for Kendall's S; `rows` are the row margins as the network takes
    them."""

    rows: tuple

    def gain(self, layout, stage, st) -> np.ndarray:
        i, j = layout.cell_of(stage)
        placed = np.asarray(self.rows, np.int64)[None, :] - st.digits   # (sources, r)
        given = layout.cols[j] - st.left            # what rows above i gave column j
        above = placed[:, :i].sum(axis=1) - given
        below = placed[:, i + 1:].sum(axis=1)
        g = st.x * (above - below)[st.rep]
        if layout.folds(stage):                     # the last row's forced cell
            last = st.left[st.rep] - st.x
            g = g + last * (above + placed[:, i])[st.rep]
        return g


@dataclass(frozen=True)
class PreparedConcordance(Prepared):
    """Kendall's S set up for one table: integer gains, centre 0."""

    @property
    def name(self) -> str:
        return NAME

    def sums(self, tables) -> np.ndarray:
        return kendall_s(tables)


def prepare(table, alternative: str = "two-sided") -> PreparedConcordance:
    """Kendall's S for `table` as the network takes it (columns in their own order)."""
    t = np.asarray(table, dtype=np.int64)
    s0 = int(kendall_s(t))
    rows = t.sum(axis=1)
    # S is an integer; the half-unit margin keeps the integer comparisons exact
    tol = 0.5
    if alternative == "higher":
        region = (-np.inf, s0 - tol)
    elif alternative == "lower":
        region = (s0 + tol, np.inf)
    else:
        d = abs(s0)
        region = (-d + tol, d - tol)
    return PreparedConcordance("concordance", ConcordanceGain(tuple(int(v) for v in rows)),
                               float(s0), region, None, offset=0.0, scale=1.0, center=0.0,
                               everything=region[0] >= region[1])
