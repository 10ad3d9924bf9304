"""Exact conditional tests of a trend in binary outcomes, with the conditional logistic slope.

Units sit in strata; within a stratum they sit in groups that share a score x (a dose, a
level's rank). With y = 1 for an event, the logistic model logit P(y = 1) = a_s + b x has,
given every stratum's number of events m_s, the sufficient statistic T = sum of x over the
events, and P_b(T = t) proportional to c(t) e^{b t}, where c(t) counts the choices of m_s
event units in every stratum with score sum t (Cox 1970). So one law serves:

- the exact conditional logistic (score) test of b = 0, which is the permutation test of
  sum x y with the events fixed (the exact Cochran-Armitage trend test; stratified, Mantel's
  extension), two-sided by the linear rule P(|T - E0 T| >= |t - E0 T|);
- the conditional MLE of the slope b and its exact interval (Hirji, Mehta & Patel 1987); under
  complete separation (t at an end of its support) the median unbiased estimate, which is
  finite where the MLE is not.

Algorithms: counting on an integer grid (the scores written as origin + step * integers,
exactly for data recorded to a few decimals; a log-space dynamic programme per stratum,
convolved over strata); for scores on no grid, a dynamic programme over the distinct sums
themselves; Monte Carlo (multivariate hypergeometric draws in every stratum) for the test.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core.limits import DEFAULT_DRAWS
from ..core.progress import NO_PROGRESS, Progress
from . import conditional as cond
from .logdp import NEG, log_convolve, log_events_by_score, trim

GRID = "dynamic programming on integer scores (log-space counts, strata convolved)"
VALUES = "dynamic programming over the distinct score sums"
MC = "Monte Carlo: events redrawn within every stratum"
MAX_VALUE_STATES = 2_000_000


@dataclass(frozen=True)
class Stratum:
    """One stratum: the groups' sizes, their common scores, its events and their score sum."""

    sizes: tuple
    scores: tuple
    events: int
    observed: float

    @property
    def informative(self) -> bool:
        used = [x for x, n in zip(self.scores, self.sizes) if n > 0]
        return 0 < self.events < sum(self.sizes) and len(set(used)) > 1


def stratum(x, y) -> Stratum:
    """A stratum from unit-level scores x and 0/1 outcomes y."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    values, inverse = np.unique(x, return_inverse=True)
    sizes = np.bincount(inverse, minlength=values.size)
    return Stratum(tuple(int(v) for v in sizes), tuple(float(v) for v in values),
                   int(y.sum()), float(np.dot(x, y)))


def grouped(sizes, events, scores) -> Stratum:
    """A stratum from group sizes, events per group and the groups' scores."""
    sizes, events = np.asarray(sizes, int), np.asarray(events, int)
    return Stratum(tuple(int(v) for v in sizes), tuple(float(v) for v in scores),
                   int(events.sum()), float(np.dot(np.asarray(scores, float), events)))


def _grid(strata):
    from ..core.grid import integer_grid

    values = np.unique(np.concatenate([np.asarray(s.scores, float) for s in strata]))
    return integer_grid(values), values


def _informative(strata) -> list:
    used = [s for s in strata if s.informative]
    if not used:
        raise ValueError("no stratum has both outcomes at two or more scores")
    return used


def candidates(strata, draws: int) -> list:
    used = _informative(strata)
    grid, values = _grid(used)
    mc = Candidate("monte-carlo", MC, False, 25.0 * float(draws) * sum(len(s.sizes) for s in used),
                   8.0 * 8192 * max(len(s.sizes) for s in used))
    out = []
    if grid is not None:
        ops, mem, width = 0.0, 0.0, 1
        lookup = dict(zip(values.tolist(), grid.integers.tolist()))
        for s in used:
            q = [lookup[v] for v in s.scores]
            top = sum(sorted((qq for qq, n in zip(q, s.sizes) for _ in range(min(n, s.events))),
                             reverse=True)[:s.events]) + 1
            ops += 15.0 * (s.events + 1) * top * sum(min(n, s.events) + 1 for n in s.sizes)
            mem = max(mem, 24.0 * (s.events + 1) * top)
            width += top
        ops += 20.0 * width * len(used)
        out.append(Candidate("dp-grid", GRID, True, ops, mem))
    else:
        out.append(Candidate("dp-grid", GRID, True, math.inf, 0.0, feasible=False,
                             note="scores are not on a grid"))
    states = _value_states(used)
    out.append(Candidate("dp-values", VALUES, True, 40.0 * states, 48.0 * states,
                         feasible=states <= MAX_VALUE_STATES,
                         note="" if states <= MAX_VALUE_STATES else "too many distinct sums"))
    out.append(mc)
    return out


def _value_states(used) -> float:
    total = 0.0
    for s in used:
        reach = 1.0
        for n in s.sizes:
            reach *= min(n, s.events) + 1
            total += min(reach, (s.events + 1) * 1e6) * (min(n, s.events) + 1)
    return total


def law(strata, algorithm: str = "dp-grid", progress: Progress = NO_PROGRESS):
    """(law of T over the informative strata, scale): T in the scores' own units is
    scale * support + shift; b in the scores' units is b_law / scale."""
    used = _informative(strata)
    if algorithm == "dp-values":
        return _law_values(used, progress), 1.0
    grid, values = _grid(used)
    if grid is None:
        raise ValueError("the scores lie on no integer grid")
    lookup = dict(zip(values.tolist(), grid.integers.tolist()))
    offset, logw = 0, np.zeros(1)
    observed = 0.0
    for i, s in enumerate(used):
        q = [lookup[v] for v in s.scores]
        lo, w = log_events_by_score(s.sizes, q, s.events)
        offset, logw = trim(offset + lo, log_convolve(logw, w))
        observed += (s.observed - grid.origin * s.events) / grid.step
        progress.step((i + 1) / len(used), "counting")
    shift = grid.origin * sum(s.events for s in used)
    support = shift + grid.step * np.arange(offset, offset + logw.size, dtype=float)
    observed_value = shift + grid.step * round(observed)
    return cond.Law(support, logw, observed_value), 1.0


def _law_values(used, progress):
    """The law by a programme over distinct (events, sum) states, sums merged when equal to
    within 1e-9 of the largest possible sum."""
    from ..core.pvalues import RTOL
    from .logdp import log_comb_row

    laws = []
    for s in used:
        scale = max(1.0, sum(sorted((abs(x) for x, n in zip(s.scores, s.sizes)
                                     for _ in range(min(n, s.events))), reverse=True)[:s.events]))
        e, t, w = np.zeros(1, int), np.zeros(1), np.zeros(1)
        for n, x in zip(s.sizes, s.scores):
            lc = log_comb_row(n)
            d = np.arange(min(n, s.events) + 1)
            e2 = (e[:, None] + d[None, :]).ravel()
            t2 = (t[:, None] + x * d[None, :]).ravel()
            w2 = (w[:, None] + lc[d][None, :]).ravel()
            keep = e2 <= s.events
            e, t, w = _merge_states(e2[keep], t2[keep], w2[keep], RTOL * scale)
            if e.size > MAX_VALUE_STATES:
                raise ValueError("too many distinct sums for an exact answer")
        final = e == s.events
        laws.append((t[final], w[final]))
        progress.step(len(laws) / len(used), "counting")
    t, w = laws[0]
    for t2, w2 in laws[1:]:
        tt = (t[:, None] + t2[None, :]).ravel()
        ww = (w[:, None] + w2[None, :]).ravel()
        _, t, w = _merge_states(np.zeros(tt.size, int), tt, ww, 1e-9 * max(1.0, np.abs(tt).max()))
    order = np.argsort(t)
    observed = float(sum(s.observed for s in used))
    near = int(np.argmin(np.abs(t[order] - observed)))
    return cond.Law(t[order], w[order], float(t[order][near]))


def _merge_states(e, t, w, tol):
    order = np.lexsort((t, e))
    e, t, w = e[order], t[order], w[order]
    new = np.concatenate(([True], (np.diff(e) != 0) | (np.diff(t) > tol)))
    heads = np.flatnonzero(new)
    return e[heads], t[heads], np.logaddexp.reduceat(w, heads)


def run(strata, alternative: str, algorithm: str, draws: int = DEFAULT_DRAWS, seed: int = 1,
        progress: Progress = NO_PROGRESS, name: str = "sum of the scores over the events"):
    """The exact (or Monte Carlo) conditional test of no trend; returns (outcome, law or None)."""
    used = _informative(strata)
    observed = float(sum(s.observed for s in used))
    if algorithm == "monte-carlo":
        return _monte_carlo(used, observed, alternative, draws, seed, progress, name), None
    the_law, _ = law(used, algorithm, progress)
    p = cond.tail(the_law, alternative, "linear")
    words = GRID if algorithm == "dp-grid" else VALUES
    probs = the_law.probabilities()
    return EngineOutcome(name, observed, p, "exact", words, arrangements=_arrangements(used),
                         null_support=the_law.support, null_probs=probs), the_law


def _arrangements(used) -> float:
    total = 1.0
    for s in used:
        total *= math.comb(sum(s.sizes), s.events)
    return total


def null_moments(strata) -> tuple:
    """E0 T and Var0 T (hypergeometric within strata), for the Monte Carlo two-sided rule."""
    mean = var = 0.0
    for s in _informative(strata):
        n = np.asarray(s.sizes, float)
        x = np.asarray(s.scores, float)
        big, m = n.sum(), float(s.events)
        sx, sxx = float(n @ x), float(n @ x ** 2)
        mean += m * sx / big
        var += m * (big - m) / (big * big * (big - 1.0)) * (big * sxx - sx * sx)
    return mean, var


def _monte_carlo(used, observed, alternative, draws, seed, progress, name):
    from ..core.pvalues import exceedances, monte_carlo_p
    from ..montecarlo.sampling import iter_blocks

    centre, var = null_moments(used)
    scale = max(abs(observed - centre), math.sqrt(max(var, 0.0)), 1e-300)

    def work(size, rng):
        t = np.zeros(size)
        for s in used:
            e = rng.multivariate_hypergeometric(np.asarray(s.sizes, np.int64), s.events, size)
            t += e @ np.asarray(s.scores, float)
        return exceedances(t, observed, alternative, centre, scale)

    hits = sum(iter_blocks(seed, draws, work, progress, "trend: sampling"))
    p, ci = monte_carlo_p(hits, draws)
    return EngineOutcome(name, observed, p, "monte-carlo", MC, draws=draws, p_interval=ci,
                         seed=seed)


def law_for_estimate(strata, budget_seconds: float):
    """The exact law for the slope's estimate when a Monte Carlo test ran: counted when one
    of the exact programmes is feasible within the budget, else None."""
    from ...plan.cost import calibrated

    exact = [calibrated("dose-response", c) for c in candidates(strata, 0) if c.exact]
    fits = sorted((c for c in exact if c.feasible and c.seconds <= budget_seconds),
                  key=lambda c: c.ops)
    if not fits:
        return None
    return law(strata, fits[0].algorithm)[0]


def slope(the_law, level: float, alternative: str) -> tuple:
    """(estimate, interval, median unbiased?) of b from the law (in the law's units)."""
    b = cond.cmle(the_law)
    mue = not math.isfinite(b)
    if mue:
        b = cond.median_unbiased(the_law)
    lo, hi = cond.interval(the_law, level, alternative)
    return float(b), (float(lo), float(hi)), mue
