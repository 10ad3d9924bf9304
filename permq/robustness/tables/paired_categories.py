"""The count check for paired categories: k x k tables of two outcomes on each unit.

Schemes (each draws the design's N units):

- independent units: each unit's pair of outcomes from the cell chances, symmetric under the
  null (p_ij = p_ji = (n_ij + n_ji) / 2N, the observed table made symmetric), the observed
  chances at the effect;
- the agreements fixed: the diagonal as observed, the other units over the off-diagonal
  cells, so the number of units that changed is the observed one;
- clustered units: units in clusters of 3 sharing one vector of cell chances (Dirichlet around
  the null's, intraclass correlation 0.2): the swaps are no longer independent, so the exact
  test is not exact there;
- for marginal homogeneity, changes that go round a cycle (1 to 2 to 3 ... to 1 more often
  than back) with the margins still equal: the null of marginal homogeneity holds but the
  changes are not symmetric, and the swaps the exact test makes are not its law there (for
  symmetry such tables are the alternative, so the scheme is left out).

Both tests run on every simulated table: the exact test's law given the table's pair totals
m_ij = n_ij + n_ji (engine/tables/symmetry.null_law, once for each set of pair totals; Monte
Carlo swaps where the dynamic programme is too large), and the chi-square beside it
(Stuart-Maxwell or Bowker) on each table.
"""
from __future__ import annotations

import numpy as np

from ...engine.core.pvalues import RTOL
from ...errors import BindError
from ...lazy import module
from .schemes import CLUSTER_SIZE, ICC, Scheme, concentration, dirichlet_counts

symmetry = module("permq.engine.tables.symmetry")

CYCLE = 0.5              # share of the off-diagonal chance moved round the cycle
MC_SWAPS = 999


def _null_cells(t: np.ndarray) -> np.ndarray:
    p = (t + t.T) / (2.0 * t.sum())
    return p


def _cyclic(p: np.ndarray) -> np.ndarray:
    """p with the same chance moved onto each step i -> i + 1 of the cycle from its reverse:
    row i gains s at (i, i + 1) and loses s at (i, i - 1), column i the reverse, so every
    margin stays as it was while the changes are no longer symmetric."""
    k = p.shape[0]
    edges = [(i, (i + 1) % k) for i in range(k)]
    step = CYCLE * min(min(p[i, j], p[j, i]) for i, j in edges)
    c = np.zeros_like(p)
    for i, j in edges:
        c[i, j] += step
        c[j, i] -= step
    return p + c


def panel(t, statistic: str, effect_cells=None):
    t = np.asarray(t, np.int64)
    n, k = int(t.sum()), t.shape[0]
    p0 = _null_cells(t)
    p1 = t / n if effect_cells is None else effect_cells
    kappa = concentration(ICC)
    diag = np.diag(t).copy()
    off = ~np.eye(k, dtype=bool)
    changed = int(n - diag.sum())

    def independent(p):
        return lambda rng, size: rng.multinomial(n, p.ravel(), size=size).reshape(size, k, k)

    def agreements_fixed(p):
        q = np.where(off, p, 0.0)
        q = q / q.sum() if q.sum() > 0 else q

        def draw(rng, size):
            out = np.zeros((size, k, k), np.int64)
            out[:, np.arange(k), np.arange(k)] = diag
            if changed:
                out[:, off] = rng.multinomial(changed, q[off], size=size)
            return out
        return draw

    def clustered(p):
        return lambda rng, size: dirichlet_counts(rng, size, n, p.ravel(), CLUSTER_SIZE,
                                                  kappa).reshape(size, k, k)

    out = [
        Scheme("independent-units", "independent units",
               f"{n} units, each pair of outcomes from the cell chances (the table made "
               "symmetric under the null)", independent(p0), independent(p1)),
        Scheme("agreements-fixed", "agreements fixed",
               f"{int(diag.sum())} units with the same outcome twice as observed, the other "
               f"{changed} over the cells of a change", agreements_fixed(p0),
               agreements_fixed(p1)),
        Scheme("clustered-units", "clustered units",
               f"units in clusters of {CLUSTER_SIZE} sharing one vector of cell chances "
               f"(Dirichlet around the null's, intraclass correlation {ICC:g})",
               clustered(p0), clustered(p1),
               not_exact="units of a cluster share their chances, so the swaps of their "
                         "outcomes are not independent"),
    ]
    if statistic == "marginal-homogeneity" and k >= 3:
        out.append(Scheme(
            "cyclic-changes", "cyclic changes",
            "changes round a cycle (each category to the next more often than back), the "
            "margins equal", independent(_cyclic(p0)), independent(p1),
            not_exact="the margins agree but the changes are not symmetric, so a unit's two "
                      "outcomes are not in either order with chance 1/2"))
    return out


def _statistic(design) -> str:
    from ..spec import check_for

    return check_for(design).statistic


def tests_for(design):
    return PairedCategoryTests(design, _statistic(design))


def effect_for(design, shift):
    from .check import Effect

    statistic = _statistic(design)
    if shift is not None:
        raise BindError("'shift' has no one-number meaning for paired categories: the power "
                        "is at the observed table", hint="drop 'shift'")
    t = np.asarray(design.table, np.int64)
    if t.sum() == 0:
        raise BindError("the table holds no counts, so there is nothing to simulate")
    words = "the observed table's cell chances (" + "; ".join(
        f"{lab} " + " / ".join(f"{v:.3g}" for v in row)
        for lab, row in zip(design.row_labels, t / t.sum())) + ")"
    null = bool(np.array_equal(t, t.T)) if statistic == "symmetry" else bool(
        np.array_equal(t.sum(axis=0), t.sum(axis=1)))
    return Effect(tuple(panel(t, statistic)), float("nan"), words, null)


class PairedCategoryTests:
    """Both tests of paired categories on stacks of simulated k x k tables."""

    def __init__(self, design, statistic: str):
        self.design = design
        self.statistic = statistic
        self.exact = True
        self.arrangements = 0
        self._cache: dict = {}
        self.sampled = False

    def choose(self, keys, scale: float = 1.0) -> None:
        return None

    def reference_words(self) -> str:
        words = ("exact for every simulated table: the law over the swaps of each changed "
                 "unit's two outcomes, once for each set of pair totals")
        return words + ("; Monte Carlo swaps where that law is too large" if self.sampled else "")

    def normal_p(self, tables) -> np.ndarray:
        from ...lazy import stats

        out = np.ones(len(tables))
        for i, t in enumerate(np.asarray(tables, np.int64)):
            if self.statistic == "symmetry":
                df = len(symmetry.pairs(t))
                value = symmetry.bowker(t)
            else:
                value, df = symmetry.stuart_maxwell(t)
            if df >= 1:
                out[i] = float(stats.chi2.sf(value, df))
        return out

    def exact_p(self, tables, rng=None) -> np.ndarray:
        tables = np.asarray(tables, np.int64)
        out = np.ones(len(tables))
        for i, t in enumerate(tables):
            if not symmetry.pairs(t):
                continue                      # no unit changed: p = 1
            observed = symmetry.statistic(self.statistic, t)
            tol = RTOL * max(1.0, abs(observed), float(t.sum()))
            key = (t + t.T).tobytes()
            law = self._cache.get(key)
            if law is None and symmetry.law_states(self.statistic, t) <= symmetry.STATE_LIMIT:
                values, probs = symmetry.null_law(self.statistic, t)
                order = np.argsort(values)
                values, probs = values[order], probs[order]
                tails = np.cumsum(probs[::-1])[::-1] / probs.sum()
                law = self._cache[key] = (values, tails)
            if law is not None:
                values, tails = law
                j = int(np.searchsorted(values, observed - tol))
                out[i] = tails[j] if j < len(values) else 0.0
                continue
            self.sampled = True
            out[i] = _swapped_p(self.statistic, t, observed, tol, rng)
        return out


def _swapped_p(statistic, t, observed, tol, rng) -> float:
    """Monte Carlo over the swaps: (b + 1) / (MC_SWAPS + 1)."""
    ps = symmetry.pairs(t)
    ms = np.array([m for *_, m in ps])
    x = rng.binomial(ms[None, :].repeat(MC_SWAPS, 0), 0.5)
    base = t.copy()
    hits = 0
    for row in x:
        for (i, j, _, m), v in zip(ps, row):
            base[i, j], base[j, i] = v, m - v
        hits += symmetry.statistic(statistic, base) >= observed - tol
    return (hits + 1) / (MC_SWAPS + 1)
