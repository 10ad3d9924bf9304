"""Exact and Monte Carlo tests for r x c tables, conditional on both margins.

`candidates(table, statistic)` says what each algorithm would cost; `run(...)` carries one out.
Statistics ("fisher", "chi-square", "likelihood-ratio", "trend") are defined in
tables_stats; the exact algorithm is the network of tables_network, which never lists the
tables one by one. Monte Carlo draws random tables with both margins fixed (Patefield's
algorithm, scipy.stats.random_table) in the seeded blocks of sampling.blocks.

Empty rows and columns carry no information and are left out (with a warning). A table that
has one row or one column left is the only table with its margins: p = 1.
"""
from __future__ import annotations

import numpy as np
from ...lazy import stats

from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core.limits import DEFAULT_DRAWS
from ..core.pvalues import clip, monte_carlo_p
from ..core.progress import NO_PROGRESS, Progress
from ..montecarlo.sampling import iter_blocks, require_seed
from .join import Turn
from .network import NetworkTooLarge, count_tables, dense_size, forward, make_layout
from .stats import NAMES, Prepared, check_choice, prepare

NETWORK = "network"
MONTE_CARLO = "monte-carlo"
# The backward pass keeps two floats per (stage, state): cap stages x states.
NETWORK_CELLS = 12_000_000
NETWORK_WORDS = ("network algorithm over columns: dynamic programming on the remaining row "
                 "margins, with exact bounds on the rest of the statistic")
SAMPLED_WORDS = "random tables with both margins fixed (Patefield's algorithm)"


def as_table(table) -> np.ndarray:
    t = np.asarray(table)
    if t.ndim != 2 or t.size == 0:
        raise ValueError("a contingency table needs rows and columns of counts")
    if not np.all(np.isfinite(t)) or np.any(t < 0) or np.any(t != np.round(t)):
        raise ValueError("table cells must be non-negative whole counts")
    return t.astype(np.int64)


def reduce_table(table, row_scores=None, col_scores=None):
    """Drop empty rows and columns (and their scores); say so in warnings."""
    t = as_table(table)
    u = None if row_scores is None else np.asarray(row_scores, float)
    v = None if col_scores is None else np.asarray(col_scores, float)
    if u is not None and u.shape != (t.shape[0],) or v is not None and v.shape != (t.shape[1],):
        raise ValueError("one score is needed for each row and for each column")
    if u is None:
        u = np.arange(1, t.shape[0] + 1, dtype=float)
    if v is None:
        v = np.arange(1, t.shape[1] + 1, dtype=float)
    rk, ck = t.sum(axis=1) > 0, t.sum(axis=0) > 0
    warnings = []
    if not rk.all():
        warnings.append(f"{int((~rk).sum())} empty row(s) left out")
    if not ck.all():
        warnings.append(f"{int((~ck).sum())} empty column(s) left out")
    return t[rk][:, ck], u[rk], v[ck], warnings


def orient(t, u, v):
    """Transpose so that the network's state space (over the rows) is the smaller one."""
    if dense_size(t.sum(axis=1)) > dense_size(t.sum(axis=0)):
        return t.T.copy(), v, u
    return t, u, v


def _shape(table, row_scores=None, col_scores=None):
    t, u, v, warnings = reduce_table(table, row_scores, col_scores)
    if min(t.shape) >= 2:
        t, u, v = orient(t, u, v)
    return t, u, v, warnings


def candidates(table, statistic: str = "fisher", draws: int = DEFAULT_DRAWS) -> list[Candidate]:
    """The exact network and Monte Carlo, with their estimated cost."""
    t, _, _, _ = _shape(table)
    if min(t.shape) < 2:
        return [Candidate(NETWORK, "single table with these margins", True, 1.0, 1.0,
                          arrangements=1.0)]
    rows, cols = t.sum(axis=1), t.sum(axis=0)
    size, stages = dense_size(rows), t.size
    cells = size * (stages + 1)
    feasible = cells <= NETWORK_CELLS
    ops, arrangements = float(cells), 0.0
    if feasible:
        layout = make_layout(rows, cols)
        arrangements = count_tables(layout)
        states = float(sum(r.size for r in layout.reach))
        ops += states * (float(np.mean(np.minimum.outer(rows, cols))) + 1.0) * 10.0
        ops += _network_ops(statistic, arrangements)
    note = "" if feasible else f"state space of {size:.3g} row-margin states is too large"
    out = [Candidate(NETWORK, NETWORK_WORDS, True, ops, cells * 24.0 + ops * 0.05,
                     feasible=feasible, note=note, arrangements=arrangements)]
    mc_ops = float(draws) * (12.0 * t.size + 60.0)
    out.append(Candidate(MONTE_CARLO, SAMPLED_WORDS, False, mc_ops, 8192 * t.size * 24.0,
                         arrangements=arrangements))
    return out


def _network_ops(statistic, arrangements) -> float:
    """Forward-pass work, from an empirical fit: time grows like the square root of the
    number of tables (measured 0.05 s at 3e5 tables, 0.3 s at 1e7, 10-60 s at 1.3e11, on this
    class of machine); Pearson's X^2 settles fewer pairs early and costs about twice as much.
    """
    factor = 2.0 if statistic == "chi-square" else 1.0
    return factor * 1.0e4 * float(np.sqrt(max(arrangements, 1.0)))


def run(table, statistic: str = "fisher", alternative: str = "two-sided",
        algorithm: str = NETWORK, draws=None, seed=None, progress: Progress = NO_PROGRESS,
        row_scores=None, col_scores=None) -> EngineOutcome:
    """Test independence in an r x c table with both margins fixed."""
    check_choice(statistic, alternative)
    t, u, v, warnings = _shape(table, row_scores, col_scores)
    if min(t.shape) < 2:
        return _single(statistic, warnings)
    prep = prepare(t, statistic, alternative, u, v, stages=t.size)
    if algorithm == NETWORK:
        cells = dense_size(t.sum(axis=1)) * (t.size + 1)
        if cells > NETWORK_CELLS:
            raise NetworkTooLarge(f"the network would need {cells:.3g} state cells "
                                  f"(limit {NETWORK_CELLS:.3g}); use Monte Carlo")
        return _exact(t, prep, progress, warnings)
    if algorithm == MONTE_CARLO:
        return _sampled(t, prep, draws or DEFAULT_DRAWS, seed, progress, warnings)
    raise ValueError(f"unknown algorithm {algorithm!r} for tables; choose network or monte-carlo")


def _single(statistic, warnings) -> EngineOutcome:
    value = 1.0 if statistic == "fisher" else 0.0
    return EngineOutcome(NAMES[statistic], value, 1.0, "exact", "single table with these margins",
                         arrangements=1.0, warnings=tuple(warnings) + (
                             "only one table has these margins: p = 1",))


def _exact(t, prep: Prepared, progress, warnings) -> EngineOutcome:
    layout = make_layout(t.sum(axis=1), t.sum(axis=0))
    arrangements = count_tables(layout)
    if prep.everything:
        p = 1.0
    else:
        turn = Turn(layout, prep.cell, prep.region, prep.quantum)
        res = forward(layout, prep.cell, prep.region, prep.quantum, progress=progress, turn=turn)
        if abs(res.extreme + res.ordinary - 1.0) > 1e-9 or turn.list_error > 1e-9:
            raise ArithmeticError("the network lost probability mass; no exact p-value")
        p = res.extreme
    return EngineOutcome(prep.name, float(prep.reported(prep.observed)), clip(p), "exact",
                         NETWORK_WORDS, arrangements=arrangements, warnings=tuple(warnings))


def null_distribution(table, statistic: str = "trend", row_scores=None, col_scores=None):
    """The whole exact null distribution of a statistic: (values, probabilities), sorted.

    No pruning, so it costs more than `run`; meant for pictures and checks on small tables.
    """
    t, u, v, _ = _shape(table, row_scores, col_scores)
    if min(t.shape) < 2:
        raise ValueError("a table with one row or one column has a single arrangement")
    prep = prepare(t, statistic, "two-sided", u, v, stages=t.size)
    res = forward(make_layout(t.sum(axis=1), t.sum(axis=0)), prep.cell, None, prep.quantum)
    values = prep.reported(res.support)
    order = np.argsort(values, kind="stable")
    return values[order], res.probs[order]


def _sampled(t, prep: Prepared, draws, seed, progress, warnings) -> EngineOutcome:
    seed = require_seed(seed)
    dist = stats.random_table(t.sum(axis=1), t.sum(axis=0))
    def work(size, gen):
        tables = dist.rvs(size=size, method="patefield", random_state=gen)
        return int(np.count_nonzero(prep.extreme(prep.sums(tables))))

    # all cores, in fixed random streams: the same p for any number of workers
    hits = sum(iter_blocks(seed, draws, work, progress, "sampling tables"))
    p, interval = monte_carlo_p(hits, draws)
    return EngineOutcome(prep.name, float(prep.reported(prep.observed)), p, "monte-carlo",
                         SAMPLED_WORDS, draws=draws, p_interval=interval, seed=seed,
                         warnings=tuple(warnings))
