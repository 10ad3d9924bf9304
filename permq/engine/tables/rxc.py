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

from functools import lru_cache

import numpy as np
from ...lazy import stats

from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core.limits import DEFAULT_DRAWS
from ..core.pvalues import clip, monte_carlo_p
from ..core.progress import NO_PROGRESS, Progress
from ..montecarlo.sampling import iter_blocks, require_seed
from .join import Turn
from ...errors import PlanError
from .network import (ENTRY_BYTES, MAX_STAGE_STATES, NetworkTooLarge, count_tables, entry_limit,
                      forward, make_layout, path_bounds)
from .states import processing_order
from . import concordance, integers
from .stats import NAMES, Prepared, check_choice, prepare as prepare_cells

NETWORK = "network"
MONTE_CARLO = "monte-carlo"
# Up to this many states the planner lays the network out to count its tables.
LAYOUT_STATES = 3_000_000
# Statistics that need the columns in their own order (their gains depend on it).
ORDERED_STATISTICS = ("concordance",)
NETWORK_WORDS = ("network algorithm over columns: dynamic programming on the remaining row "
                 "margins, with exact bounds on the rest of the statistic")
SAMPLED_WORDS = "random tables with both margins fixed (Patefield's algorithm)"


def check_statistic(statistic: str, alternative: str) -> None:
    if statistic == "concordance":
        check_choice("trend", alternative)
    else:
        check_choice(statistic, alternative)


def prepare(t, statistic, alternative, u, v, stages):
    """The statistic set up for table `t` as the network takes it (trend scores on decimal
    grids become integers in `stats`: S is then an exact integer)."""
    if statistic == "concordance":
        return concordance.prepare(t, alternative)
    return prepare_cells(t, statistic, alternative, u, v, stages=stages)


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


def orient(t, u, v, keep_order: bool = False):
    """The table as the network takes it: transposed when that holds fewer states, columns
    from the largest margin to the smallest (unless `keep_order`), scores alongside.
    Returns (table, row scores, column scores, states per stage)."""
    flip, order, counts = processing_order(t, keep_order)
    if flip:
        t, u, v = t.T, v, u
    return np.ascontiguousarray(t[:, order]), u, v[order], counts


def _shape(table, row_scores=None, col_scores=None, keep_order=False):
    t, u, v, warnings = reduce_table(table, row_scores, col_scores)
    counts = np.ones(1)
    if min(t.shape) >= 2:
        t, u, v, counts = orient(t, u, v, keep_order)
    return t, u, v, warnings, counts


def candidates(table, statistic: str = "fisher", draws: int = DEFAULT_DRAWS, row_scores=None,
               col_scores=None) -> list[Candidate]:
    """The exact network and Monte Carlo, with their estimated cost."""
    t, u, v, _, counts = _shape(table, row_scores, col_scores,
                                keep_order=statistic in ORDERED_STATISTICS)
    if min(t.shape) < 2:
        return [Candidate(NETWORK, "single table with these margins", True, 1.0, 1.0,
                          arrangements=1.0)]
    integer = statistic == "concordance" or (
        statistic == "trend" and bool(np.all(u == np.round(u)) and np.all(v == np.round(v))))
    out = [network_candidate(t, counts, statistic, integer=integer)]
    mc_ops = float(draws) * (12.0 * t.size + 60.0)
    out.append(Candidate(MONTE_CARLO, SAMPLED_WORDS, False, mc_ops, 8192 * t.size * 24.0,
                         arrangements=out[0].arrangements))
    return out


def network_candidate(t, counts, statistic, words: str = NETWORK_WORDS,
                      algorithm: str = NETWORK, integer: bool = False) -> Candidate:
    """The exact network for table `t` as the network takes it (`orient`), with its cost:
    the states it really meets (`counts`, exact), its moves (estimated) and tables."""
    states, widest = float(counts.sum()), float(counts.max())
    if widest > MAX_STAGE_STATES or not np.isfinite(states):
        return Candidate(algorithm, words, True, float("inf"), float("inf"), feasible=False,
                         note=f"{widest:.3g} network states at one stage are too many to hold")
    rows, cols = t.sum(axis=1), t.sum(axis=0)
    arrangements = 0.0
    if states <= LAYOUT_STATES:
        arrangements = tables_with_margins(rows, cols, integer)
    moves = estimated_moves(rows, cols, counts)
    compiled = compiled_route(integer)
    tables = arrangements or states ** 1.5
    if compiled:
        pairs = integer_pairs(moves, tables)
        ops = moves * 9.0 + pairs * 18.0
        memory = moves * 16.0 + states * 48.0 + pairs * integers.PAIR_BYTES
    else:
        ops = network_ops(moves, states, tables)
        memory = states * 64.0 + _pairs_bytes(moves, tables, statistic)
    memory += 2e4
    note = f"{_count_words(states)} states"
    return Candidate(algorithm, words, True, ops, memory, note=note, arrangements=arrangements)


def estimated_moves(rows, cols, counts) -> float:
    """Moves of the network: at each stage, the states times about half the range of the
    cell (within a factor of about 2 of the count, `tests/test_table_routes.py`)."""
    per = len(rows) - 1
    return float(sum(counts[s] * (min(rows[s % per], cols[s // per]) / 2.0 + 1.0)
                     for s in range(len(counts) - 1)))


def _count_words(v: float) -> str:
    return f"{int(v):,}" if v < 1e7 else f"{v:.3g}"


def integer_pairs(moves, tables) -> float:
    """(State, partial sum) pairs the compiled integer pass holds at its widest: the forward
    pairs and the laws of the rest where they meet. How many the exact bounds settle early
    depends on the data as well as on the margins, so this is a fit, not a bound: least
    squares of log pairs on log moves and log tables over 176 Kendall and Jonckheere-Terpstra
    tables of 2-5 rows and 3-7 columns, n 15-110 (median ratio 0.99, 77% within 2x, the worst
    6.7x under). Each pair holds about 50 bytes at the peak (its sum, its mass and the
    scratch they are merged in)."""
    return 2.65 * float(moves) ** 0.448 * float(max(tables, 1.0)) ** 0.334


def _pairs_bytes(moves, tables, statistic) -> float:
    """The sorting network's (state, partial sum) pairs held at the widest step, in bytes: a
    fifth of a byte for each move's and each square root of a table's work (Pearson's X^2
    settles fewer pairs early: twice), up to the network's limit (`network.entry_limit`
    pairs)."""
    work = moves * 30.0 + ((2.0 if statistic == "chi-square" else 1.0)
                           * 1.0e4 * float(np.sqrt(max(tables, 1.0))))
    return min(work * 0.2, entry_limit() * ENTRY_BYTES)


def network_ops(moves, states, tables) -> float:
    """Estimated work of the sorting network (Fisher's and Pearson's statistics): per move, per
    state (the bounds) and the pairs' pass, which grows like the cube root of the number of
    tables, the pruning settling most pairs early (least squares on 111 tables of 2-4 rows and
    2-6 columns, 13 to 212 counts, `bench/calibrate.py`: 95% of the times within 2x). The
    compiled integer pass is priced by its pairs (`integer_pairs`), about 90 ns each."""
    return moves * 3.0 + states * 94.0 + 9.5e3 * float(np.cbrt(max(tables, 1.0)))


@lru_cache(maxsize=4)
def cached_layout(rows: tuple, cols: tuple):
    """The network's layout for these margins, kept for the run after the plan."""
    return make_layout(rows, cols)


def run(table, statistic: str = "fisher", alternative: str = "two-sided",
        algorithm: str = NETWORK, draws=None, seed=None, progress: Progress = NO_PROGRESS,
        row_scores=None, col_scores=None) -> EngineOutcome:
    """Test independence in an r x c table with both margins fixed."""
    check_statistic(statistic, alternative)
    t, u, v, warnings, counts = _shape(table, row_scores, col_scores,
                                       keep_order=statistic in ORDERED_STATISTICS)
    if min(t.shape) < 2:
        return _single(statistic, warnings)
    prep = prepare(t, statistic, alternative, u, v, stages=t.size)
    if algorithm == NETWORK:
        try:
            if counts.max() > MAX_STAGE_STATES:
                raise NetworkTooLarge(f"the network would hold {counts.max():.3g} states at "
                                      "one stage")
            return _exact(t, prep, progress, warnings)
        except NetworkTooLarge as exc:
            # the plan cannot see how many (state, partial sum) pairs the pass will carry;
            # past the network's limits the statement still answers, by Monte Carlo, and says so
            if seed is None:
                raise PlanError(f"no exact p-value: {exc}",
                                hint="use 'sampled N' for Monte Carlo") from None
            draws = draws or DEFAULT_DRAWS
            why = (f"the exact network outgrew its limits ({exc}); the p-value is Monte Carlo "
                   f"instead ({draws:,} draws)")
            return _sampled(t, prep, draws, seed, progress, list(warnings) + [why])
    if algorithm == MONTE_CARLO:
        return _sampled(t, prep, draws or DEFAULT_DRAWS, seed, progress, warnings)
    raise ValueError(f"unknown algorithm {algorithm!r} for tables; choose network or monte-carlo")


def _single(statistic, warnings) -> EngineOutcome:
    value = 1.0 if statistic == "fisher" else 0.0
    name = concordance.NAME if statistic == "concordance" else NAMES[statistic]
    return EngineOutcome(name, value, 1.0, "exact", "single table with these margins",
                         arrangements=1.0, warnings=tuple(warnings) + (
                             "only one table has these margins: p = 1",))


def compiled_route(integer: bool) -> bool:
    """Whether an integer statistic goes through the compiled dense network."""
    return integer and integers.available()


def tables_with_margins(rows, cols, integer: bool) -> float:
    """Number of tables with these margins (from the layout the run will use)."""
    rows, cols = tuple(int(v) for v in rows), tuple(int(v) for v in cols)
    if compiled_route(integer):
        return integers.layout(rows, cols).tables
    return count_tables(cached_layout(rows, cols))


def _exact(t, prep: Prepared, progress, warnings) -> EngineOutcome:
    rows, cols = tuple(int(v) for v in t.sum(axis=1)), tuple(int(v) for v in t.sum(axis=0))
    if compiled_route(integers.is_integer(prep.cell)) and not prep.everything:
        try:
            lay = integers.layout(rows, cols)
            res = integers.forward(lay, prep.cell, prep.region, progress)
            if abs(res.extreme + res.ordinary - 1.0) > 1e-9:
                raise ArithmeticError("the network lost probability mass; no exact p-value")
            return EngineOutcome(prep.name, float(prep.reported(prep.observed)),
                                 clip(res.extreme), "exact", NETWORK_WORDS,
                                 arrangements=lay.tables, warnings=tuple(warnings))
        except integers.TooWide as exc:
            if exc.budget:                 # the sorting network holds more per pair
                raise NetworkTooLarge(f"the network would carry {exc}") from None
        except NetworkTooLarge:
            pass                           # the sorting network below holds sparse lists
    layout = cached_layout(rows, cols)
    arrangements = count_tables(layout)
    if prep.everything:
        p = 1.0
    else:
        bounds = path_bounds(layout, prep.cell)
        turn = Turn(layout, prep.cell, prep.region, prep.quantum, bounds)
        res = forward(layout, prep.cell, prep.region, prep.quantum, bounds, progress, turn)
        if abs(res.extreme + res.ordinary - 1.0) > 1e-9 or turn.list_error > 1e-9:
            raise ArithmeticError("the network lost probability mass; no exact p-value")
        p = res.extreme
    return EngineOutcome(prep.name, float(prep.reported(prep.observed)), clip(p), "exact",
                         NETWORK_WORDS, arrangements=arrangements, warnings=tuple(warnings))


def null_distribution(table, statistic: str = "trend", row_scores=None, col_scores=None):
    """The whole exact null distribution of a statistic: (values, probabilities), sorted.

    No pruning, so it costs more than `run`; meant for pictures and checks on small tables.
    """
    t, u, v, _, _ = _shape(table, row_scores, col_scores,
                           keep_order=statistic in ORDERED_STATISTICS)
    if min(t.shape) < 2:
        raise ValueError("a table with one row or one column has a single arrangement")
    prep = prepare(t, statistic, "two-sided", u, v, stages=t.size)
    res = forward(cached_layout(tuple(t.sum(axis=1)), tuple(t.sum(axis=0))), prep.cell, None,
                  prep.quantum)
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
