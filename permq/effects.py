"""Effect sizes beside each estimate, from the bound design and the result (plain data out).

`effect_sizes(design, result)` gives a list of dicts for `Result.extra["effect_sizes"]`:
`{"key", "name", "value", "interval", "level", "method", "source"}`. `interval` is None where
no permutation interval exists; `method` then says so. `source` names the published
definition (a key of `render/methods.py`'s SOURCES).

- two samples: the standardised difference d (difference in means over the pooled sd); for
  `means` its interval is the exact permutation interval of the shift over the same pooled sd
  (the sd held at its observed value, since a shift leaves it unchanged); for `ranks` also the
  probability of superiority P(X > Y) + P(X = Y) / 2;
- paired and one sample: d_z (mean difference over the sd of the differences), its interval
  likewise for `means`; the matched-pairs rank-biserial correlation for `ranks`; the share of
  positive differences for `signs`;
- three or more groups: eta-squared (between-group over total sum of squares of the values),
  epsilon-squared for ranks (the same ratio on the mid-ranks, which is H / (N - 1));
  ordered ranks: the share of concordant pairs across groups (J over its maximum);
- blocks: Kendall's W for rankings within blocks (Friedman, Page); partial eta-squared for
  the F within blocks;
- association: the correlation is its own effect size; a slope gets the standardised slope
  (b sd(x) / sd(y)) with the exact slope interval on the same scale;
- tables: the proportion of each outcome in each arm (arms: the `by` column's levels for a
  table from columns, the rows of an inline table), Cramer's V, and for two arms of a
  two-outcome table the difference in proportions (first arm minus the reference, the second);
  paired outcomes: the marginal proportions and their difference; one proportion: Cohen's h
  against the reference value.
"""
from __future__ import annotations

import math

import numpy as np

from .bind import designs
from .normal.degenerate import no_spread
from .result import _num

MEANS_INTERVAL = ("the exact permutation interval of the shift, divided by the same sd "
                  "(held at its observed value)")
NO_INTERVAL = "no permutation interval"


def attach(design, result) -> None:
    result.extra["effect_sizes"] = effect_sizes(design, result)
    arms = arm_proportions(design)
    if arms:
        result.extra["arm_proportions"] = arms


def effect_sizes(design, result) -> list:
    """The family's own effect sizes (`Family.effect_sizes`, naming the pieces below), or
    the design's plain ones where a family declares none."""
    from .families.registry import family_for

    chosen = getattr(family_for(design), "effect_sizes", None)
    if chosen is None:
        chosen = next((fn for kind, fn in _BY_DESIGN if isinstance(design, kind)), None)
    return [s for s in chosen(design, result) if s is not None] if chosen else []


def pieces(*names: str):
    """A family's effect sizes: the pieces of this module named, in order
    (e.g. pieces("standardised_difference_with_interval", "superiority"))."""
    def sizes(design, result):
        out = []
        for name in names:
            found = globals()[name](design, result)
            out.extend(found if isinstance(found, list) else [found])
        return out
    return sizes


def _size(key, name, value, source, interval=None, level=None, method=NO_INTERVAL) -> dict:
    iv = None if interval is None else [_num(float(interval[0])), _num(float(interval[1]))]
    return {"key": key, "name": name, "value": _finite(value), "interval": iv,
            "level": level, "method": method, "source": source}


def _finite(v):
    v = float(v)
    return v if math.isfinite(v) else None


def _scaled_interval(result, scale, family_has_interval: bool):
    est = result.estimate
    if not family_has_interval or est is None or est.interval is None or not scale > 0:
        return None, None, NO_INTERVAL
    lo, hi = est.interval
    return (lo / scale, hi / scale), est.level, MEANS_INTERVAL


# ---------------------------------------------------------------- two samples

def _difference(design, result, with_interval: bool):
    x, y = design.x, design.y
    nx, ny = len(x), len(y)
    if nx > 1 and ny > 1:
        sp = math.sqrt(((nx - 1) * np.var(x, ddof=1) + (ny - 1) * np.var(y, ddof=1))
                       / (nx + ny - 2))
        if sp > 0 and not (no_spread(x) and no_spread(y)):     # zero spread: no d
            iv, lvl, how = _scaled_interval(result, sp, with_interval)
            return _size("d", f"standardised difference d ({design.effect}, pooled sd)",
                         (x.mean() - y.mean()) / sp, "cohen-1988", iv, lvl, how)
    return None


def standardised_difference(design, result):
    return _difference(design, result, False)


def standardised_difference_with_interval(design, result):
    """d with the family's exact interval of the shift over the same pooled sd (means)."""
    return _difference(design, result, True)


def probability_of_superiority(design, result):
    x, y = design.x, design.y
    return _size("superiority", f"probability of superiority P({design.labels[0]} > "
                 f"{design.labels[1]}) + P(=) / 2", superiority(x, y), "vargha-2000")


def _two_sample(design, result):
    return [standardised_difference(design, result)]


def superiority(x, y) -> float:
    """P(X > Y) + P(X = Y) / 2 over all pairs (the rank-sum U over n1 n2)."""
    s = np.sign(np.subtract.outer(np.asarray(x, float), np.asarray(y, float)))
    return float((s.mean() + 1) / 2)


# ---------------------------------------------------------------- paired and one sample

def _dz(design, result, with_interval: bool):
    d = design.d
    if len(d) > 1:
        sd = float(np.std(d, ddof=1))
        if sd > 0 and not no_spread(d):           # equal as recorded: 1e-16 of noise is no sd
            iv, lvl, how = _scaled_interval(result, sd, with_interval)
            return _size("dz", f"standardised mean difference d_z ({design.effect}, "
                         "sd of the differences)", d.mean() / sd, "cohen-1988", iv, lvl, how)
    return None


def standardised_mean_difference(design, result):
    return _dz(design, result, False)


def standardised_mean_difference_with_interval(design, result):
    return _dz(design, result, True)


def matched_rank_biserial(design, result):
    return _size("rank_biserial", "matched-pairs rank-biserial correlation "
                 "(W+ - W-) / (W+ + W-)", rank_biserial(design.d), "kerby-2014")


def positive_share(design, result):
    d = design.d
    pos, neg = int(np.sum(d > 0)), int(np.sum(d < 0))
    if not pos + neg:
        return None
    return _size("positive_share", "share of positive differences (zeros left out)",
                 pos / (pos + neg), "dixon-mood-1946")


def _one_sample(design, result):
    return [standardised_mean_difference(design, result)]


def rank_biserial(d) -> float:
    """(W+ - W-) / (W+ + W-) with mid-ranks of |d| (zeros keep their ranks, carry no sign)."""
    d = np.asarray(d, float)
    r = _midranks(np.abs(d))
    wp, wm = float(r[d > 0].sum()), float(r[d < 0].sum())
    return (wp - wm) / (wp + wm) if wp + wm > 0 else math.nan


def _midranks(v) -> np.ndarray:
    from .engine.core.scores import midranks       # the one definition

    return midranks(np.asarray(v, float))


# ---------------------------------------------------------------- groups, order, blocks

def epsilon_squared(design, result):
    v, g = np.asarray(design.values, float), np.asarray(design.groups)
    return _size("epsilon_squared", "epsilon-squared (H / (N - 1), mid-ranks)",
                 _eta_squared(_midranks(v), g), "tomczak-2014")


def eta_squared(design, result):
    v, g = np.asarray(design.values, float), np.asarray(design.groups)
    return _size("eta_squared", "eta-squared (between-group over total sum of squares)",
                 _eta_squared(v, g), "cohen-1988")


def concordance_share(design, result):
    v, g = np.asarray(design.values, float), np.asarray(design.groups)
    return _size("concordance", "share of concordant pairs along the order "
                 "(J over its maximum, ties counted half)", _jt_share(v, g), "jonckheere-1954")


def _groups(design, result):
    return [] if design.kind == "blocked" else [eta_squared(design, result)]


def _eta_squared(v, g) -> float:
    grand = v.mean()
    total = float(((v - grand) ** 2).sum())
    if total <= 0:
        return math.nan
    between = sum(float((g == k).sum()) * (v[g == k].mean() - grand) ** 2
                  for k in np.unique(g))
    return between / total


def _jt_share(v, g) -> float:
    levels = np.unique(g)
    j, most = 0.0, 0.0
    for a in range(len(levels)):
        for b in range(a + 1, len(levels)):
            lo, hi = v[g == levels[a]], v[g == levels[b]]
            j += superiority(hi, lo) * len(lo) * len(hi)
            most += len(lo) * len(hi)
    return j / most if most else math.nan


def kendalls_w(design, result):
    v, g, b = np.asarray(design.values, float), np.asarray(design.groups), design.blocks
    k = len(design.labels)
    if k < 3:
        return None
    return _size("kendall_w", "Kendall's W (agreement of the rankings within blocks, "
                 "tie-corrected)", kendall_w(v, g, b, k), "kendall-1939")


def partial_eta_squared(design, result):
    v, g, b = np.asarray(design.values, float), np.asarray(design.groups), design.blocks
    if len(design.labels) < 3:
        return None
    return _size("partial_eta_squared", "partial eta-squared (treatments over treatments "
                 "plus error, additive model)", _partial_eta(v, g, b), "cohen-1988")


def kendall_w(v, g, b, k) -> float:
    """W = 12 sum (R_j - mean R)^2 / (m^2 (k^3 - k) - m sum (t^3 - t)) for m complete blocks."""
    blocks = np.unique(b)
    m = len(blocks)
    totals = np.zeros(k)
    ties = 0.0
    for blk in blocks:
        inside = b == blk
        r = _midranks(v[inside])
        np.add.at(totals, g[inside], r)
        _, counts = np.unique(v[inside], return_counts=True)
        ties += float((counts ** 3 - counts).sum())
    denom = m * m * (k ** 3 - k) - m * ties
    return 12 * float(((totals - totals.mean()) ** 2).sum()) / denom if denom > 0 else math.nan


def _partial_eta(v, g, b) -> float:
    grand = v.mean()
    groups, blocks = np.unique(g), np.unique(b)
    g_mean = {k: v[g == k].mean() for k in groups}
    b_mean = {k: v[b == k].mean() for k in blocks}
    fitted = np.array([g_mean[gi] + b_mean[bi] - grand for gi, bi in zip(g, b)])
    ss_error = float(((v - fitted) ** 2).sum())
    ss_treat = sum(float((g == k).sum()) * (g_mean[k] - grand) ** 2 for k in groups)
    return ss_treat / (ss_treat + ss_error) if ss_treat + ss_error > 0 else math.nan


# ---------------------------------------------------------------- association

def standardised_slope(design, result):
    if design.covariates is not None:
        return []
    sx, sy = float(np.std(design.x, ddof=1)), float(np.std(design.y, ddof=1))
    if not sy > 0:
        return []
    scale = sy / sx
    iv, lvl, how = _scaled_interval(result, scale, True)
    if iv is not None:
        how = "the exact slope interval on the same scale (sds held at their observed values)"
    y_name, x_name = design.names
    return [_size("standardised_slope", f"standardised slope of {y_name} on {x_name} "
                  "(b sd(x) / sd(y))", result.estimate.value / scale if result.estimate else
                  math.nan, "cohen-1988", iv, lvl, how)]


# ---------------------------------------------------------------- tables

def _table(design, result):
    t = np.asarray(design.table, float)
    if design.form == "proportion":
        p, p0 = t[0, 0] / t.sum(), design.reference
        h = 2 * math.asin(math.sqrt(p)) - 2 * math.asin(math.sqrt(p0))
        return [_size("cohen_h", f"Cohen's h (proportion against {p0:g})", h, "cohen-1988")]
    if design.form == "paired":
        n = t.sum()
        first, second = t[1].sum() / n, t[:, 1].sum() / n
        level = design.col_labels[1].split(" ")[-1]
        a, b = design.names if design.names else ("first", "second")
        return [_size("marginal_difference", f"difference in the proportion '{level}', {a} - "
                      f"{b} ({first:.3g} against {second:.3g})", first - second, "mcnemar-1947")]
    out = []
    if shares_of(design).shape == (2, 2):
        arms, outcomes, _ = arms_of(design)
        shares = shares_of(design)
        out.append(_size("proportion_difference",
                         f"difference in the proportion '{outcomes[0]}': '{arms[0]}' - "
                         f"'{arms[1]}' (reference '{arms[1]}')", shares[0, 0] - shares[1, 0],
                         "common-practice"))
    out.append(_size("cramer_v", "Cramer's V", cramer_v(t), "cramer-1946"))
    return out


def arm_proportions(design) -> list:
    """[{"arm", "n", "proportions": {outcome: share}}] for a table (not paired outcomes or one
    proportion)."""
    if not isinstance(design, designs.TableDesign) or design.form != "table":
        return []
    arms, outcomes, counts = arms_of(design)
    shares = shares_of(design)
    return [{"arm": str(a), "n": int(c.sum()),
             "proportions": {str(o): float(s) for o, s in zip(outcomes, row)}}
            for a, c, row in zip(arms, counts, shares)]


def shares_of(design) -> np.ndarray:
    _, _, counts = arms_of(design)
    totals = counts.sum(axis=1, keepdims=True)
    return np.divide(counts, totals, out=np.zeros_like(counts), where=totals > 0)


def arms_of(design):
    """(arm labels, outcome labels, counts arms x outcomes): the `by` column's levels are the
    arms of a table from columns (the table's columns); an inline table's rows are its arms."""
    t = np.asarray(design.table, float)
    if design.names:
        return design.col_labels, design.row_labels, t.T
    return design.row_labels, design.col_labels, t


def cramer_v(t) -> float:
    t = np.asarray(t, float)
    n = t.sum()
    expected = np.outer(t.sum(axis=1), t.sum(axis=0)) / n
    with np.errstate(divide="ignore", invalid="ignore"):
        chi2 = float(np.nansum((t - expected) ** 2 / expected))
    m = min(t.shape) - 1
    return math.sqrt(chi2 / (n * m)) if n > 0 and m > 0 else math.nan


_BY_DESIGN = [(designs.TwoSampleDesign, _two_sample), (designs.OneSampleDesign, _one_sample),
              (designs.GroupsDesign, _groups), (designs.TableDesign, _table)]
