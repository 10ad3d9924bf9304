"""Both tests of a count design on many simulated tables at once: (m, r, c) stacks of counts.

The exact side is the product's own exact test of every table, the p-value its analysis would
give, with the work shared between tables that share their margins:

- 2 x 2, Fisher: the hypergeometric tails of `engine.tables_2x2` (`support`, `tail_p`), once
  for each set of margins, for every top-left count at once;
- r x c (and 2 x 2 with another statistic): the whole null distribution of the engine's cell
  sum S (`engine.tables_network.forward` without a region), once for each set of margins; each
  table's p is read off it with the extreme region the engine sets for that table
  (`tables_stats.prepare`), after the engine's own clean-up (`reduce_table`: empty rows and
  columns left out; one row or column left: p = 1). When the simulated tables have so many
  different margins that listing a distribution for each would take longer than sampling
  (`choose`, from the tables themselves, so the choice is the same on any machine), each table
  is tested instead against DRAWS random tables with its own margins (Patefield's algorithm, as
  the engine's Monte Carlo), p = (b + 1) / (m + 1), the tables of one block with the same
  margins sharing their draws;
- paired: McNemar's exact binomial test (`engine.tables_paired.run`), once for each (b, c);
- one proportion: the exact binomial test (`engine.tables_proportion.binomial_p`), once for
  each count.

The normal side is the analysis's own counterpart, the formulas of `permq.normal.tables`
vectorised: Pearson's X^2 and the likelihood-ratio G^2 on (r' - 1)(c' - 1) df over the
non-empty rows and columns, the linear-by-linear M^2 (z for one side), Wald's z for the log
odds ratio (0.5 added to every cell of a table with a zero), McNemar's chi-square without
correction, and the z of one proportion.
"""
from __future__ import annotations

import numpy as np
from ...lazy import stats
from ...lazy import xlogy

from ...engine.tables import (
    twobytwo as tables_2x2, paired as tables_paired, proportion as tables_proportion)
from ...engine.core.pvalues import clip, tolerance
from ...engine.tables.rxc import LAYOUT_STATES, cached_layout, orient, reduce_table
from ...engine.tables.network import count_tables, forward, make_layout
from ...engine.tables.stats import prepare
from ..counterparts import z_tails

DRAWS = 999
# Choosing between the two ways for r x c (seconds on this class of machine, measured): one
# null distribution costs about DIST_BASE + DIST_PER_TABLE x (tables with its margins); one
# margin set's DRAWS random tables and their statistics about MC_PER_SET. The exact way is
# taken when it costs at most EXACT_BUDGET seconds, or no more than sampling would, and the
# observed margins allow at most EXACT_TABLES tables.
DIST_BASE, DIST_PER_TABLE, MC_PER_SET = 1.0e-3, 3.0e-7, 0.65e-3
EXACT_BUDGET = 4.0
EXACT_TABLES = 200_000
# Memoised p-values and null distributions are dropped past these sizes (they are pure
# functions of the table, so this changes no number, only memory).
CACHE_ENTRIES = 500_000
CACHE_SUPPORT = 20_000_000


def margin_keys(tables) -> np.ndarray:
    """Row and column totals of each table of a stack, side by side."""
    t = np.asarray(tables)
    return np.concatenate([t.sum(axis=2), t.sum(axis=1)], axis=1)


def _tables_with_margins(table) -> float:
    """Tables with the observed margins (inf when the network could not even hold them)."""
    red, u, v, _ = reduce_table(table)
    if min(red.shape) < 2:
        return 1.0
    red, _, _, counts = orient(red, u, v)
    if counts.sum() > LAYOUT_STATES:
        return float("inf")
    return count_tables(cached_layout(tuple(red.sum(axis=1)), tuple(red.sum(axis=0))))


# ---------------------------------------------------------------- normal theory, vectorised

def _margins(t):
    rows, cols = t.sum(axis=2), t.sum(axis=1)
    n = rows.sum(axis=1)
    expected = rows[:, :, None] * cols[:, None, :] / n[:, None, None]
    df = ((rows > 0).sum(axis=1) - 1) * ((cols > 0).sum(axis=1) - 1)
    return expected, df


def pearson_p(tables) -> np.ndarray:
    t = np.asarray(tables, float)
    e, df = _margins(t)
    with np.errstate(divide="ignore", invalid="ignore"):
        x2 = np.where(e > 0, (t - e) ** 2 / e, 0.0).sum(axis=(1, 2))
    return np.where(df > 0, stats.chi2.sf(x2, np.maximum(df, 1)), np.nan)   # undefined: no rejection


def likelihood_ratio_p(tables) -> np.ndarray:
    t = np.asarray(tables, float)
    e, df = _margins(t)
    g2 = np.maximum(2.0 * (xlogy(t, t) - xlogy(t, e)).sum(axis=(1, 2)), 0.0)
    return np.where(df > 0, stats.chi2.sf(g2, np.maximum(df, 1)), np.nan)


def trend_p(tables, alternative) -> np.ndarray:
    t = np.asarray(tables, float)
    u = np.arange(1, t.shape[1] + 1.0)
    v = np.arange(1, t.shape[2] + 1.0)
    rows, cols = t.sum(axis=2), t.sum(axis=1)
    n = rows.sum(axis=1)
    du = u[None, :] - (rows @ u / n)[:, None]
    dv = v[None, :] - (cols @ v / n)[:, None]
    suu, svv = (rows * du ** 2).sum(axis=1), (cols * dv ** 2).sum(axis=1)
    suv = np.einsum("mi,mij,mj->m", du, t, dv)
    ok = (suu > 0) & (svv > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(ok, suv / np.sqrt(suu * svv), 0.0)
    m2 = (n - 1.0) * r * r
    if alternative == "two-sided":
        p = stats.chi2.sf(m2, 1)
    else:
        p = z_tails(np.sign(r) * np.sqrt(m2), alternative)
    return np.where(ok, p, np.nan)


def log_odds_ratio_p(tables, alternative) -> np.ndarray:
    t = np.asarray(tables, float).reshape(-1, 4)
    t = np.where((t == 0).any(axis=1, keepdims=True), t + 0.5, t)
    z = np.log(t[:, 0] * t[:, 3] / (t[:, 1] * t[:, 2])) / np.sqrt((1.0 / t).sum(axis=1))
    return z_tails(z, alternative)


def mcnemar_p(tables, alternative) -> np.ndarray:
    t = np.asarray(tables, float)
    b, c = t[:, 0, 1], t[:, 1, 0]
    m = b + c
    with np.errstate(divide="ignore", invalid="ignore"):
        x2 = np.where(m > 0, (b - c) ** 2 / m, 0.0)
    if alternative == "two-sided":
        p = stats.chi2.sf(x2, 1)
    else:
        p = z_tails(np.sign(b - c) * np.sqrt(x2), alternative)
    return np.where(m > 0, p, np.nan)


def one_proportion_p(tables, p0, alternative) -> np.ndarray:
    t = np.asarray(tables, float).reshape(-1, 2)
    n = t.sum(axis=1)
    z = (t[:, 0] / n - p0) / np.sqrt(p0 * (1.0 - p0) / n)
    return z_tails(z, alternative)


# ---------------------------------------------------------------- the two tests

class CountTests:
    """The design's exact test and its normal-theory counterpart, for stacks of tables."""

    def __init__(self, design, draws: int = DRAWS):
        from ..spec import check_for

        count_check = check_for(design)
        self.route = count_check.route
        self.design = design
        self.statistic, self.alternative = count_check.statistic, design.settings.alternative
        self.draws = draws
        self._cache: dict = {}
        self._dists: dict = {}
        self._support = 0
        self.exact = True
        self.margin_sets = 0
        t = design.table
        if self.route == "rxc":
            self.observed_tables = _tables_with_margins(t)
        elif self.route == "2x2":
            self.observed_tables = float(tables_2x2.support(t)[0].size)
        elif self.route == "paired":
            self.observed_tables = float(sum(tables_paired.discordant(t)) + 1)
        else:
            self.observed_tables = float(t.sum() + 1)

    def choose(self, keys, scale: float = 1.0) -> None:
        """Exact or Monte Carlo for r x c, from the margins of the tables to be tested: `keys`
        holds one array of margins (`margin_keys`) a block of data sets, for the first blocks
        of every scheme, which stand for `scale` times as many; the same tables give the same
        choice on any machine."""
        if self.route != "rxc":
            return
        sets = len(np.unique(np.concatenate(keys), axis=0)) if keys else 0
        groups = sum(len(np.unique(k, axis=0)) for k in keys)
        self.margin_sets = sets
        exact_cost = scale * sets * (DIST_BASE + DIST_PER_TABLE * self.observed_tables)
        self.exact = bool(self.observed_tables <= EXACT_TABLES
                          and exact_cost <= max(EXACT_BUDGET, scale * groups * MC_PER_SET))

    # ------------------------------------------------ words

    def reference_words(self) -> str:
        n_obs = (f"{self.observed_tables:,.0f} tables" if np.isfinite(self.observed_tables)
                 else "more tables than can be counted")
        if self.route == "2x2":
            return ("exact for every simulated table: Fisher's hypergeometric tails, once for "
                    f"each set of margins (the observed margins allow {n_obs})")
        if self.route == "paired":
            return ("exact for every simulated table: McNemar's binomial law of its discordant "
                    "pairs, once for each (b, c)")
        if self.route == "proportion":
            return ("exact for every simulated table: the binomial tails at the null value, "
                    "once for each count")
        if self.exact:
            return ("exact for every simulated table: the network's null distribution of the "
                    "statistic, once for each set of margins (the observed margins allow "
                    f"{n_obs})")
        return (f"Monte Carlo for every simulated table: {self.draws:,} random tables with its "
                "own margins (Patefield's algorithm), p = (b + 1) / (m + 1); the simulated "
                f"tables met {self.margin_sets:,} different margins (the observed ones allow "
                f"{n_obs}), too many to list each one's null distribution")

    @property
    def arrangements(self) -> int:
        return int(self.observed_tables) if self.exact else self.draws

    # ------------------------------------------------ normal theory

    def normal_p(self, tables) -> np.ndarray:
        tables = np.asarray(tables)
        if self.route == "proportion":
            return one_proportion_p(tables, self.design.reference, self.alternative)
        if self.route == "paired":
            return mcnemar_p(tables, self.alternative)
        if self.route == "2x2":
            return log_odds_ratio_p(tables, self.alternative)
        if self.statistic == "trend":
            return trend_p(tables, self.alternative)
        if self.statistic == "likelihood-ratio":
            return likelihood_ratio_p(tables)
        return pearson_p(tables)

    # ------------------------------------------------ exact

    def exact_p(self, tables, rng=None) -> np.ndarray:
        tables = np.asarray(tables, np.int64)
        if self.route == "proportion":
            return self._proportion(tables)
        if self.route == "paired":
            b, c = tables[:, 0, 1], tables[:, 1, 0]
            return self._by_key(np.stack([b, c], axis=1), self._mcnemar_one)
        if self.route == "2x2":
            return self._fisher_2x2(tables)
        if self.exact:
            flat = tables.reshape(len(tables), -1)
            return self._by_key(flat, lambda key: self._rxc_one(key.reshape(tables.shape[1:])))
        return self._rxc_sampled(tables, rng)

    def _by_key(self, keys, compute) -> np.ndarray:
        """compute(key) once for every distinct row of keys (cached across calls)."""
        uniq, inverse = np.unique(keys, axis=0, return_inverse=True)
        values = np.empty(len(uniq))
        if len(self._cache) + len(uniq) > CACHE_ENTRIES:
            self._cache.clear()
        for idx, key in enumerate(uniq):
            token = key.tobytes()
            v = self._cache.get(token)
            if v is None:
                v = compute(key)
                self._cache[token] = v
            values[idx] = v
        return values[inverse.ravel()]

    def _proportion(self, tables) -> np.ndarray:
        n = int(self.design.table.sum())
        table = self._cache.get("proportion")
        if table is None:
            table = np.array([tables_proportion.binomial_p(k, n, self.design.reference,
                                                           self.alternative)[0]
                              for k in range(n + 1)])
            self._cache["proportion"] = table
        return table[tables[:, 0, 0]]

    def _mcnemar_one(self, key) -> float:
        b, c = int(key[0]), int(key[1])
        return tables_paired.run(np.array([[0, b], [c, 0]]), "mcnemar", self.alternative).p_value

    def _fisher_2x2(self, tables) -> np.ndarray:
        t = tables.reshape(len(tables), 4)
        r1, r2, c1 = t[:, 0] + t[:, 1], t[:, 2] + t[:, 3], t[:, 0] + t[:, 2]
        keys = np.stack([r1, r2, c1], axis=1)
        uniq, inverse = np.unique(keys, axis=0, return_inverse=True)
        out = np.empty(len(t))
        inverse = inverse.ravel()
        for idx, (a, b, c) in enumerate(uniq):
            token = ("2x2", int(a), int(b), int(c))
            hit = self._cache.get(token)
            if hit is None:
                rep = np.array([[min(a, c), a - min(a, c)], [c - min(a, c), b - c + min(a, c)]])
                ks, probs = tables_2x2.support(rep)
                hit = (int(ks[0]), np.array([tables_2x2.tail_p(ks, probs, k, self.alternative)
                                             for k in ks]))
                self._cache[token] = hit
            rows = inverse == idx
            out[rows] = hit[1][t[rows, 0] - hit[0]]
        return out

    # ------------------------------------------------ r x c

    def _prepared(self, table):
        """(reduced-oriented table, scores, prepared statistic) or None when p = 1."""
        t, u, v, _ = reduce_table(table)
        if min(t.shape) < 2:
            return None
        t, u, v, _ = orient(t, u, v)
        return t, u, v, prepare(t, self.statistic, self.alternative, u, v, stages=t.size)

    def _rxc_one(self, table) -> float:
        got = self._prepared(table)
        if got is None:
            return 1.0
        t, u, v, prep = got
        if prep.everything:
            return 1.0
        support, lower, upper = self._distribution(t, u, v, prep)
        lo, hi = prep.region
        below = np.searchsorted(support, lo, side="right")
        above = np.searchsorted(support, hi, side="left")
        p = (lower[below - 1] if below > 0 else 0.0) + (upper[above] if above < support.size
                                                       else 0.0)
        return clip(p)

    def _distribution(self, t, u, v, prep):
        """Sorted support of S for these margins, with its lower and upper cumulative sums."""
        key = (tuple(t.sum(axis=1)), tuple(t.sum(axis=0)), tuple(u), tuple(v))
        hit = self._dists.get(key)
        if hit is not None:
            return hit
        quantum = prep.quantum
        if self.statistic in ("chi-square", "likelihood-ratio"):     # the finest grid any table uses
            quantum = tolerance(0.0) / prep.scale / (20.0 * t.size)
        res = forward(make_layout(t.sum(axis=1), t.sum(axis=0)), prep.cell, None, quantum)
        order = np.argsort(res.support, kind="stable")
        support, probs = res.support[order], res.probs[order]
        hit = (support, np.cumsum(probs), np.cumsum(probs[::-1])[::-1])
        self._support += support.size
        if self._support > CACHE_SUPPORT:
            self._dists.clear()
            self._support = support.size
        self._dists[key] = hit
        return hit

    def _rxc_sampled(self, tables, rng) -> np.ndarray:
        """Each table against DRAWS random tables with its own margins, drawn afresh for each
        margin set of this stack (tables of one margin set share them)."""
        flat = tables.reshape(len(tables), -1)
        uniq, inverse = np.unique(flat, axis=0, return_inverse=True)
        inverse = inverse.ravel()
        p_uniq = np.ones(len(uniq))
        groups: dict = {}
        for idx, row in enumerate(uniq):
            got = self._prepared(row.reshape(tables.shape[1:]))
            if got is None or got[3].everything:
                continue
            t, u, v, prep = got
            key = (tuple(t.sum(axis=1)), tuple(t.sum(axis=0)), tuple(u), tuple(v))
            groups.setdefault(key, []).append((idx, prep))
        for key in sorted(groups):
            members = groups[key]
            rows, cols = np.array(key[0]), np.array(key[1])
            drawn = stats.random_table(rows, cols).rvs(size=self.draws, method="patefield",
                                                       random_state=rng)
            s = members[0][1].sums(np.asarray(drawn, np.int64))
            for idx, prep in members:
                b = int(np.count_nonzero(prep.extreme(s)))
                p_uniq[idx] = (b + 1) / (self.draws + 1)
        return p_uniq[inverse]
