"""Paired outcomes in k >= 3 categories: the exact conditional tests of symmetry (Bowker 1948)
and of marginal homogeneity (Stuart-Maxwell).

The table n[i, j] counts the units whose first outcome is category i and second is j. Under the
null that the two outcomes of a unit are exchangeable (their order could be swapped), each
discordant count n[i, j] (i < j) is, given m = n[i, j] + n[j, i], binomial(m, 1/2), and the
pairs (i, j) are independent: the reference set is the 2^(discordant units) ways of swapping
each discordant unit's two outcomes, all equally likely. The diagonal carries no information.

- symmetry: Bowker's B = sum_{i<j} (n_ij - n_ji)^2 / (n_ij + n_ji) (pairs with m > 0);
- marginal homogeneity: d_i = n_i. - n_.i (row minus column margins) and W = d' V^+ d with
  V the covariance of d over the reference set (V_ii = sum_j m_ij, V_ij = -m_ij), the
  Stuart-Maxwell form with the variance the null itself gives.

Both are large for any departure, so the p-value is P(T >= t). Exact: dynamic programming
over the pairs, on the value of B (merged within the tie tolerance) or on the integer vector
d, with binomial weights; or Monte Carlo draws of the binomials.
"""
from __future__ import annotations

from math import lgamma, log
from typing import Optional

import numpy as np

from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core.inverse import generalized_inverse
from ..core.progress import NO_PROGRESS, Progress
from ..core.pvalues import RTOL, clip, monte_carlo_p
from ..montecarlo.sampling import iter_blocks

STATISTICS = ("symmetry", "marginal-homogeneity")
NAMES = {"symmetry": "Bowker's B (symmetry)",
         "marginal-homogeneity": "Stuart-Maxwell W (marginal homogeneity)"}
ALGORITHMS = {"dp": "dynamic programming over the discordant pairs (binomial swaps)",
              "monte-carlo": "Monte Carlo draws of the swaps"}
TWO_SIDED_RULE = "the statistic is already two-sided: p = P(T >= t) under the null"
STATE_LIMIT = 4e6


def pairs(table) -> list:
    """(i, j, n_ij, m_ij) for i < j with m_ij = n_ij + n_ji > 0."""
    t = np.asarray(table, dtype=np.int64)
    k = t.shape[0]
    return [(i, j, int(t[i, j]), int(t[i, j] + t[j, i]))
            for i in range(k) for j in range(i + 1, k) if t[i, j] + t[j, i] > 0]


def bowker(table) -> float:
    return float(sum((2 * x - m) ** 2 / m for _, _, x, m in pairs(table)))


def null_covariance(table) -> np.ndarray:
    k = np.asarray(table).shape[0]
    v = np.zeros((k, k))
    for i, j, _, m in pairs(table):
        v[i, i] += m
        v[j, j] += m
        v[i, j] -= m
        v[j, i] -= m
    return v


def margin_differences(table) -> np.ndarray:
    t = np.asarray(table, dtype=float)
    return t.sum(axis=1) - t.sum(axis=0)


def stuart_maxwell(table) -> tuple[float, int]:
    """(W, its degrees of freedom: the rank of V)."""
    v = null_covariance(table)
    d = margin_differences(table)
    inv, rank = generalized_inverse(v)
    if not v.any() or rank == 0:
        return 0.0, 0
    return float(d @ inv @ d), int(rank)


def statistic(name: str, table) -> float:
    return bowker(table) if name == "symmetry" else stuart_maxwell(table)[0]


def _states(name: str, table) -> float:
    ps = pairs(table)
    if name == "symmetry":           # B's terms are symmetric in x <-> m - x
        return float(np.prod([m // 2 + 1 for *_, m in ps])) if ps else 1.0
    k = np.asarray(table).shape[0]
    spans = np.zeros(k)
    for i, j, _, m in ps:
        spans[i] += m
        spans[j] += m
    return float(np.prod(spans[:-1] + 1)) if k > 1 else 1.0


def _log_total(table) -> float:
    return sum(m for *_, m in pairs(table)) * log(2)


def _total(table) -> float:
    """2^(discordant units): the equally likely swap patterns."""
    units = sum(m for *_, m in pairs(table))
    return float(2 ** units) if units < 1000 else float("inf")


def candidates(name: str, table, draws: int) -> list[Candidate]:
    states = min(_states(name, table), 1e300)
    total = _total(table)
    k_pairs = max(1, len(pairs(table)))
    mean_m = np.mean([m for *_, m in pairs(table)]) if pairs(table) else 0.0
    ops = states * (mean_m + 1) * k_pairs * 4
    return [Candidate("dp", ALGORITHMS["dp"], True, ops, states * 32,
                      feasible=states <= STATE_LIMIT, arrangements=total,
                      note=f"about {states:.3g} states"),
            Candidate("monte-carlo", ALGORITHMS["monte-carlo"], False,
                      draws * (k_pairs * 3 + 20.0), min(draws, 8192) * k_pairs * 16,
                      arrangements=total, note=f"{draws} draws")]


def _binomial_half(m: int) -> np.ndarray:
    x = np.arange(m + 1)
    logp = np.array([lgamma(m + 1) - lgamma(v + 1) - lgamma(m - v + 1) for v in x]) - m * log(2)
    return np.exp(logp)


def _merge(values: np.ndarray, probs: np.ndarray, scale: float):
    order = np.argsort(values, kind="stable")
    v, p = values[order], probs[order]
    new = np.empty(v.size, dtype=bool)
    new[:1] = True
    new[1:] = np.diff(v) > RTOL * max(1.0, scale)
    starts = np.flatnonzero(new)
    return v[starts], np.add.reduceat(p, starts)


def _bowker_law(table, progress: Progress):
    values, probs = np.zeros(1), np.ones(1)
    ps = pairs(table)
    scale = float(sum(m for *_, m in ps)) or 1.0
    for step, (_, _, _, m) in enumerate(ps):
        x = np.arange(m + 1)
        terms = (2 * x - m) ** 2 / m
        w = _binomial_half(m)
        values, probs = _merge((values[:, None] + terms[None, :]).ravel(),
                               (probs[:, None] * w[None, :]).ravel(), scale)
        progress.step((step + 1) / len(ps), "counting")
    return values, probs


def _margin_law(table, progress: Progress):
    """The law of d (first k - 1 components; the last is minus their sum) as integer rows."""
    k = np.asarray(table).shape[0]
    states = {tuple([0] * (k - 1)): 1.0}
    ps = pairs(table)
    for step, (i, j, _, m) in enumerate(ps):
        w = _binomial_half(m)
        out: dict = {}
        for key, p in states.items():
            for x in range(m + 1):
                delta = 2 * x - m
                new = list(key)
                if i < k - 1:
                    new[i] += delta
                if j < k - 1:
                    new[j] -= delta
                t = tuple(new)
                out[t] = out.get(t, 0.0) + p * w[x]
        states = out
        progress.step((step + 1) / len(ps), "counting")
    keys = np.array(list(states), dtype=float).reshape(len(states), k - 1)
    d = np.column_stack([keys, -keys.sum(axis=1)])
    return d, np.array(list(states.values()))


def _w_of(d: np.ndarray, table) -> np.ndarray:
    vp, _ = generalized_inverse(null_covariance(table))
    return np.einsum("ni,ij,nj->n", d, vp, d)


def null_law(name: str, table, progress: Progress = NO_PROGRESS):
    """(values, probabilities) of the statistic over the swaps, by dynamic programming; it
    depends on the table only through the pair totals m_ij = n_ij + n_ji."""
    t = np.asarray(table, dtype=np.int64)
    if name == "symmetry":
        return _bowker_law(t, progress)
    d, probs = _margin_law(t, progress)
    return _merge(_w_of(d, t), probs, float(t.sum()))


def law_states(name: str, table) -> float:
    """The dynamic programme's states for this table (STATE_LIMIT bounds what is feasible)."""
    return _states(name, np.asarray(table, dtype=np.int64))


def run(name: str, table, algorithm: str, draws: Optional[int] = None,
        seed: Optional[int] = None, progress: Progress = NO_PROGRESS) -> EngineOutcome:
    t = np.asarray(table, dtype=np.int64)
    observed = statistic(name, t)
    total = _total(t)
    tol = RTOL * max(1.0, abs(observed), float(t.sum()))
    if not pairs(t):
        return EngineOutcome(NAMES[name], 0.0, 1.0, "exact", ALGORITHMS["dp"],
                             arrangements=1.0, warnings=("no discordant units: every unit "
                                                         "has the same outcome twice",))
    if algorithm == "dp":
        values, probs = null_law(name, t, progress)
        p = clip(probs[values >= observed - tol].sum() / probs.sum())
        return EngineOutcome(NAMES[name], observed, p, "exact", ALGORITHMS["dp"],
                             arrangements=total, null_support=values,
                             null_probs=probs / probs.sum())
    ps = pairs(t)
    ms = np.array([m for *_, m in ps])

    def work(size, rng):
        x = rng.binomial(ms[None, :].repeat(size, 0), 0.5)
        if name == "symmetry":
            stat = ((2 * x - ms) ** 2 / ms).sum(axis=1)
        else:
            k = t.shape[0]
            d = np.zeros((size, k))
            for col, (i, j, _, _) in enumerate(ps):
                delta = 2 * x[:, col] - ms[col]
                d[:, i] += delta
                d[:, j] -= delta
            stat = _w_of(d, t)
        return int(np.count_nonzero(stat >= observed - tol))

    b = sum(iter_blocks(seed, draws, work, progress))
    p, interval = monte_carlo_p(b, draws)
    return EngineOutcome(NAMES[name], observed, p, "monte-carlo", ALGORITHMS["monte-carlo"],
                         arrangements=total, draws=draws, p_interval=interval, seed=seed)


def marginal_proportions(table) -> tuple[np.ndarray, np.ndarray]:
    t = np.asarray(table, dtype=float)
    n = t.sum()
    return t.sum(axis=1) / n, t.sum(axis=0) / n
