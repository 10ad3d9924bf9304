"""Rank and trend tests on data with few distinct values, as tests on a table.

When a response takes few distinct values (scores 1-5, a grade in 4 categories), every
assignment of the units to groups of the observed sizes gives a groups x categories table with
both margins fixed, and the assignments behind one table number prod R_i! prod C_j! / prod
n_ij! times a constant: the permutation law of any statistic that depends on the data only
through that table is its law over the tables, each with its hypergeometric probability. The
tests below are such statistics, so their exact p-values come from the table network
(`rxc`), which never lists the assignments:

- rank sum of the first group (mid-ranks): a 2 x c linear-by-linear statistic, row scores
  (1, 0), column scores the doubled mid-ranks of the categories (integers);
- linear trend in dose scores: row scores the dose scores, column scores the values;
- Jonckheere-Terpstra J = (S + pairs in different groups) / 2, with Kendall's S of the groups
  (in their order) against the categories (`concordance`);
- Kendall's S of two variables with few distinct values each (tau-b is S over a constant of
  the margins).

The p-values follow the same rules as the engines they stand in for: two-sided
P(|T - E0 T| >= |t - E0 T|), integer statistics compared exactly.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np

from ...plan.cost import Candidate
from ..core.progress import NO_PROGRESS, Progress
from ..core.grid import integer_grid
from . import rxc

TABLE = "table-network"
# Offered when the data have at most this many distinct values (and some ties).
MAX_CATEGORIES = 30
WORDS = ("network algorithm over the {what} table, both margins fixed (dynamic programming on "
         "the remaining margins, exact bounds on the rest of the statistic)")


def table_of(rows, cols) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The table of counts of (row label, column value): (table, row levels, column levels)."""
    r_levels, r_codes = np.unique(np.asarray(rows), return_inverse=True)
    c_levels, c_codes = np.unique(np.asarray(cols, dtype=float), return_inverse=True)
    t = np.zeros((r_levels.size, c_levels.size), np.int64)
    np.add.at(t, (r_codes.ravel(), c_codes.ravel()), 1)
    return t, r_levels, c_levels


def offered(values) -> bool:
    """Whether the data have few enough distinct values (and ties) for the table route."""
    k = np.unique(np.asarray(values, dtype=float)).size
    return 2 <= k <= MAX_CATEGORIES and k < np.size(values)


def doubled_midranks(counts) -> np.ndarray:
    """2 x the mid-rank of each category (integers), from the category counts."""
    counts = np.asarray(counts, np.int64)
    upto = np.cumsum(counts)
    return 2 * upto - counts + 1


# ---------------------------------------------------------------- the tests as tables

def rank_sum_table(x, y):
    """2 x c table of the two samples over the categories, with the (row, column) scores whose
    linear-by-linear sum is twice the rank sum of the first sample."""
    groups = np.r_[np.zeros(len(x), int), np.ones(len(y), int)]
    t, _, _ = table_of(groups, np.r_[x, y])
    return t, np.array([1.0, 0.0]), doubled_midranks(t.sum(axis=0)).astype(float)


def trend_table(values, groups, scores):
    """groups x categories table and the scores of the linear trend (doses, values), each put
    on an integer grid when they lie on one (then the sum is an exact integer)."""
    t, levels, cats = table_of(groups, values)
    d = np.asarray(scores, float)[levels]
    return t, _on_grid(d), _on_grid(cats)


def _on_grid(a):
    g = integer_grid(a)
    return a if g is None else g.integers.astype(float)


def ordered_table(values, groups):
    """groups (in code order) x categories, for Kendall's S and Jonckheere-Terpstra."""
    t, _, _ = table_of(groups, values)
    return t


# ---------------------------------------------------------------- candidates and runs

def candidate(t, statistic: str, what: str, arrangements: float = 0.0, u=None, v=None) -> Candidate:
    """The table route's candidate: the network for this table, with its cost; `what` names
    the table ("groups x categories"), `arrangements` is the reference set it stands for."""
    red, ru, rv, _ = rxc.reduce_table(t, u, v)
    words = WORDS.format(what=what)
    if min(red.shape) < 2:
        return Candidate(TABLE, words, True, 1.0, 1.0, note="a single table",
                         arrangements=arrangements)
    red, _, _, counts = rxc.orient(red, ru, rv, keep_order=statistic in rxc.ORDERED_STATISTICS)
    integer = statistic == "concordance" or all(
        s is None or np.all(np.asarray(s) == np.round(s)) for s in (u, v))
    c = rxc.network_candidate(red, counts, statistic, words, TABLE, integer)
    note = f"{t.shape[0]} x {t.shape[1]} table, {c.note}" if c.feasible else c.note
    return replace(c, note=note, arrangements=arrangements)


def p_value(t, statistic: str, alternative: str, progress: Progress = NO_PROGRESS,
            u=None, v=None) -> tuple[float, float]:
    """(exact p, number of tables with the margins) from the network."""
    out = rxc.run(t, statistic, alternative, rxc.NETWORK, progress=progress, row_scores=u,
                  col_scores=v)
    return out.p_value, float(out.arrangements or 1.0)


def rank_sum(x, y, alternative: str, progress: Progress = NO_PROGRESS):
    t, u, v = rank_sum_table(x, y)
    return p_value(t, "trend", alternative, progress, u, v)


RANK_SUM_WORDS = "2 groups x categories"


def rank_sum_candidate(x, y, arrangements: float) -> Candidate | None:
    """The table route of the rank-sum test, when the pooled data have few distinct values."""
    if not offered(np.r_[x, y]):
        return None
    t, u, v = rank_sum_table(x, y)
    return candidate(t, "trend", RANK_SUM_WORDS, arrangements, u, v)


def linear_trend(values, groups, scores, alternative: str, progress: Progress = NO_PROGRESS):
    t, u, v = trend_table(values, groups, scores)
    return p_value(t, "trend", alternative, progress, u, v)


def jonckheere(values, groups, alternative: str, progress: Progress = NO_PROGRESS):
    return p_value(ordered_table(values, groups), "concordance", alternative, progress)


def kendall(y, x, alternative: str, progress: Progress = NO_PROGRESS):
    """Kendall's S of y against x; `alternative` 'higher' is a positive association."""
    t, _, _ = table_of(np.asarray(x, float), y)
    return p_value(t, "concordance", alternative, progress)
