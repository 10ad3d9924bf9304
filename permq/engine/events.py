"""Censored times to an event, two groups: weighted log-rank statistics as permutation tests.

At each distinct event time t_j of the pooled data, d_j events happen among the n_j units
still at risk (time >= t_j; a unit censored at t_j counts as at risk there). With a weight
w_j fixed by the pooled data, the weighted log-rank score of the first group is

    U = sum_j w_j (d_1j - d_j n_1j / n_j)        (observed minus expected events, weighted)

and, writing it unit by unit, U = sum over the first group of the unit scores

    a_i = delta_i w(t_i) - sum_{j: t_j <= t_i} w_j d_j / n_j      (delta_i = 1 for an event).

The scores depend on the pooled times and event indicators only, so U is a linear statistic
of the group labels: its exact law over all C(N, n1) labellings, given the observed times and
censoring, is had by the two-sample engine (counting where the scores are integers, such as
Gehan's, or rationals with a small common denominator scaled to integers; listing otherwise;
seeded Monte Carlo when neither is cheap). The scores sum to zero, so E U = 0 and the
two-sided p counts |U| >= |u|. This is the permutation distribution of the log-rank score
(Heimann & Neuhaus 1998, Biometrics 54:168): valid when, under the null, the censoring does
not depend on the group.

Weights: log-rank w = 1 (Mantel 1966); Gehan w = n_j (Gehan 1965, Breslow 1970: Mantel's
form of the generalised Wilcoxon); Tarone-Ware w = sqrt(n_j) (Tarone & Ware 1977); Peto-Prentice
w = prod_{t_k <= t_j} (1 - d_k / (n_k + 1)) (Peto & Peto 1972; Prentice 1978).
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from fractions import Fraction
from math import comb, gcd, isqrt
from typing import Optional

import numpy as np

from . import twosample
from .core import pvalues
from .core.progress import NO_PROGRESS, Progress

WEIGHTS = ("log-rank", "gehan", "tarone-ware", "peto-prentice")

# scaled integer scores stay below this, so that sums of them are exact in double precision
_EXACT_INTEGER_LIMIT = 2.0 ** 52


@dataclass(frozen=True)
class EventTimes:
    """Two groups of censored times: event[i] is 1 for an event at time[i], 0 for censoring."""

    time1: tuple
    event1: tuple
    time2: tuple
    event2: tuple

    @property
    def pooled(self):
        t = np.array(self.time1 + self.time2, dtype=float)
        d = np.array(self.event1 + self.event2, dtype=int)
        return t, d

    @property
    def n1(self) -> int:
        return len(self.time1)


def risk_table(time, event):
    """Distinct event times with their events d_j and numbers at risk n_j (time >= t_j)."""
    time = np.asarray(time, dtype=float)
    event = np.asarray(event, dtype=int)
    t_events = np.unique(time[event == 1])
    d = np.array([int(((time == t) & (event == 1)).sum()) for t in t_events], dtype=int)
    n = np.array([int((time >= t).sum()) for t in t_events], dtype=int)
    return t_events, d, n


def exact_weights(kind: str, d, n) -> Optional[list]:
    """The weights as Fractions, or None where they are irrational (Tarone-Ware)."""
    if kind == "log-rank":
        return [Fraction(1)] * len(d)
    if kind == "gehan":
        return [Fraction(int(v)) for v in n]
    if kind == "peto-prentice":
        out, s = [], Fraction(1)
        for dj, nj in zip(d, n):
            s *= Fraction(int(nj) + 1 - int(dj), int(nj) + 1)
            out.append(s)
        return out
    if kind == "tarone-ware":
        roots = [isqrt(int(v)) for v in n]
        if all(r * r == int(v) for r, v in zip(roots, n)):
            return [Fraction(r) for r in roots]
        return None
    raise ValueError(f"unknown weight '{kind}'")


def float_weights(kind: str, d, n) -> np.ndarray:
    if kind == "tarone-ware":
        return np.sqrt(np.asarray(n, dtype=float))
    return np.array([float(w) for w in exact_weights(kind, d, n)])


def unit_scores(kind: str, time, event):
    """Each unit's score a_i, and (when the weights are rational) the scores as Fractions."""
    time = np.asarray(time, dtype=float)
    event = np.asarray(event, dtype=int)
    t_events, d, n = risk_table(time, event)
    exact = exact_weights(kind, d, n)
    if exact is not None:
        steps = [w * int(dj) / int(nj) for w, dj, nj in zip(exact, d, n)]
        cum, run = [], Fraction(0)
        for s in steps:
            run += s
            cum.append(run)
        fr = []
        for ti, di in zip(time, event):
            k = int(np.searchsorted(t_events, ti, side="right"))      # event times <= t_i
            minus = cum[k - 1] if k > 0 else Fraction(0)
            own = exact[k - 1] if di == 1 else Fraction(0)            # t_i is the k-th event time
            fr.append(own - minus)
        return np.array([float(f) for f in fr]), fr
    w = float_weights(kind, d, n)
    cum = np.cumsum(w * d / n)
    k = np.searchsorted(t_events, time, side="right")
    minus = np.where(k > 0, cum[np.maximum(k - 1, 0)], 0.0)
    own = np.where(event == 1, w[np.maximum(k - 1, 0)], 0.0)
    return own - minus, None


@dataclass(frozen=True)
class Scores:
    """The scores handed to the two-sample engine: integers `scale` times the unit scores
    where that is exact and small, else the unit scores as floats (scale 1)."""

    values: np.ndarray
    scale: int
    integer: bool


def scaled(floats, fractions: Optional[list]) -> Scores:
    """The scores as integers over their common denominator when that is exact and small
    (`fractions`: the same scores as Fractions, or None where they are irrational)."""
    if fractions is not None:
        den = 1
        for f in fractions:
            den = den * f.denominator // gcd(den, f.denominator)
            if den > _EXACT_INTEGER_LIMIT:
                break
        if den <= _EXACT_INTEGER_LIMIT:
            ints = [int(f * den) for f in fractions]
            if sum(abs(v) for v in ints) < _EXACT_INTEGER_LIMIT:
                return Scores(np.array(ints, dtype=float), den, True)
    return Scores(np.asarray(floats, dtype=float), 1, False)


def engine_scores(kind: str, data: EventTimes) -> Scores:
    t, d = data.pooled
    return scaled(*unit_scores(kind, t, d))


_RULE = twosample.ScoreRule("censored", "log-rank score", lambda a: a)


def _split(sc: Scores, n1: int):
    return sc.values[:n1], sc.values[n1:]


# the sparse count holds at most this many (size, sum) states at once
MAX_SPARSE_STATES = 3.0e7


def candidates(kind: str, data: EventTimes, draws: int):
    sc = engine_scores(kind, data)
    x, y = _split(sc, data.n1)
    out = twosample.candidates(_RULE, x, y, draws)
    if sc.integer:
        out.insert(1, _sparse_candidate(sc.values, data.n1))
    if not sc.integer:
        out = [replace(c, note="scores are not rationals with a small common denominator")
               if c.algorithm == "dp-integer" else c for c in out]
    elif sc.scale > 1:
        out = [replace(c, note=f"scores are integers over {sc.scale:,}" if c.feasible else
                       f"scores are integers over {sc.scale:,}: the grid of sums is too wide")
               if c.algorithm == "dp-integer" else c for c in out]
    return out


STATISTIC = {"log-rank": "log-rank score U = O - E of the first group",
             "gehan": "Gehan score U of the first group (weights: numbers at risk)",
             "tarone-ware": "Tarone-Ware score U of the first group (weights: root numbers at risk)",
             "peto-prentice": "Peto-Prentice score U of the first group (weights: survival "
                              "estimate)"}


def run(kind: str, data: EventTimes, alternative: str, algorithm: str, level: float,
        draws: Optional[int] = None, seed: Optional[int] = None,
        progress: Progress = NO_PROGRESS):
    """The permutation p-value of U (`higher`: the first group has more events than expected,
    its hazard is the higher)."""
    sc = engine_scores(kind, data)
    x, y = _split(sc, data.n1)
    if algorithm == "counting-sparse":
        outcome = _run_sparse(sc.values, data.n1, alternative, progress)
    else:
        outcome, _ = twosample.run(_RULE, x, y, alternative, algorithm, level, draws=draws,
                                   seed=seed, progress=progress)
    support = outcome.null_support
    if support is not None and sc.scale != 1:
        support = np.asarray(support, dtype=float) / sc.scale
    return replace(outcome, statistic_name=STATISTIC[kind],
                   statistic=float(outcome.statistic) / sc.scale, null_support=support)


# ---------------------------------------------------------------- counting distinct sums

def _classes(q):
    values, counts = np.unique(np.asarray(q, dtype=np.int64), return_counts=True)
    return values, counts


def _sparse_bound(q, n1: int) -> float:
    """An upper bound on the (size, sum) states: the labellings, the compositions over the
    classes of equal scores, and the dense grid of sums, whichever is least."""
    values, counts = _classes(q)
    N = len(q)
    compositions = 1.0
    for m in counts:
        compositions = min(compositions * (int(m) + 1), 1e300)
    width = 2 * float(np.sort(np.abs(np.asarray(q, float)))[::-1][:n1].sum()) + 1
    return min(compositions, 2.0 * comb(N, n1), (n1 + 1) * width)


def _sparse_candidate(q, n1: int):
    from ..plan.cost import Candidate

    values, counts = _classes(q)
    states = _sparse_bound(q, n1)
    # measured: 24 classes and a bound of 2.1e7 states (13 + 13 units) count in about 3 s
    ops = states * len(values) * 1.2
    mem = states * 16 * 2
    return Candidate("counting-sparse", "counting the distinct score sums (exact integers)",
                     True, ops, mem, feasible=states <= MAX_SPARSE_STATES,
                     note=f"{len(values)} distinct scores, at most {states:.3g} sums",
                     arrangements=float(comb(len(q), n1)))


def sparse_counts(q, n1: int, progress: Progress = NO_PROGRESS):
    """The number of labellings with each first-group score sum: units of equal score form a
    class, taken c at a time in C(m, c) ways; the states are (size, sum) pairs, kept sparse."""
    values, counts = _classes(q)
    layers = [(np.zeros(1, dtype=np.int64), np.ones(1))] + [None] * n1
    remaining = len(q)
    for step, (v, m) in enumerate(zip(values.tolist(), counts.tolist())):
        remaining -= m
        parts = [[] for _ in range(n1 + 1)]
        for k, layer in enumerate(layers):
            if layer is None:
                continue
            sums, ways = layer
            for j in range(0, min(m, n1 - k) + 1):
                if k + j + remaining < n1:
                    continue
                parts[k + j].append((sums + j * v, ways * comb(m, j)))
        layers = [_merge(p) if p else None for p in parts]
        progress.step((step + 1) / len(values), "counting")
    return layers[n1]


def _merge(parts):
    sums = np.concatenate([p[0] for p in parts])
    ways = np.concatenate([p[1] for p in parts])
    support, inverse = np.unique(sums, return_inverse=True)
    return support, np.bincount(inverse, weights=ways, minlength=len(support))


def _run_sparse(q, n1: int, alternative: str, progress):
    from ..result import EngineOutcome
    from .core.limits import EXACT_COUNT_LIMIT

    q = np.asarray(q, dtype=np.int64)
    support, ways = sparse_counts(q, n1, progress)
    N = len(q)
    s_obs = int(q[:n1].sum())
    mask = pvalues.integer_tail_mask(support, s_obs, alternative, int(q.sum()) * n1, N)
    p = pvalues.clip(ways[mask].sum() / ways.sum())
    total = comb(N, n1)
    warn = () if total < EXACT_COUNT_LIMIT else (
        "counts exceed 2^53 and are held in double precision (relative error below 1e-12)",)
    return EngineOutcome("", float(s_obs), p, "exact",
                         "counting the distinct score sums (exact integers)",
                         arrangements=float(total), null_support=support.astype(float),
                         null_probs=ways / ways.sum(), warnings=warn)
