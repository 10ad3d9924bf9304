"""The count check for strata: 2 x 2 x K (a common odds ratio, or its homogeneity) and
2 x k x K (a trend in ordered groups), under a stratified version of the table panel.

The strata's tables are stacked into one (K k) x 2 table (stratum by stratum, the groups of a
stratum in order, events then non-events), so that the count check's simulation and report
serve unchanged. Every scheme draws each stratum on its own, keeping its group sizes:

- both margins fixed within every stratum: the tables the exact conditional test conditions on
  (hypergeometric in each stratum); at the effect, each stratum's tables weighted by
  psi^(first group's events);
- row totals fixed within strata: each group's units classified independently with the
  stratum's pooled proportion (the stratum's own chance of an event: strata differ, groups do
  not); at the effect the groups' chances have odds ratio psi at that pooled proportion;
- only each stratum's total fixed (multinomial within the stratum);
- a rarer outcome: each stratum's least frequent outcome half as likely;
- clustered units: units in clusters of 3 sharing one chance (intraclass correlation 0.2),
  which is not exact.

The exact side is the family's own test of every simulated stack: the common odds ratio's
conditional law (a convolution once for each set of strata margins), Zelen's network, or the
stratified trend's law; the normal side the Mantel-Haenszel chi-square, Breslow-Day with
Tarone's correction, or the stratified Cochran-Armitage z, vectorised.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ...bind import designs
from ...engine.counts import conditional as cond
from ...errors import BindError
from ..counterparts import z_tails
from . import schemes as TL
from .batch import CountTests
from .schemes import Scheme


@dataclass(frozen=True)
class StrataView:
    """Strata as the count check sees them: the stacked (K k) x 2 table."""

    table: np.ndarray
    row_labels: tuple
    col_labels: tuple
    settings: object
    form: str                     # "strata" or "ordered-strata"
    groups: int                   # k
    reference: float = None
    source: object = field(default=None, compare=False)
    warnings: tuple = ()


def view(design):
    if not isinstance(design, designs.StrataDesign):
        return None
    k = design.tables.shape[1]
    labels = tuple(f"{s}: {g}" for s in design.stratum_labels for g in design.group_labels)
    return StrataView(design.tables.reshape(-1, 2), labels, tuple(design.outcomes),
                      design.settings, design.kind, k, source=design,
                      warnings=tuple(design.warnings))


def _split(table, k):
    """(K, k, 2) from the stacked (K k, 2)."""
    return np.asarray(table).reshape(-1, k, 2)


# ---------------------------------------------------------------- the effect

def effect_for(v: StrataView, shift):
    from ...engine.counts import strata as engine, trend
    from .check import Effect

    if shift is not None and shift[1]:
        raise BindError("counts have no standard-deviation unit: a shift in sd does not apply",
                        hint="give a common odds ratio: shift 3")
    tables = _split(v.table, v.groups)
    if v.form == "ordered-strata":
        if shift is not None:
            raise BindError("'shift' has no one-number meaning for a trend within strata: the "
                            "power is at the observed slope", hint="drop 'shift'")
        st = [trend.grouped(t.sum(axis=1), t[:, 0], v.source.scores) for t in tables]
        law, _ = trend.law(st)
        b = trend.slope(law, 0.95, "two-sided")[0]
        scores = np.asarray(v.source.scores, float)
        words = f"the observed common slope {b:.4g} (log odds per unit of dose) in every stratum"
        theta = np.stack([np.exp(b * (scores - scores.min())), np.ones(scores.size)], axis=1)
        return Effect(tuple(_panel(tables, lambda rows, first: _slope_rows(
            rows, first, b, scores), theta)), b, words, b == 0)
    if _route(v) == "homogeneity":
        if shift is not None:
            raise BindError("'shift' sets one odds ratio, which is homogeneity itself: the "
                            "power is at the strata's observed odds ratios", hint="drop 'shift'")
        words = "the strata's observed odds ratios (each group with its observed proportions)"
        return Effect(tuple(_panel(tables, None, None)), math.nan, words, False)
    if shift is None:
        est = engine.common_odds_ratio(engine.as_strata(tables))
        psi = est.value               # median unbiased where the conditional MLE is infinite
        words = (f"the observed common odds ratio {psi:.4g} ({est.name.split('(')[-1][:-1]}) "
                 "in every stratum, each stratum's events as observed")
    else:
        psi = float(shift[0])
        if not psi > 0:
            raise BindError(f"shift {psi:g}: an odds ratio must be above 0",
                            hint="give a common odds ratio: shift 3")
        words = f"a common odds ratio of {psi:.4g} in every stratum, each stratum's events as observed"
    if not 0 < psi < math.inf:
        raise BindError("the observed common odds ratio is not finite, so the check cannot "
                        "simulate at it", hint="give one: shift 3")
    return Effect(tuple(_panel(tables, lambda rows, first: TL.odds_ratio_rows(rows, first, psi),
                               np.array([[psi, 1.0], [1.0, 1.0]]))), psi, words, psi == 1.0)


def _route(v: StrataView) -> str:
    """The count check's route, as the design's family declares it (families/strata.py)."""
    from ...families.registry import family_for

    return family_for(v.source).robustness(v.source).route


def _slope_rows(rows, first, b, scores):
    """Each group's (event, no event) chances under a logistic slope b, with the stratum's
    pooled chance `first` kept."""
    from scipy.optimize import brentq

    rows = np.asarray(rows, float)
    if rows.sum() == 0 or not 0 < first < 1:
        p = np.full(rows.size, min(max(first, 0.0), 1.0))
        return np.stack([p, 1 - p], axis=1)
    def mean(a):
        return float((rows / (1 + np.exp(-(a + b * scores)))).sum() / rows.sum()) - first
    a = brentq(mean, -60 - abs(b) * np.abs(scores).max(), 60 + abs(b) * np.abs(scores).max())
    p = 1 / (1 + np.exp(-(a + b * scores)))
    return np.stack([p, 1 - p], axis=1)


def _panel(tables, effect_rows, theta):
    """The five schemes, each stratum drawn on its own and the draws stacked."""
    strata = []
    for t in tables:
        rows, cols = t.sum(axis=1), t.sum(axis=0)
        n = int(t.sum())
        pooled = cols / n if n else np.array([0.5, 0.5])
        j = TL.rarest_column(t) if n else 1
        rarer = TL.halved(pooled, j)
        if effect_rows is None:         # each group with its observed proportions
            seen = np.where(rows[:, None] > 0, t / np.maximum(rows, 1)[:, None], pooled)
            effect, effect_rarer = seen, TL.halved(seen, j)
        else:
            effect, effect_rarer = effect_rows(rows, pooled[0]), effect_rows(rows, rarer[0])
        strata.append(dict(rows=rows, cols=cols, pooled=pooled, rarer=rarer, effect=effect,
                           effect_rarer=effect_rarer,
                           tilted=None if theta is None else TL._fixed_margins(rows, cols, theta)))
    kappa = TL.concentration(TL.ICC)

    def stacked(draw):
        return lambda rng, size: np.concatenate([draw(s, rng, size) for s in strata], axis=1)

    def common(s, key):
        return np.broadcast_to(s[key], (len(s["rows"]), 2))

    out = []
    if theta is not None and all(s["tilted"] is not None for s in strata):
        out.append(Scheme("margins-fixed", "both margins fixed",
                          "within every stratum, group sizes and events as observed: the "
                          "tables the exact test conditions on (hypergeometric)",
                          stacked(lambda s, rng, size: TL._patefield(rng, size, s["rows"],
                                                                     s["cols"])),
                          stacked(lambda s, rng, size: s["tilted"].draw(rng, size))))
    else:
        out.append(None)
    out += [
        Scheme("rows-fixed", "row totals fixed",
               "within every stratum, each group's units classified independently with the "
               "stratum's pooled proportion (strata differ, groups do not)",
               stacked(lambda s, rng, size: TL._rows_fixed(rng, size, s["rows"],
                                                           common(s, "pooled"))),
               stacked(lambda s, rng, size: TL._rows_fixed(rng, size, s["rows"], s["effect"]))),
        Scheme("total-fixed", "only the total fixed",
               "within every stratum, its units classified independently (multinomial)",
               stacked(lambda s, rng, size: TL._total_fixed(rng, size, s["rows"],
                                                            common(s, "pooled"))),
               stacked(lambda s, rng, size: TL._total_fixed(rng, size, s["rows"], s["effect"]))),
        Scheme("rarer-outcome", "a rarer outcome",
               "row totals fixed within strata; each stratum's less frequent outcome half as "
               "likely", stacked(lambda s, rng, size: TL._rows_fixed(rng, size, s["rows"],
                                                                     common(s, "rarer"))),
               stacked(lambda s, rng, size: TL._rows_fixed(rng, size, s["rows"],
                                                           s["effect_rarer"]))),
        Scheme("clustered", "clustered units",
               f"row totals fixed within strata; units in clusters of {TL.CLUSTER_SIZE} "
               f"sharing one chance (intraclass correlation {TL.ICC:g})",
               stacked(lambda s, rng, size: TL._clustered_rows(
                   rng, size, s["rows"], common(s, "pooled"), TL.CLUSTER_SIZE, kappa)),
               stacked(lambda s, rng, size: TL._clustered_rows(
                   rng, size, s["rows"], s["effect"], TL.CLUSTER_SIZE, kappa)),
               not_exact="units of a cluster share their chances, so given its margins a "
                         "stratum's table is not hypergeometric"),
    ]
    return out


# ---------------------------------------------------------------- the tests

class StrataTests(CountTests):
    def __init__(self, v: StrataView):
        super().__init__(v, draws=0)         # the route and statistic, caches, the alternative
        self.observed_tables = float(np.prod([math.comb(int(t.sum()), int(t[:, 0].sum()))
                                              for t in _split(v.table, v.groups)]))

    def choose(self, keys, scale: float = 1.0) -> None:
        return None

    def reference_words(self) -> str:
        what = {"strata": "the common odds ratio's conditional law (a convolution over the "
                          "strata)",
                "homogeneity": "Zelen's network over the strata given their total",
                "strata-trend": "the stratified trend's conditional law"}[self.route]
        return f"exact for every simulated stack of strata: {what}, once for each set of margins"

    def normal_p(self, tables) -> np.ndarray:
        t = _split_stack(tables, self.design.groups)
        if self.route == "strata":
            return mantel_haenszel_p(t, self.alternative)
        if self.route == "homogeneity":
            return breslow_day_p(t)
        return trend_z_p(t, np.asarray(self.design.source.scores, float), self.alternative)

    def exact_p(self, tables, rng=None) -> np.ndarray:
        t = _split_stack(np.asarray(tables, np.int64), self.design.groups)
        if self.route == "homogeneity":
            flat = t.reshape(len(t), -1)
            return self._by_key(flat, lambda key: self._zelen(key.reshape(t.shape[1:])))
        out = np.ones(len(t))
        if self.route == "strata":
            keys = np.concatenate([t.sum(axis=3).reshape(len(t), -1),
                                   t[:, :, :, 0].sum(axis=2)], axis=1)
            stat = t[:, :, 0, 0].sum(axis=1).astype(float)
        else:
            keys = np.concatenate([t.sum(axis=3).reshape(len(t), -1),
                                   t[:, :, :, 0].sum(axis=2)], axis=1)
            stat = (t[:, :, :, 0] @ np.asarray(self.design.source.scores, float)).sum(axis=1)
        uniq, inverse = np.unique(keys, axis=0, return_inverse=True)
        inverse = inverse.ravel()
        for idx, key in enumerate(uniq):
            hit = self._law_p(key, t.shape[1])
            if hit is None:
                continue
            support, p_of = hit
            rows = inverse == idx
            tol = cond.LINEAR_RTOL * max(1.0, float(np.abs(support).max()))
            where = np.clip(np.searchsorted(support, stat[rows] - tol), 0, support.size - 1)
            out[rows] = p_of[where]
        return out

    def _law_p(self, key, strata):
        token = key.tobytes()
        if token in self._cache:
            return self._cache[token]
        from ...engine.counts import strata as engine, trend

        k = self.design.groups
        if self.route == "strata":
            sizes = key[:2 * strata].reshape(strata, 2)
            events = key[2 * strata:]
            reps = [_representative(r, e) for r, e in zip(sizes, events)]
            st = engine.as_strata(reps)
            if not engine.informative(st):
                hit = None
            else:
                law = engine.law(st)
                fixed = sum(x.lo for x in st if not x.informative)   # their counts are fixed
                hit = (law.support + fixed, _every_probability_p(law, self.alternative))
        else:
            sizes = key[:k * strata].reshape(strata, k)
            events = key[k * strata:]
            st = [trend.Stratum(tuple(int(v) for v in s), tuple(self.design.source.scores),
                                int(e), 0.0) for s, e in zip(sizes, events)]
            if not any(s.informative for s in st):
                hit = None
            else:
                law, _ = trend.law(st)
                from .events import _every_tail

                fixed = sum(_fixed_sum(x) for x in st if not x.informative)
                hit = (law.support + fixed, _every_tail(law.support, law.probabilities(),
                                                        self.alternative))
        self._cache[token] = hit
        return hit

    def _zelen(self, tables) -> float:
        from ...engine.counts import homogeneity, strata as engine

        st = engine.as_strata(tables)
        if len(engine.informative(st)) < 2:
            return 1.0
        return homogeneity.run(st).p_value


def tests_for(v):
    return StrataTests(v)


def _fixed_sum(st) -> float:
    """The score sum over the events of a stratum whose sum cannot vary."""
    sizes, scores = np.asarray(st.sizes, float), np.asarray(st.scores, float)
    if st.events == 0:
        return 0.0
    if st.events == sizes.sum():
        return float(sizes @ scores)
    return float(st.events * scores[sizes > 0][0])      # one score among its units


def _split_stack(tables, k):
    t = np.asarray(tables)
    return t.reshape(len(t), -1, k, 2)


def _representative(rows, events):
    """A 2 x 2 table with these group sizes and events (for the margins alone)."""
    r1, r2 = int(rows[0]), int(rows[1])
    a = min(r1, int(events))
    return [[a, r1 - a], [int(events) - a, r2 - int(events) + a]]


def _every_probability_p(law, alternative) -> np.ndarray:
    """The p-value of every support value by the probability rule (or its tail)."""
    p = law.probabilities()
    if alternative == "higher":
        return np.minimum(1.0, np.cumsum(p[::-1])[::-1])
    if alternative == "lower":
        return np.minimum(1.0, np.cumsum(p))
    order = np.sort(p)
    cum = np.cumsum(order)
    idx = np.searchsorted(order, p * (1.0 + cond.PROBABILITY_RTOL), side="right") - 1
    return np.minimum(1.0, cum[idx])


# ---------------------------------------------------------------- counterparts, vectorised

def mantel_haenszel_p(t, alternative) -> np.ndarray:
    t = np.asarray(t, float)
    a = t[:, :, 0, 0]
    r1, r2 = t[:, :, 0].sum(axis=2), t[:, :, 1].sum(axis=2)
    c1, c2 = t[:, :, :, 0].sum(axis=2), t[:, :, :, 1].sum(axis=2)
    n = r1 + r2
    with np.errstate(divide="ignore", invalid="ignore"):
        e = np.where(n > 1, r1 * c1 / n, 0.0)
        v = np.where(n > 1, r1 * r2 * c1 * c2 / (n * n * (n - 1)), 0.0)
    dev = np.where(n > 1, a - e, 0.0).sum(axis=1)
    var = v.sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(var > 0, dev / np.sqrt(np.where(var > 0, var, 1.0)), 0.0)
    return np.where(var > 0, z_tails(z, alternative), 1.0)


def trend_z_p(t, scores, alternative) -> np.ndarray:
    t = np.asarray(t, float)
    n = t.sum(axis=3)                       # (m, K, k)
    e = t[:, :, :, 0]
    big = n.sum(axis=2)
    m = e.sum(axis=2)
    sx, sxx = n @ scores, n @ scores ** 2
    obs = (e @ scores).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        mean = np.where(big > 0, m * sx / big, 0.0).sum(axis=1)
        var = np.where(big > 1, m * (big - m) / (big * big * (big - 1)) * (big * sxx - sx * sx),
                       0.0).sum(axis=1)
        z = np.where(var > 0, (obs - mean) / np.sqrt(np.where(var > 0, var, 1.0)), 0.0)
    return np.where(var > 0, z_tails(z, alternative), 1.0)


def breslow_day_p(t) -> np.ndarray:
    from ...normal.counts import breslow_day

    return np.array([_nan_to_one(breslow_day(x).p_value) for x in np.asarray(t)])


def _nan_to_one(p):
    return 1.0 if p != p else p
