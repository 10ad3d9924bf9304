"""The sampling schemes a count design is tried under: the panel for tables, pairs, proportions.

Counts have no error law; what the exact tests assume is a way the counts came about. Each
scheme keeps the design (the row totals, the number of pairs, the number of trials) and draws
whole tables under the null and at an effect. The panel for an r x c (or 2 x 2) table:

- both margins fixed: the tables the exact test conditions on (the multivariate hypergeometric
  law); at the effect, the same tables weighted by prod theta_ij^n_ij (the conditional law of
  the rows-fixed effect given the observed column totals), drawn exactly by a backward pass
  over the network of remaining row totals;
- row totals fixed: each row's units classified independently with the pooled column
  proportions (groups of set sizes, outcome counted: the usual experiment);
- only the total fixed: N units classified independently (multinomial), rows and columns
  independent with the observed margin proportions;
- a rarer outcome: row totals fixed, the least frequent column half as likely as observed (the
  other columns rescaled), to show what sparser cells do;
- clustered units: row totals fixed, the units of a row in clusters of CLUSTER_SIZE that share
  one probability vector drawn from a Dirichlet law around the pooled proportions, with
  intraclass correlation ICC (Dirichlet-multinomial: rho = 1 / (1 + concentration)); a
  litter or a plot effect.

Under the first four the units are independent and exchangeable between rows under the null, so
given both margins the table is hypergeometric and the exact test keeps its level; under
clustering it is not (the table is overdispersed given its margins). This is the classical
list of sampling models for a two-way table (common practice: Poisson / multinomial /
product-multinomial / hypergeometric; a Poisson total gives the same conditional law as the
multinomial, so it is left out), plus sparseness and dependence, the two departures that
change the answer for counts.

Paired binary outcomes (pairs fixed): independent pairs (cell probabilities as observed, the two
discordant cells equally likely, with the observed discordant proportion); the discordant
count fixed (the binomial the exact test conditions on); heterogeneous pairs (each pair its
own chance of disagreeing, from a beta law around the observed one with intraclass correlation
ICC, each disagreement equally likely either way: still exact given the discordant count);
clustered pairs (pairs in clusters sharing a cell-probability vector: not exact).

One proportion (trials fixed): independent trials (binomial at the null value); clustered
trials (beta-binomial, clusters of CLUSTER_SIZE, intraclass correlation ICC: overdispersed,
not exact); unequal trials (every other trial's chance d above, the next d below the null
value, d = half the distance to the nearer end: the count is less spread than binomial, not
exact either).

The effect is the observed one unless the check names another (see `tables.py`).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Optional

import numpy as np
from ...lazy import stats
from ...lazy import brentq
from ...lazy import gammaln

from ...engine.tables.network import dense_size, make_layout, moves

CLUSTER_SIZE = 3
ICC = 0.2
# The fixed-margins sampler keeps one float a network state and three numbers a move.
SAMPLER_STATES = 2_000_000
SAMPLER_MOVES = 2_000_000


class TooLarge(Exception):
    """The fixed-margins sampler would need more memory than it is allowed."""


@dataclass(frozen=True)
class Scheme:
    key: str
    name: str
    words: str
    null: Callable            # (rng, size) -> (size, r, c) tables under the null
    effect: Callable          # (rng, size) -> (size, r, c) tables at the effect
    not_exact: Optional[str] = None   # why the exact test is not exact here, or None


def concentration(icc: float) -> float:
    """Dirichlet concentration giving intraclass correlation icc within a cluster."""
    return 1.0 / icc - 1.0


# ---------------------------------------------------------------- draws

def _rows_fixed(rng, size, rows, probs) -> np.ndarray:
    """(size, r, c): row i multinomial(R_i, probs[i])."""
    probs = np.asarray(probs, float)
    return np.stack([rng.multinomial(int(n), probs[i], size=size)
                     for i, n in enumerate(rows)], axis=1)


def _total_fixed(rng, size, rows, probs) -> np.ndarray:
    """(size, r, c): N units multinomial over the cells, cell (i, j) with R_i / N probs[i, j]."""
    rows = np.asarray(rows, float)
    cells = (rows / rows.sum())[:, None] * np.asarray(probs, float)
    flat = rng.multinomial(int(rows.sum()), cells.ravel() / cells.sum(), size=size)
    return flat.reshape(size, *cells.shape)


def _cluster_sizes(n: int, m: int) -> np.ndarray:
    sizes = [m] * (n // m) + ([n % m] if n % m else [])
    return np.array(sizes, dtype=np.int64)


def dirichlet_counts(rng, size, n, mean, m, kappa) -> np.ndarray:
    """(size, c): n units in clusters of m, each cluster's probabilities from
    Dirichlet(kappa * mean), then multinomial within the cluster."""
    mean = np.asarray(mean, float)
    sizes = _cluster_sizes(int(n), m)
    if sizes.size == 0:
        return np.zeros((size, mean.size), np.int64)
    g = rng.standard_gamma(np.broadcast_to(kappa * mean, (size, sizes.size, mean.size)))
    tot = g.sum(axis=-1, keepdims=True)
    pv = np.where(tot > 0, g / np.where(tot > 0, tot, 1.0), mean)
    counts = rng.multinomial(np.broadcast_to(sizes, (size, sizes.size)), pv)
    return counts.sum(axis=1)


def _clustered_rows(rng, size, rows, probs, m, kappa) -> np.ndarray:
    return np.stack([dirichlet_counts(rng, size, n, probs[i], m, kappa)
                     for i, n in enumerate(rows)], axis=1)


def _embed(sub, rk, ck, shape) -> np.ndarray:
    out = np.zeros((sub.shape[0],) + shape, np.int64)
    out[:, np.flatnonzero(rk)[:, None], np.flatnonzero(ck)[None, :]] = sub
    return out


def _patefield(rng, size, rows, cols) -> np.ndarray:
    """(size, r, c) tables with both margins fixed, uniformly over the hypergeometric law."""
    rows, cols = np.asarray(rows), np.asarray(cols)
    rk, ck = rows > 0, cols > 0
    if rk.sum() < 2 or ck.sum() < 2:     # one table only
        t = np.zeros((len(rows), len(cols)), np.int64)
        if rk.sum() == 1:
            t[np.flatnonzero(rk)[0]] = cols
        elif ck.sum() == 1:
            t[:, np.flatnonzero(ck)[0]] = rows
        return np.broadcast_to(t, (size,) + t.shape).copy()
    sub = stats.random_table(rows[rk], cols[ck]).rvs(size=size, method="patefield",
                                                     random_state=rng)
    return _embed(np.asarray(sub, np.int64), rk, ck, (len(rows), len(cols)))


class FixedMargins:
    """Tables with given margins, P(table) proportional to hypergeometric x prod theta^n_ij.

    A backward pass over the network of remaining row totals (the layout of the exact engine)
    gives, for every state, log E[prod theta^n over the cells still to fill]; a forward pass
    then places one cell at a time with its exact conditional probability, for many tables at
    once. theta = 1 everywhere is the hypergeometric law itself; a zero theta forbids the cell.
    """

    def __init__(self, rows, cols, theta):
        rows, cols = np.asarray(rows, np.int64), np.asarray(cols, np.int64)
        theta = np.asarray(theta, float)
        self.shape = (len(rows), len(cols))
        self.rk, self.ck = rows > 0, cols > 0
        r_, c_, th = rows[self.rk], cols[self.ck], theta[self.rk][:, self.ck]
        self.flip = dense_size(r_) > dense_size(c_)
        if self.flip:
            r_, c_, th = c_, r_, th.T
        self.trivial = len(r_) < 2 or len(c_) < 2
        self.rows, self.cols = r_, c_
        if self.trivial:
            return
        layout = make_layout(r_, c_, fold=False)
        self.layout = layout
        lf = gammaln(np.arange(int(r_.sum()) + 2, dtype=float) + 1.0)
        with np.errstate(divide="ignore"):
            log_theta = np.log(th)
        r = len(r_)
        h_next = np.zeros(1)                 # aligned with layout.reach[stage + 1]
        self.steps = [None] * layout.stages
        kept = 0
        for stage in range(layout.stages - 1, -1, -1):
            i, j = stage % r, stage // r
            codes = layout.reach[stage]
            rep, x, nxt, logw = moves(layout, stage, codes, lf)
            kept += rep.size
            if kept > SAMPLER_MOVES:
                raise TooLarge(f"more than {SAMPLER_MOVES:,} moves")
            tilt = np.where(x > 0, x * log_theta[i, j] if np.isfinite(log_theta[i, j])
                            else -np.inf, 0.0)
            val = logw + tilt + h_next[layout.position(stage + 1, nxt)]
            starts = np.flatnonzero(np.r_[True, rep[1:] != rep[:-1]])
            h = np.logaddexp.reduceat(val, starts)
            with np.errstate(invalid="ignore"):
                prob = np.exp(val - h[rep])
            prob = np.nan_to_num(prob, nan=0.0)
            cum = np.cumsum(prob)
            before = np.repeat(np.r_[0.0, cum[starts[1:] - 1]], np.diff(np.r_[starts, rep.size]))
            within = cum - before
            within[np.r_[starts[1:] - 1, rep.size - 1]] = 1.0
            self.steps[stage] = (codes, rep + within, x, nxt)
            h_next = h
        if not np.isfinite(h_next[0]):
            raise ValueError("no table with these margins has positive weight")

    @staticmethod
    def small_enough(rows, cols) -> bool:
        """Whether the network of remaining totals is small enough to be built at all."""
        rows, cols = np.asarray(rows), np.asarray(cols)
        return min(dense_size(rows[rows > 0]), dense_size(cols[cols > 0])) <= SAMPLER_STATES

    def draw(self, rng, size: int) -> np.ndarray:
        r, c = len(self.rows), len(self.cols)
        sub = np.zeros((size, r, c), np.int64)
        if self.trivial:
            sub[:] = _single_table(self.rows, self.cols)
        else:
            state = np.full(size, self.layout.start_code(), np.int64)
            for stage, (codes, cum, x, nxt) in enumerate(self.steps):
                idx = np.searchsorted(codes, state)
                pick = np.searchsorted(cum, idx + rng.random(size), side="right")
                pick = np.minimum(pick, cum.size - 1)
                sub[:, stage % r, stage // r] = x[pick]
                state = nxt[pick]
        if self.flip:
            sub = sub.transpose(0, 2, 1)
        return _embed(sub, self.rk, self.ck, self.shape)


def _fixed_margins(rows, cols, theta):
    """The fixed-margins sampler at theta, or None when it would be too large."""
    if not FixedMargins.small_enough(rows, cols):
        return None
    try:
        return FixedMargins(rows, cols, theta)
    except (TooLarge, MemoryError):
        return None


def _single_table(rows, cols) -> np.ndarray:
    t = np.zeros((len(rows), len(cols)), np.int64)
    if len(rows) == 1:
        t[0] = cols
    else:
        t[:, 0] = rows
    return t


# ---------------------------------------------------------------- effects for tables

def halved(probs, j: int) -> np.ndarray:
    """Column j half as likely, the rest rescaled (each row of probs sums to 1)."""
    p = np.array(probs, float)
    p[..., j] /= 2.0
    return p / p.sum(axis=-1, keepdims=True)


def rarest_column(table) -> int:
    """The least frequent column among those observed (ties: the last)."""
    cols = np.asarray(table).sum(axis=0).astype(float)
    cols[cols == 0] = np.inf
    return int(len(cols) - 1 - np.argmin(cols[::-1]))


def odds_ratio_rows(rows, first: float, psi: float) -> np.ndarray:
    """(2, 2) row probabilities with odds ratio psi whose pooled first-column probability,
    weighted by the row totals, is `first`."""
    r1, r2 = float(rows[0]), float(rows[1])
    n = r1 + r2

    def pi1(p2):
        o = psi * p2 / (1.0 - p2)
        return o / (1.0 + o)

    p2 = brentq(lambda p: r1 * pi1(p) + r2 * p - n * first, 1e-300, 1.0 - 1e-15, xtol=1e-15)
    p1 = pi1(p2)
    return np.array([[p1, 1.0 - p1], [p2, 1.0 - p2]])


def table_panel(table, effect_rows, effect_rarer, theta, m=CLUSTER_SIZE, icc=ICC):
    """The five schemes for an r x c table. effect_rows: each row's probabilities at the
    effect; effect_rarer: the same under the rarer outcome; theta: the odds weights of the
    effect given both margins. The fixed-margins scheme is left out (None in its place)
    when its sampler would be too large."""
    t = np.asarray(table, np.int64)
    rows, cols = t.sum(axis=1), t.sum(axis=0)
    n = int(t.sum())
    pooled = cols / n
    j = rarest_column(t)
    rarer = halved(pooled, j)
    kappa = concentration(icc)
    common = np.broadcast_to(pooled, t.shape)
    rare_rows = np.broadcast_to(rarer, t.shape)
    label = f"column {j + 1}"
    out = []
    tilted = _fixed_margins(rows, cols, theta)
    if tilted is not None:
        out.append(Scheme("margins-fixed", "both margins fixed",
                          "row and column totals as observed: the tables the exact test "
                          "conditions on (hypergeometric)",
                          lambda rng, size: _patefield(rng, size, rows, cols), tilted.draw))
    else:
        out.append(None)
    out += [
        Scheme("rows-fixed", "row totals fixed",
               "each row's units classified independently with the pooled column "
               "proportions (groups of set sizes, outcome counted)",
               lambda rng, size: _rows_fixed(rng, size, rows, common),
               lambda rng, size: _rows_fixed(rng, size, rows, effect_rows)),
        Scheme("total-fixed", "only the total fixed",
               f"{n} units classified independently (multinomial); rows and columns "
               "independent with the observed margin proportions",
               lambda rng, size: _total_fixed(rng, size, rows, common),
               lambda rng, size: _total_fixed(rng, size, rows, effect_rows)),
        Scheme("rarer-outcome", "a rarer outcome",
               f"row totals fixed; the least frequent outcome ({label}) half as likely "
               f"({pooled[j]:.3g} to {rarer[j]:.3g}), the others rescaled",
               lambda rng, size: _rows_fixed(rng, size, rows, rare_rows),
               lambda rng, size: _rows_fixed(rng, size, rows, effect_rarer)),
        Scheme("clustered", "clustered units",
               f"row totals fixed; units in clusters of {m} sharing one probability vector "
               f"(Dirichlet around the pooled proportions, intraclass correlation {icc:g})",
               lambda rng, size: _clustered_rows(rng, size, rows, common, m, kappa),
               lambda rng, size: _clustered_rows(rng, size, rows, effect_rows, m, kappa),
               not_exact="units of a cluster share their chances, so given its margins the "
                         "table is not hypergeometric"),
    ]
    return out


# ---------------------------------------------------------------- paired outcomes

def _pairs_table(a, b, c, d) -> np.ndarray:
    return np.stack([np.stack([a, b], axis=-1), np.stack([c, d], axis=-1)], axis=-2)


def paired_panel(table, share: float, m=CLUSTER_SIZE, icc=ICC):
    """Schemes for paired binary outcomes; `share` is the effect's probability that a
    discordant pair is the table's b = n12, first at level 1 / second at level 2 (1/2 under the
    null)."""
    t = np.asarray(table, np.int64)
    n = int(t.sum())
    a, b, c, d = (float(v) for v in t.ravel())
    disc = (b + c) / n
    conc_a = a / (a + d) if a + d > 0 else 0.5
    kappa = concentration(icc)

    def cells(s):
        return np.array([(1 - disc) * conc_a, disc * s, disc * (1 - s), (1 - disc) * (1 - conc_a)])

    def independent(s):
        return lambda rng, size: rng.multinomial(n, cells(s), size=size).reshape(size, 2, 2)

    def fixed(s):
        mm = int(b + c)

        def draw(rng, size):
            bb = rng.binomial(mm, s, size)
            aa = rng.binomial(n - mm, conc_a, size)
            return _pairs_table(aa, bb, mm - bb, n - mm - aa)
        return draw

    def heterogeneous(s):
        def draw(rng, size):
            g1 = rng.standard_gamma(kappa * disc, (size, n))
            g2 = rng.standard_gamma(kappa * (1 - disc), (size, n))
            tot = g1 + g2
            chance = np.where(tot > 0, g1 / np.where(tot > 0, tot, 1.0), disc)
            discordant = rng.random((size, n)) < chance
            first = rng.random((size, n)) < s
            yes = rng.random((size, n)) < conc_a
            bb = (discordant & first).sum(axis=1)
            cc = (discordant & ~first).sum(axis=1)
            aa = (~discordant & yes).sum(axis=1)
            return _pairs_table(aa, bb, cc, n - aa - bb - cc)
        return draw

    def clustered(s):
        return lambda rng, size: dirichlet_counts(rng, size, n, cells(s), m,
                                                  kappa).reshape(size, 2, 2)

    return [
        Scheme("independent-pairs", "independent pairs",
               f"{n} pairs, each discordant with the observed chance {disc:.3g}, the two "
               "kinds of disagreement equally likely under the null",
               independent(0.5), independent(share)),
        Scheme("discordant-fixed", "discordant count fixed",
               f"{int(b + c)} discordant pairs as observed, each one way or the other: the "
               "binomial the exact test conditions on", fixed(0.5), fixed(share)),
        Scheme("heterogeneous-pairs", "heterogeneous pairs",
               f"each pair its own chance of disagreeing (beta around {disc:.3g}, intraclass "
               f"correlation {icc:g}); each disagreement still equally likely either way",
               heterogeneous(0.5), heterogeneous(share)),
        Scheme("clustered-pairs", "clustered pairs",
               f"pairs in clusters of {m} sharing one vector of cell chances (Dirichlet around "
               f"the null's, intraclass correlation {icc:g})", clustered(0.5), clustered(share),
               not_exact="pairs of a cluster share their chances, so given the discordant "
                         "count the split is not binomial(m, 1/2)"),
    ]


# ---------------------------------------------------------------- one proportion

def _two_counts(k, n) -> np.ndarray:
    k = np.asarray(k, np.int64)
    return np.stack([k, n - k], axis=-1)[:, None, :]


def unequal_chances(n: int, p: float) -> np.ndarray:
    """Trial chances alternating p - d, p + d (the middle trial of an odd n at p), averaging
    p, with d half the distance from p to the nearer of 0 and 1."""
    d = min(p, 1.0 - p) / 2.0
    s = np.where(np.arange(n) % 2 == 0, -1.0, 1.0)
    if n % 2:
        s[-1] = 0.0
    return p + d * s


def proportion_panel(n: int, p0: float, p1: float, m=CLUSTER_SIZE, icc=ICC):
    """Schemes for k successes in n trials; p0 the null value, p1 the effect's."""
    kappa = concentration(icc)

    def binomial(p):
        return lambda rng, size: _two_counts(rng.binomial(n, p, size), n)

    def clustered(p):
        return lambda rng, size: dirichlet_counts(rng, size, n, [p, 1 - p], m,
                                                  kappa)[:, None, :]

    def unequal(p):
        chances = unequal_chances(n, p)
        return lambda rng, size: _two_counts((rng.random((size, n)) < chances).sum(axis=1), n)

    return [
        Scheme("independent-trials", "independent trials",
               f"{n} trials, each a success with the same chance (binomial)",
               binomial(p0), binomial(p1)),
        Scheme("clustered-trials", "clustered trials",
               f"trials in clusters of {m} sharing one chance (beta around the null value, "
               f"intraclass correlation {icc:g}; beta-binomial)", clustered(p0), clustered(p1),
               not_exact="trials of a cluster share their chance: the count is more spread "
                         "than binomial"),
        Scheme("unequal-trials", "unequal trials",
               "independent trials whose chances alternate above and below the null value "
               "(by half the distance to the nearer end), averaging it", unequal(p0),
               unequal(p1),
               not_exact="trials of unequal chances: the count is less spread than binomial"),
    ]
