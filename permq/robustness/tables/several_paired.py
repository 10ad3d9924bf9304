"""The count check for several yes/no outcomes on each unit (Cochran's Q).

The data are a units x k table of 0 / 1 (`view`). Schemes (each draws the design's units):

- independent outcomes: each unit its own chance of a yes (its observed share, moved a half
  towards 1/2), the k outcomes independent; at the effect the columns differ on the logit
  scale as the observed column proportions do;
- the units' totals fixed: each unit's number of yeses as observed, placed at random among the
  columns (the law the exact test conditions on), at the effect weighted by the columns'
  odds;
- clustered units: units in clusters of 3 sharing a random column effect (normal on the logit
  scale, sd 1): the columns are exchangeable over clusters but not within one, and units of a
  cluster are not independent, so the exact test is not exact there.

Both tests run on every simulated table: the exact law of sum_j C_j^2 (column totals) over the
placements of each unit's yeses, once for each multiset of unit totals (dynamic programming on
the vector of column totals; Monte Carlo placements past STATE_LIMIT states), and the
chi-square approximation to Cochran's Q on k - 1 df.
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np

from ...errors import BindError
from .schemes import CLUSTER_SIZE, Scheme

STATE_LIMIT = 200_000
MC_PLACEMENTS = 999
SPREAD = 1.0                    # sd of the clusters' column effects (logit scale)


@dataclass(frozen=True)
class SeveralView:
    table: np.ndarray           # units x k, 0 / 1
    row_labels: tuple
    col_labels: tuple
    settings: object
    form: str = "several-paired"
    warnings: tuple = field(default_factory=tuple)


def view(design):
    """The units x k view of a several-outcomes design (its family declares the route)."""
    from ..spec import CountCheck, check_for

    try:
        check = check_for(design)
    except Exception:                       # no check declared: the caller says why
        return None
    if not (isinstance(check, CountCheck) and check.route == "several-paired"):
        return None
    k = len(design.labels)
    y = np.asarray(design.values).reshape(-1, k).astype(np.int64)
    return SeveralView(y, tuple(design.block_labels), tuple(design.labels), design.settings,
                       warnings=tuple(design.warnings))


def _logit(p):
    p = np.clip(p, 1e-6, 1 - 1e-6)
    return np.log(p / (1 - p))


def panel(y: np.ndarray):
    y = np.asarray(y, np.int64)
    units, k = y.shape
    rows = y.sum(axis=1)
    chance = (rows + 0.5) / (k + 1.0)
    cols = (y.sum(axis=0) + 0.5) / (units + 1.0)
    beta = _logit(cols) - _logit(cols).mean()

    def independent(b):
        p = 1 / (1 + np.exp(-(_logit(chance)[:, None] + b[None, :])))
        return lambda rng, size: (rng.random((size, units, k)) < p).astype(np.int64)

    def totals_fixed(b):
        def draw(rng, size):
            keys = b[None, None, :] + rng.gumbel(size=(size, units, k))
            order = np.argsort(-keys, axis=2)
            ranks = np.argsort(order, axis=2)
            return (ranks < rows[None, :, None]).astype(np.int64)
        return draw

    def clustered(b):
        cluster = np.arange(units) // CLUSTER_SIZE

        def draw(rng, size):
            shared = rng.normal(0.0, SPREAD, (size, int(cluster.max()) + 1, k))[:, cluster, :]
            p = 1 / (1 + np.exp(-(_logit(chance)[None, :, None] + b[None, None, :] + shared)))
            return (rng.random((size, units, k)) < p).astype(np.int64)
        return draw

    zero = np.zeros(k)
    return [
        Scheme("independent-outcomes", "independent outcomes",
               f"{units} units, each its own chance of a yes, its {k} outcomes independent",
               independent(zero), independent(beta)),
        Scheme("totals-fixed", "units' totals fixed",
               "each unit's number of yeses as observed, placed at random among the columns "
               "(the law the exact test conditions on)", totals_fixed(zero), totals_fixed(beta)),
        Scheme("clustered-units", "clustered units",
               f"units in clusters of {CLUSTER_SIZE} sharing a random column effect (logit "
               f"scale, sd {SPREAD:g})", clustered(zero), clustered(beta),
               not_exact="units of a cluster share a column effect, so their outcomes are "
                         "neither independent nor exchangeable across the columns"),
    ]


def effect_for(v, shift):
    from .check import Effect

    if shift is not None:
        raise BindError("'shift' has no one-number meaning for several outcomes: the power is "
                        "at the observed column proportions", hint="drop 'shift'")
    props = v.table.mean(axis=0)
    words = ("the observed column proportions ("
             + ", ".join(f"{c} {p:.3g}" for c, p in zip(v.col_labels, props)) + ")")
    return Effect(tuple(panel(v.table)), float(np.ptp(props)), words,
                  bool(np.allclose(props, props[0])))


def tests_for(v):
    return CochranTests(v)


def _column_law(rows: tuple, k: int, full: int = 0):
    """{column totals: probability} over the uniform placements of each unit's yeses (`full`
    units with a yes in every column add one to each)."""
    states = {tuple([full] * k): 1.0}
    for r in rows:
        if r in (0, k):
            continue
        subsets = [np.bincount(c, minlength=k) for c in itertools.combinations(range(k), r)]
        w = 1.0 / len(subsets)
        out: dict = {}
        for key, p in states.items():
            base = np.array(key)
            for s in subsets:
                t = tuple(base + s)
                out[t] = out.get(t, 0.0) + p * w
        states = out
        if len(states) > STATE_LIMIT:
            return None
    return states


class CochranTests:
    """Both tests of several yes/no outcomes on stacks of simulated units x k tables."""

    def __init__(self, v):
        self.design = v
        self.exact = True
        self.arrangements = 0
        self.sampled = False
        self._cache: dict = {}

    def choose(self, keys, scale: float = 1.0) -> None:
        return None

    def reference_words(self) -> str:
        words = ("exact for every simulated table: the law of the column totals over the "
                 "placements of each unit's yeses, once for each set of unit totals")
        return words + ("; Monte Carlo placements where that law is too large"
                        if self.sampled else "")

    def normal_p(self, tables) -> np.ndarray:
        from ...families.paired_counts import cochran_q
        from ...lazy import stats

        k = np.asarray(tables).shape[2]
        q = np.array([cochran_q(t) for t in np.asarray(tables, float)])
        return stats.chi2.sf(q, k - 1)

    def exact_p(self, tables, rng=None) -> np.ndarray:
        tables = np.asarray(tables, np.int64)
        k = tables.shape[2]
        out = np.ones(len(tables))
        for i, t in enumerate(tables):
            totals = t.sum(axis=1)
            rows = tuple(sorted(int(r) for r in totals if 0 < r < k))
            if not rows:
                continue                     # no informative unit: p = 1
            full = int((totals == k).sum())
            observed = int((t.sum(axis=0) ** 2).sum())
            law = self._cache.get((rows, full))
            if law is None:
                states = _column_law(rows, k, full)
                if states is not None:
                    sq = np.array([sum(c * c for c in key) for key in states])
                    pr = np.array(list(states.values()))
                    order = np.argsort(sq)
                    sq, pr = sq[order], pr[order]
                    law = self._cache[(rows, full)] = (sq, np.cumsum(pr[::-1])[::-1] / pr.sum())
            if law is not None:
                sq, tails = law
                j = int(np.searchsorted(sq, observed))
                out[i] = tails[j] if j < len(sq) else 0.0
                continue
            self.sampled = True
            out[i] = _placements_p(t, observed, rng)
        return out


def _placements_p(t, observed: int, rng) -> float:
    """Monte Carlo: each unit's yeses placed at random, (b + 1) / (MC_PLACEMENTS + 1)."""
    units, k = t.shape
    rows = t.sum(axis=1)
    keys = rng.random((MC_PLACEMENTS, units, k))
    ranks = np.argsort(np.argsort(keys, axis=2), axis=2)
    cols = (ranks < rows[None, :, None]).sum(axis=1)
    hits = int(np.count_nonzero((cols ** 2).sum(axis=1) >= observed))
    return (hits + 1) / (MC_PLACEMENTS + 1)
