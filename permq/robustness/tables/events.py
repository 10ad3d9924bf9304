"""The count check for the event forms: two proportions, a binary dose response, rates.

Each design is seen as a table of counts (`view`), so that the count check's simulation,
verdicts and report serve it unchanged:

- two proportions: the 2 x 2 table [[x1, n1 - x1], [x2, n2 - x2]] under the table panel
  (rows fixed is the design's own scheme: two binomial samples of set sizes); the exact side is
  the family's own test of every simulated table (Boschloo's or Barnard's unconditional test,
  or Fisher's), the normal side the score z;
- a binary response against a dose: the D x 2 table of events and non-events at each distinct
  dose, under the table panel; the exact side is the conditional logistic test of every table
  (the law of sum(x y) given its margins), the normal side the Wald z of the logistic fit
  (no rejection where the fit has no finite maximum);
- rates: the counts [[x1, x2]] (or [[x]]) under a panel of their own: Poisson counts at the
  exposures (the law the exact tests use), the total fixed (two rates: the binomial split),
  overdispersed counts (negative binomial, variance twice the mean: events in bursts) and, for
  one rate, underdispersed counts (binomial, variance half the mean: events at regular times).

Unconditional p-values of every outcome come at once: the outcomes sorted by the test's
ordering, the region of each is a prefix (ties kept together), and the probability of every
prefix over a grid of the common proportion is one cumulative sum. The grid's best is within
1% below the supremum; outcomes whose grid value lies within 3% below the check's level are
refined by the engine's own search, so every decision at the level is the engine's.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ...bind import designs
from ...engine.counts import nuisance, unconditional
from ...engine.counts.conditional import LINEAR_RTOL, PROBABILITY_RTOL
from ...errors import BindError
from ..counterparts import z_tails
from .batch import CountTests
from .schemes import Scheme

REFINE_BELOW = 0.97      # grid values within this factor below a level are refined
OVERDISPERSION = 2.0      # variance / mean of the overdispersed counts


@dataclass(frozen=True)
class CountView:
    """An event design as the count check sees it."""

    table: np.ndarray
    row_labels: tuple
    col_labels: tuple
    settings: object
    form: str = "two-proportions"  # the table panel's forms, or "rates" (a panel of its own)
    reference: float = None
    source: object = field(default=None, compare=False)   # the design itself
    warnings: tuple = ()


def view(design):
    """The count view of an event design, or None for the other designs."""
    from . import strata

    if isinstance(design, designs.StrataDesign):
        return strata.view(design)
    if isinstance(design, designs.TwoProportionsDesign):
        x1, n1, x2, n2 = design.counts
        t = np.array([[x1, n1 - x1], [x2, n2 - x2]], np.int64)
        return CountView(t, tuple(design.labels), tuple(design.outcomes), design.settings,
                         "two-proportions", source=design, warnings=tuple(design.warnings))
    if isinstance(design, designs.DoseResponseDesign):
        doses, inverse = np.unique(design.x, return_inverse=True)
        t = np.zeros((doses.size, 2), np.int64)
        np.add.at(t, (inverse, 1 - design.y.astype(np.int64)), 1)
        return CountView(t, tuple(f"{design.names[1]} {v:g}" for v in doses),
                         tuple(design.outcomes), design.settings, "dose-response",
                         source=design, warnings=tuple(design.warnings))
    if isinstance(design, designs.RatesDesign):
        t = np.array([list(design.counts)], np.int64)
        labels = tuple(f"{x} in {e:g}" for x, e in zip(design.counts, design.exposures))
        return CountView(t, ("events",), labels, design.settings, "rates", design.reference,
                         source=design, warnings=tuple(design.warnings))
    return None


# ---------------------------------------------------------------- the effect

def effect_for(v, shift):
    from . import strata
    from .check import effect_for as table_effect

    if isinstance(v, strata.StrataView):
        return strata.effect_for(v, shift)
    if v.form != "rates":
        if v.form == "dose-response" and shift is not None:
            raise BindError("'shift' has no one-number meaning for a dose response: the power "
                            "is at the observed proportions at each dose",
                            hint="drop 'shift'")
        return table_effect(v, shift)
    return _rates_effect(v, shift)


def _rates_effect(v, shift):
    from .check import Effect

    d = v.source
    if shift is not None and shift[1]:
        raise BindError("counts have no standard-deviation unit: a shift in sd does not apply",
                        hint="give a rate ratio (two rates) or a rate (one): shift 2")
    if shift is not None and not float(shift[0]) > 0:
        raise BindError(f"shift {float(shift[0]):g}: a rate must be above 0",
                        hint="give a rate ratio (two rates) or a rate (one): shift 2")
    if len(d.counts) == 2:
        (x1, x2), (t1, t2) = d.counts, d.exposures
        pooled = (x1 + x2) / (t1 + t2)
        if shift is None:
            ratio = (x1 / t1) / (x2 / t2) if x2 else (math.inf if x1 else 1.0)
            rates1 = (x1 / t1, x2 / t2)
            words = (f"the observed rates {x1 / t1:.4g} and {x2 / t2:.4g} (rate ratio "
                     f"{ratio:.4g})")
        else:
            ratio = float(shift[0])
            lam2 = (x1 + x2) / (ratio * t1 + t2)      # the observed expected total kept
            rates1 = (ratio * lam2, lam2)
            words = f"a rate ratio of {ratio:.4g}, with the observed total of events expected"
        return Effect(tuple(rates_panel(d, (pooled, pooled), rates1)), ratio, words,
                      bool(np.isclose(rates1[0], rates1[1])))
    x, t = d.counts[0], d.exposures[0]
    rate = x / t if shift is None else float(shift[0])
    words = (f"the observed rate {rate:.4g}" if shift is None else f"a true rate of {rate:.4g}")
    words += f", against {d.reference:g}"
    return Effect(tuple(rates_panel(d, (d.reference,), (rate,))), rate, words,
                  bool(np.isclose(rate, d.reference)))


def rates_panel(d, null_rates, effect_rates):
    """The schemes for event counts at the design's exposures."""
    exposures = np.asarray(d.exposures, float)
    mu0 = np.asarray(null_rates, float) * exposures
    mu1 = np.asarray(effect_rates, float) * exposures

    def poisson(mu):
        return lambda rng, size: rng.poisson(mu, size=(size, mu.size))[:, None, :]

    def bursts(mu):
        # negative binomial with variance OVERDISPERSION x mean: r = mean / (factor - 1)
        r = np.maximum(mu / (OVERDISPERSION - 1.0), 1e-9)
        return lambda rng, size: rng.negative_binomial(
            r, r / (r + np.maximum(mu, 1e-12)), size=(size, mu.size))[:, None, :]

    out = [Scheme("poisson", "Poisson counts",
                  "events independent in time at a constant rate: Poisson counts at the "
                  "exposures", poisson(mu0), poisson(mu1))]
    if mu0.size == 2:
        n = int(sum(d.counts))

        def split(mu):
            pi = mu[0] / mu.sum() if mu.sum() > 0 else 0.5
            return lambda rng, size: np.stack(
                [k := rng.binomial(n, pi, size), n - k], axis=1)[:, None, :]

        out.append(Scheme("total-fixed", "the total fixed",
                          f"{n} events in all, each in the first exposure with its share of "
                          "the expected events (binomial)", split(mu0), split(mu1)))
    out.append(Scheme("bursts", "events in bursts",
                      f"overdispersed counts: negative binomial with variance {OVERDISPERSION:g} "
                      "times the mean (events come in clusters)", bursts(mu0), bursts(mu1),
                      not_exact="events that come in bursts are not Poisson: the counts are "
                                "more spread than the law the test uses"))
    if mu0.size == 1:
        def regular(mu):
            trials = np.maximum(np.round(2.0 * mu).astype(np.int64), 1)
            return lambda rng, size: rng.binomial(trials, np.minimum(mu / trials, 1.0),
                                                  size=(size, mu.size))[:, None, :]

        out.append(Scheme("regular", "regular events",
                          "underdispersed counts: binomial with variance half the mean "
                          "(events at regular times)", regular(mu0), regular(mu1),
                          not_exact="regular events are less spread than Poisson"))
    return out


# ---------------------------------------------------------------- the tests

def tests_for(v, levels=(0.05,)):
    """Both tests of a view; `levels`: the significance levels whose decisions must be the
    engine's (the check's own)."""
    from . import strata

    if isinstance(v, strata.StrataView):
        return strata.tests_for(v)
    return EventTests(v, levels)


def is_view(v) -> bool:
    from . import strata

    return isinstance(v, (CountView, strata.StrataView))


class EventTests(CountTests):
    """Both tests of an event design, for stacks of simulated tables."""

    def __init__(self, v: CountView, levels=(0.05,)):
        super().__init__(v, draws=0)         # the route and statistic, caches, the alternative
        self.levels = tuple(levels)
        src = v.source
        if self.route in ("unconditional", "fisher-proportions"):
            n1, n2 = (int(r) for r in v.table.sum(axis=1))
            self.observed_tables = float((n1 + 1) * (n2 + 1))
        elif self.route == "logistic":
            self.observed_tables = float(math.comb(int(v.table.sum()), int(v.table[:, 0].sum())))
        else:
            self.observed_tables = float(sum(src.counts) + 1)

    def choose(self, keys, scale: float = 1.0) -> None:
        return None

    def reference_words(self) -> str:
        if self.route == "unconditional":
            return ("exact for every simulated table: the family's unconditional test, the "
                    "supremum over the common proportion of every outcome's region, once for "
                    "each pair of sample sizes")
        if self.route == "fisher-proportions":
            return ("exact for every simulated table: Fisher's hypergeometric tails, once for "
                    "each set of margins")
        if self.route == "logistic":
            return ("exact for every simulated table: the conditional law of sum(x y) given "
                    "its margins, once for each set of margins")
        return ("exact for every simulated count: the Poisson law at the reference rate (one "
                "rate), the binomial law given the total (two rates)")

    # ------------------------------------------------ normal theory

    def normal_p(self, tables) -> np.ndarray:
        t = np.asarray(tables, float)
        if self.route in ("unconditional", "fisher-proportions"):
            return score_z_p(t, self.alternative)
        if self.route == "logistic":
            doses = np.unique(self.design.source.x)
            return logistic_wald_p(t, doses, self.alternative)
        return rates_score_p(t, self.design.source, self.alternative)

    # ------------------------------------------------ exact

    def exact_p(self, tables, rng=None) -> np.ndarray:
        tables = np.asarray(tables, np.int64)
        if self.route == "fisher-proportions":
            return self._fisher_2x2(tables)
        if self.route == "unconditional":
            return self._unconditional(tables)
        if self.route == "logistic":
            return self._logistic(tables)
        return self._rates(tables)

    def _unconditional(self, tables) -> np.ndarray:
        n1 = tables[:, 0].sum(axis=1)
        n2 = tables[:, 1].sum(axis=1)
        out = np.ones(len(tables))
        for a, b in np.unique(np.stack([n1, n2], axis=1), axis=0):
            rows = (n1 == a) & (n2 == b)
            if a == 0 or b == 0:
                continue              # a sample with no trials: nothing to compare, p = 1
            key = ("unconditional", int(a), int(b))
            table = self._cache.get(key)
            if table is None:
                table = all_unconditional_p(int(a), int(b), self.statistic, self.alternative,
                                            self.levels)
                self._cache[key] = table
            out[rows] = table[tables[rows, 0, 0], tables[rows, 1, 0]]
        return out

    def _logistic(self, tables) -> np.ndarray:
        from ...engine.counts import trend

        doses = np.unique(self.design.source.x)
        sizes = tables.sum(axis=2)
        events = tables[:, :, 0]
        out = np.ones(len(tables))
        keys = np.concatenate([sizes, events.sum(axis=1, keepdims=True)], axis=1)
        for key in np.unique(keys, axis=0):
            rows = np.all(keys == key, axis=1)
            size, m = key[:-1], int(key[-1])
            st = trend.grouped(size, np.zeros_like(size), doses)
            st = trend.Stratum(st.sizes, st.scores, m, 0.0)
            if not st.informative:
                continue
            token = ("logistic", key.tobytes())
            hit = self._cache.get(token)
            if hit is None:
                law, _ = trend.law([st])
                hit = (law.support, _every_tail(law.support, law.probabilities(),
                                                self.alternative))
                self._cache[token] = hit
            support, p_of = hit
            t = events[rows] @ doses
            idx = np.clip(np.searchsorted(support, t - LINEAR_RTOL * max(1.0, abs(support).max())),
                          0, support.size - 1)
            out[rows] = p_of[idx]
        return out

    def _rates(self, tables) -> np.ndarray:
        from ...engine.counts import rates

        d = self.design.source
        counts = tables[:, 0, :]
        if counts.shape[1] == 1:
            x = counts[:, 0]
            top = int(x.max())
            hit = self._cache.get("poisson")
            if hit is None or hit.size <= top:
                mu = d.reference * d.exposures[0]
                hit = np.array([rates.poisson_p(k, mu, self.alternative)
                                for k in range(max(top, 1) * 2 + 10)])
                self._cache["poisson"] = hit
            return hit[x]
        t1, t2 = d.exposures
        p0 = t1 / (t1 + t2)
        out = np.ones(len(tables))
        totals = counts.sum(axis=1)
        for n in np.unique(totals):
            rows = totals == n
            if n == 0:
                continue
            token = ("binomial", int(n))
            hit = self._cache.get(token)
            if hit is None:
                hit = np.array([rates.binomial_p(k, int(n), p0, self.alternative)
                                for k in range(int(n) + 1)])
                self._cache[token] = hit
            out[rows] = hit[counts[rows, 0]]
        return out


def _every_tail(support, probs, alternative) -> np.ndarray:
    """The p-value of every support value of a discrete law (the linear two-sided rule)."""
    if alternative == "higher":
        return np.minimum(1.0, np.cumsum(probs[::-1])[::-1])
    if alternative == "lower":
        return np.minimum(1.0, np.cumsum(probs))
    centre = float(np.dot(support, probs))
    dev = np.abs(support - centre)
    tol = LINEAR_RTOL * max(1.0, float(np.abs(support).max()))
    order = np.argsort(-dev, kind="stable")
    cum = np.cumsum(probs[order])
    sorted_dev = dev[order]
    last = np.searchsorted(-sorted_dev, -(dev - tol), side="right") - 1
    return np.minimum(1.0, cum[last])


# ---------------------------------------------------------------- unconditional, every outcome

def all_unconditional_p(n1: int, n2: int, test: str, alternative: str,
                        levels=(0.05,)) -> np.ndarray:
    """The unconditional p-value of every outcome (a, b) of Bin(n1) and Bin(n2).

    Outcomes are ordered by the test's statistic (most extreme first); each one's region is
    the prefix up to its last tie. The grid's best is within 1% below the supremum (nuisance
    module); values within REFINE_BELOW below one of `levels` are refined by the engine's
    search of that region, so that p <= level is decided as the engine decides it."""
    if test == "barnard":
        stat = unconditional.score_z(n1, n2)
        key = {"higher": stat, "lower": -stat, "two-sided": np.abs(stat)}[alternative]
        flat = key.ravel()
        order = np.argsort(-flat, kind="stable")
        srt = flat[order]
        tol = unconditional.STAT_RTOL * np.maximum(np.abs(srt), 1.0)
        last = np.searchsorted(-srt, -(srt - tol), side="right") - 1
    else:
        f = unconditional.fisher_p(n1, n2, alternative).ravel()
        order = np.argsort(f, kind="stable")
        srt = f[order]
        last = np.searchsorted(srt, srt * (1.0 + PROBABILITY_RTOL), side="right") - 1
    a = np.repeat(np.arange(n1 + 1), n2 + 1)[order]
    b = np.tile(np.arange(n2 + 1), n1 + 1)[order]
    thetas = nuisance.theta_grid(0.0, 1.0, nuisance.grid_size(n1 + n2))
    pis = nuisance.to_pi(thetas)
    la = nuisance.log_binomial_rows(n1, pis)[:, a]
    lb = nuisance.log_binomial_rows(n2, pis)[:, b]
    cum = np.cumsum(np.exp(la + lb), axis=1)          # (grid, outcomes) in sorted order
    grid_best = cum[:, last].max(axis=0)
    p_sorted = np.minimum(grid_best, 1.0)
    near = np.zeros(p_sorted.size, bool)
    for level in levels:
        near |= (p_sorted > level * REFINE_BELOW) & (p_sorted <= level * (1.0 + 1e-9))
    done: dict = {}
    for i in np.flatnonzero(near):
        end = int(last[i])
        if end not in done:
            mask = np.zeros((n1 + 1, n2 + 1), bool)
            mask[a[:end + 1], b[:end + 1]] = True
            log_c = unconditional.region_coefficients(mask, n1, n2)
            done[end] = max(nuisance.polynomial_sup(log_c)[0], p_sorted[i])
        p_sorted[i] = min(1.0, done[end])
    out = np.empty(p_sorted.size)
    out[order] = p_sorted
    return out.reshape(n1 + 1, n2 + 1)


# ---------------------------------------------------------------- counterparts, vectorised

def score_z_p(tables, alternative) -> np.ndarray:
    """The pooled score z of p1 - p2 for stacks of 2 x 2 tables (rows the samples)."""
    x1, f1, x2, f2 = (tables[:, i, j] for i in range(2) for j in range(2))
    n1, n2 = x1 + f1, x2 + f2
    with np.errstate(divide="ignore", invalid="ignore"):
        pooled = (x1 + x2) / (n1 + n2)
        var = pooled * (1 - pooled) * (1 / n1 + 1 / n2)
        z = np.where(var > 0, (x1 / n1 - x2 / n2) / np.sqrt(np.where(var > 0, var, 1.0)), 0.0)
    ok = (n1 > 0) & (n2 > 0)
    return np.where(ok, z_tails(np.where(ok, z, 0.0), alternative), 1.0)


def logistic_wald_p(tables, doses, alternative, iterations: int = 40) -> np.ndarray:
    """Wald z of the logistic slope for stacks of dose x (event, no event) tables, by
    Newton-Raphson on every table at once; p = 1 where the fit runs away (separation)."""
    e = tables[:, :, 0]
    n = tables.sum(axis=2)
    x = np.asarray(doses, float)[None, :]
    m = e.sum(axis=1)
    total = n.sum(axis=1)
    ok = (m > 0) & (m < total)
    frac = np.clip(m / np.maximum(total, 1), 1e-6, 1 - 1e-6)
    a = np.log(frac / (1 - frac))
    b = np.zeros_like(a)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        for _ in range(iterations):
            p = 1.0 / (1.0 + np.exp(-(a[:, None] + b[:, None] * x)))
            w = n * p * (1 - p)
            g0, g1 = (e - n * p).sum(axis=1), ((e - n * p) * x).sum(axis=1)
            i00, i01, i11 = w.sum(axis=1), (w * x).sum(axis=1), (w * x * x).sum(axis=1)
            det = i00 * i11 - i01 * i01
            da = np.where(det > 0, (i11 * g0 - i01 * g1) / det, 0.0)
            db = np.where(det > 0, (i00 * g1 - i01 * g0) / det, 0.0)
            a, b = a + da, b + db
        p = 1.0 / (1.0 + np.exp(-(a[:, None] + b[:, None] * x)))
        w = n * p * (1 - p)
        i00, i01, i11 = w.sum(axis=1), (w * x).sum(axis=1), (w * x * x).sum(axis=1)
        det = i00 * i11 - i01 * i01
        se = np.sqrt(np.where(det > 0, i00 / det, np.nan))
        z = b / se
    spread = float(np.ptp(x))
    runaway = ~np.isfinite(z) | (np.abs(b) * spread > 30) | ~(np.abs(db) < 1e-6)
    keep = ok & ~runaway
    return np.where(keep, z_tails(np.where(keep, z, 0.0), alternative), 1.0)


def rates_score_p(tables, d, alternative) -> np.ndarray:
    counts = tables[:, 0, :]
    if counts.shape[1] == 1:
        mu = d.reference * d.exposures[0]
        z = (counts[:, 0] - mu) / math.sqrt(mu)
        return z_tails(z, alternative)
    t1, t2 = d.exposures
    n = counts.sum(axis=1)
    pi0 = t1 / (t1 + t2)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(n > 0, (counts[:, 0] - n * pi0) / np.sqrt(n * pi0 * (1 - pi0)), 0.0)
    return np.where(n > 0, z_tails(z, alternative), 1.0)
