"""The network algorithm for r x c tables with both margins fixed.

A table is built one cell at a time, column by column, top row to bottom row; the last row's
cell of a column is forced (the column's remainder), so it is placed together with the cell
above it and a column takes r - 1 stages. The state between stages is the vector of row
margins still to fill, coded as one integer in mixed radix
(digit i runs over 0..R_i). Only the states that can really occur are kept: `reach[s]` holds,
sorted, the codes of the states met before cell s (found by a forward sweep over the moves; a
state is on some path from the start to the end), and every per-state array is aligned with it.
`states.state_counts` gives the same numbers before anything is built.

A move places x in cell (i, j) with the conditional (hypergeometric) probability

    comb(r_i, x) comb(below, left - x) / comb(r_i + below, left),

where `left` is what column j still needs and `below` is what the rows under i can still take.
The moves out of a state sum to 1, and the product along a path is the table's probability
prod R_i! prod C_j! / (N! prod n_ij!), so no mass is lost or invented on the way.

The statistic is additive over cells, S = sum g_ij(n_ij), or more generally over moves: a
move's gain may depend on the state it leaves (`gains`), which is how Kendall's S on a table
is carried. Each state carries a list of (partial sum, probability mass) pairs; pairs with equal
partial sums are merged. Before each move the exact range of the remaining sum (the longest and
shortest path to the end, found by a backward pass) settles whole pairs: if every completion is
extreme the mass joins the p-value, if none is, the mass is set aside; only undecided pairs go
on.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from ...lazy import gammaln

from ..core.limits import memory_budget
from ..core.progress import NO_PROGRESS, Progress

# Most (state, partial sum) pairs one step may create; beyond it the exact network gives way.
MAX_ENTRIES = 40_000_000
# Bytes one pair of a step holds at the peak: its state, sum and mass, the move it came by and
# the merge's scratch (tracemalloc over Fisher's and Pearson's tables: 65-83, more where the
# layout's states weigh).
ENTRY_BYTES = 80
# Most states one stage may hold when the network is laid out.
MAX_STAGE_STATES = 20_000_000
# Mixed-radix codes must fit in a signed 64-bit integer.
MAX_CODE = 2 ** 62


class NetworkTooLarge(MemoryError):
    """The exact network would need more memory than it is allowed."""


def entry_limit() -> int:
    """Most pairs one step may create: MAX_ENTRIES, or fewer when the statement's memory
    budget (`set memory`) holds fewer."""
    return int(min(MAX_ENTRIES, memory_budget() / ENTRY_BYTES))


def too_many(total: int, limit: int, what: str = "pairs at one step") -> NetworkTooLarge:
    """The error for a pass that would outgrow its limit, naming the budget when it binds."""
    words = f"the network would carry {total:,} {what}"
    if limit < MAX_ENTRIES and limit == int(memory_budget() / ENTRY_BYTES):
        words += f", past the memory budget of {memory_budget() / 1e9:g} GB ('set memory')"
    return NetworkTooLarge(words)


@dataclass(frozen=True)
class Layout:
    """Shape of the network: margins, mixed-radix coding and the states met at each stage."""

    rows: tuple            # row margins R_i (all > 0)
    cols: tuple            # column margins C_j (all > 0), in processing order
    radix: np.ndarray      # radix[i] = prod_{k < i} (R_k + 1)
    after: tuple           # after[j] = sum of C_k for k > j
    reach: tuple = ()      # reach[s]: sorted codes of the states that occur before stage s
    fold: bool = True      # the last row's forced cell goes with the cell above it
    tables: float = 0.0    # number of tables with these margins (paths through the network)
    moves: int = 0         # moves over all stages

    @property
    def per_column(self) -> int:
        return len(self.rows) - 1 if self.fold else len(self.rows)

    @property
    def stages(self) -> int:
        return self.per_column * len(self.cols)

    @property
    def states(self) -> int:
        """States over all stages (the size of every per-state array together)."""
        return int(sum(r.size for r in self.reach))

    def cell_of(self, stage: int) -> tuple:
        """(row, column) of the cell a stage chooses."""
        return stage % self.per_column, stage // self.per_column

    def folds(self, stage: int) -> bool:
        """Whether the stage also places the forced last cell of its column."""
        return self.fold and stage % self.per_column == self.per_column - 1

    def start_code(self) -> int:
        return int(np.dot(self.rows, self.radix))

    def position(self, stage: int, codes) -> np.ndarray:
        """Index of each code in reach[stage] (the codes must occur there)."""
        return np.searchsorted(self.reach[stage], codes)

    def digits(self, codes) -> np.ndarray:
        """(len(codes), r): the remaining row margins of each state."""
        codes = np.asarray(codes, np.int64)
        base = np.asarray([v + 1 for v in self.rows], np.int64)
        return (codes[:, None] // self.radix[None, :]) % base[None, :]


def dense_size(rows) -> float:
    """Number of mixed-radix codes (every vector 0 <= r <= R), reachable or not."""
    return float(np.prod([float(v) + 1.0 for v in rows]))


def make_layout(rows, cols, max_stage_states: int = MAX_STAGE_STATES, fold: bool = True) -> Layout:
    """The network for these margins, with its number of tables (paths counted on the way);
    `fold=False` gives every cell its own stage."""
    rows = tuple(int(v) for v in rows)
    cols = tuple(int(v) for v in cols)
    if dense_size(rows) >= MAX_CODE:
        raise NetworkTooLarge("the row margins are too many and too large to code the states")
    radix = np.cumprod([1] + [v + 1 for v in rows[:-1]]).astype(np.int64)
    after = tuple(int(sum(cols[j + 1:])) for j in range(len(cols)))
    layout = Layout(rows, cols, radix, after, fold=fold)
    reach = [np.array([layout.start_code()], np.int64)]
    paths, total_moves = np.ones(1), 0
    for stage in range(layout.stages):
        st = step(layout, stage, reach[-1])
        total_moves += st.x.size
        nxt, at = sorted_unique(st.nxt)
        if nxt.size > max_stage_states:
            raise NetworkTooLarge(f"the network would hold {nxt.size:,} states at one stage")
        paths = np.bincount(at.ravel(), weights=paths[st.rep], minlength=nxt.size)
        reach.append(nxt)
    return replace(layout, reach=tuple(reach), tables=float(paths[0]), moves=total_moves)


def sorted_unique(codes):
    """(sorted distinct codes, index of each code among them): through a dense mark over the
    codes' range when it is not much wider than their number, else by sorting."""
    if codes.size == 0:
        return codes, codes
    low, high = int(codes.min()), int(codes.max())
    span = high - low + 1
    if span > max(8 * codes.size, 1 << 20):
        out, inverse = np.unique(codes, return_inverse=True)
        return out, inverse.ravel()
    mark = np.zeros(span, bool)
    mark[codes - low] = True
    out = np.flatnonzero(mark)
    index = np.cumsum(mark, dtype=np.int64) - 1
    return out + low, index[codes - low]


@dataclass(frozen=True)
class Step:
    """The moves out of some states at one stage, one entry a move (sources: `codes`)."""

    codes: np.ndarray      # the states left, one each
    rep: np.ndarray        # for each move, the index of its source in `codes`
    x: np.ndarray          # what the move places in the stage's cell
    nxt: np.ndarray        # the state it reaches
    logw: np.ndarray       # its log conditional probability (None unless asked for)
    digits: np.ndarray     # (len(codes), r): remaining row margins of each source
    left: np.ndarray       # what the stage's column still needs, per source


def step(layout: Layout, stage: int, codes, lf=None) -> Step:
    """Every move out of the given states at `stage` (log weights when `lf`, the table of log
    factorials, is given)."""
    i, j = layout.cell_of(stage)
    codes = np.asarray(codes, np.int64)
    d = layout.digits(codes)
    digit = d[:, i]
    below = d[:, i + 1:].sum(axis=1)
    left = d.sum(axis=1) - layout.after[j]
    lo = np.maximum(0, left - below)
    hi = np.where((left >= 0) & (left <= layout.cols[j]), np.minimum(digit, left), -1)
    cnt = np.maximum(hi - lo + 1, 0)
    total = int(cnt.sum())
    limit = entry_limit()
    if total > limit:
        raise too_many(total, limit)
    rep = np.repeat(np.arange(codes.size), cnt)
    x = np.arange(total) - np.repeat(np.cumsum(cnt) - cnt - lo, cnt)
    nxt = codes[rep] - x * layout.radix[i]
    if layout.folds(stage):
        nxt -= (left[rep] - x) * layout.radix[i + 1]
    logw = None
    if lf is not None:
        dr, b, k = digit[rep], below[rep], left[rep]
        logw = (lf[dr] - lf[x] - lf[dr - x] + lf[b] - lf[k - x] - lf[b - k + x]
                - (lf[dr + b] - lf[k] - lf[dr + b - k]))
    return Step(codes, rep, x, nxt, logw, d, left)


def moves(layout, stage, codes, lf=None):
    """Every move out of the given states: (index of the source, x, next code, log weight)."""
    st = step(layout, stage, codes, lf)
    return st.rep, st.x, st.nxt, st.logw


def run_starts(rep) -> np.ndarray:
    """Where each source's run of consecutive moves starts."""
    return np.flatnonzero(np.r_[True, rep[1:] != rep[:-1]])


def gains(layout: Layout, cell, stage: int, st: Step) -> np.ndarray:
    """What each move adds to S: `cell[i, j, x]` (and the forced last cell's value) for a fixed
    table of cell values, or `cell.gain(layout, stage, st)` when the gain depends on the state
    the move leaves."""
    if not isinstance(cell, np.ndarray):
        return cell.gain(layout, stage, st)
    i, j = layout.cell_of(stage)
    g = cell[i, j, st.x]
    if layout.folds(stage):
        g = g + cell[i + 1, j, st.left[st.rep] - st.x]
    return g


def count_tables(layout: Layout) -> float:
    """Number of tables with these margins (one path through the network each)."""
    return layout.tables


@dataclass(frozen=True)
class Bounds:
    """Per stage, aligned with `layout.reach[stage]`: the longest and shortest remaining sum,
    and the number of ways to complete the table."""

    hi: list
    lo: list
    ways: list


def path_bounds(layout: Layout, cell) -> Bounds:
    """Longest and shortest remaining sum (and completions) from every state at every stage."""
    stages = layout.stages
    hi_b, lo_b, ways = [None] * (stages + 1), [None] * (stages + 1), [None] * (stages + 1)
    hi_b[stages] = lo_b[stages] = np.zeros(1)
    ways[stages] = np.ones(1)
    for stage in range(stages - 1, -1, -1):
        st = step(layout, stage, layout.reach[stage])
        starts = run_starts(st.rep)
        g = gains(layout, cell, stage, st)
        at = layout.position(stage + 1, st.nxt)
        hi_b[stage] = np.maximum.reduceat(g + hi_b[stage + 1][at], starts)
        lo_b[stage] = np.minimum.reduceat(g + lo_b[stage + 1][at], starts)
        ways[stage] = np.add.reduceat(ways[stage + 1][at], starts)
    return Bounds(hi_b, lo_b, ways)


@dataclass
class Pass:
    """What a forward pass found: extreme mass, settled-not-extreme mass, work done."""

    extreme: float = 0.0
    ordinary: float = 0.0
    entries: int = 0          # (state, partial sum) pairs carried, summed over stages
    support: np.ndarray = None   # full distribution of S (only when no region is given)
    probs: np.ndarray = None


def _expand(layout, stage, at, vals, mass, cell, lf):
    """All moves out of the given pairs (`at`: their states' indices in reach[stage], sorted):
    the moves of each distinct state are worked out once, then every pair takes them."""
    first = np.flatnonzero(np.r_[True, at[1:] != at[:-1]])
    st = step(layout, stage, layout.reach[stage][at[first]], lf)
    g = gains(layout, cell, stage, st)
    w = np.exp(st.logw)
    nxt = layout.position(stage + 1, st.nxt)
    starts = run_starts(st.rep)
    cnt = np.diff(np.r_[starts, st.rep.size])
    which = np.repeat(np.arange(first.size), np.diff(np.r_[first, at.size]))
    per = cnt[which]
    total = int(per.sum())
    limit = entry_limit()
    if total > limit:
        raise too_many(total, limit)
    rep = np.repeat(np.arange(at.size), per)
    move = np.arange(total) + np.repeat(starts[which] - (np.cumsum(per) - per), per)
    return nxt[move], vals[rep] + g[move], mass[rep] * w[move]


def merge(codes, vals, mass, quantum):
    """Merge pairs with the same state and the same partial sum (on a grid of `quantum`)."""
    if codes.size == 0:
        return codes, vals, mass
    keys = vals if quantum is None else np.rint(vals / quantum).astype(np.int64)
    order = _order(codes, keys)
    codes, keys, mass = codes[order], keys[order], mass[order]
    first = np.ones(codes.size, bool)
    first[1:] = (codes[1:] != codes[:-1]) | (keys[1:] != keys[:-1])
    start = np.nonzero(first)[0]
    mass = np.add.reduceat(mass, start)
    keys = keys[start]
    vals = keys if quantum is None else keys * quantum
    return codes[start], vals, mass


def _order(codes, keys):
    """Order by (code, key). When the two and the entry's index fit in 63 bits, one sort of
    packed integers (much faster than an argsort); else one argsort of a combined key; else a
    lexical sort."""
    low = int(keys.min())
    span = int(keys.max()) - low + 1
    top = span * (int(codes.max()) + 1)
    bits = max(int(codes.size - 1).bit_length(), 1)
    if top < 2 ** (63 - bits):
        packed = ((codes * span + (keys - low)) << bits) | np.arange(codes.size, dtype=np.int64)
        packed.sort()
        return packed & ((1 << bits) - 1)
    if top < 2 ** 62:
        return np.argsort(codes * span + (keys - low), kind="stable")
    return np.lexsort((keys, codes))


def log_factorials(layout: Layout) -> np.ndarray:
    return gammaln(np.arange(int(sum(layout.rows)) + 2, dtype=float) + 1.0)


def forward(layout: Layout, cell, region, quantum=None, bounds=None,
            progress: Progress = NO_PROGRESS, turn=None) -> Pass:
    """Sum the probability of tables whose S lies in the region.

    `region` is (lo, hi): S is extreme when S <= lo or S >= hi; None asks for the whole null
    distribution of S instead (no pruning). `quantum` is the merging grid for real-valued
    sums (None: S is an integer, merged exactly). `turn(stage, codes, vals, mass)`, called at
    column boundaries, may settle all remaining pairs at once and return (extreme, ordinary).
    """
    lf = log_factorials(layout)
    dtype = np.int64 if quantum is None else float
    at = np.zeros(1, np.int64)                 # the pairs' states, as indices in reach[stage]
    vals = np.zeros(1, dtype)
    mass = np.ones(1)
    out = Pass()
    if region is not None and bounds is None:
        bounds = path_bounds(layout, cell)
    for stage in range(layout.stages + 1):
        progress.step(stage / (layout.stages + 1), "network")
        if region is not None:
            at, vals, mass = _settle(out, stage, at, vals, mass, region, bounds)
        out.entries += int(at.size)
        if stage == layout.stages or at.size == 0 and region is not None:
            break
        if turn is not None and stage % layout.per_column == 0 and stage > 0:
            settled = turn(stage, layout.reach[stage][at], vals, mass)
            if settled is not None:
                out.extreme += settled[0]
                out.ordinary += settled[1]
                break
        at, vals, mass = _expand(layout, stage, at, vals, mass, cell, lf)
        at, vals, mass = merge(at, vals, mass, quantum)
    if region is None:
        out.support, out.probs = vals.astype(float), mass
    return out


def _settle(out: Pass, stage, at, vals, mass, region, bounds):
    lo_thr, hi_thr = region
    top = vals + bounds.hi[stage][at]
    bottom = vals + bounds.lo[stage][at]
    extreme = (bottom >= hi_thr) | (top <= lo_thr)
    ordinary = (top < hi_thr) & (bottom > lo_thr)
    out.extreme += float(mass[extreme].sum())
    out.ordinary += float(mass[ordinary].sum())
    keep = ~(extreme | ordinary)
    return at[keep], vals[keep], mass[keep]
