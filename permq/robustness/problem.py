"""A bound design reduced to what the simulation needs: its layout, its test, its effect.

`problem_for(design)` keeps the design as the user has it (group sizes, dose scores, the
values of x) and the family's statistic, and reads off the observed effect in standard
deviations, so that simulated data sets are drawn as

    y = pattern + errors,   errors with variance 1 (on average) from one law of the panel,

where `pattern` is zero under the null and the observed (or the requested) effect otherwise.
Every test here is unchanged by a change of location and scale of y, so working in
standard-deviation units loses nothing. Blocked designs are simulated without block effects
and the adjusted slope without covariate effects: every test of them is unchanged by adding
a constant within each block, or any combination of the covariates, to y.

Permutation statistics (`form`):
- "linear": T = sum_i w_pi(i) a_i, arrangements within `strata` when there are blocks;
- "signs": T = sum_i s_i a_i over sign flips;
- "quadratic": sum_g S_g^2 / n_g of the group score sums (within `strata` when blocked);
- "quadform": S' M S of the group score sums, `matrix` M (incomplete blocks, within `strata`);
- "pairs": Kendall's S between y and the fixed x (Kendall's tau; Jonckheere-Terpstra, with
  x the group order), T = sum_{i<j} sign(x_j - x_i) sign(y_j - y_i);
- "residual": the t of the slope in the full model, recomputed on permuted residuals of the
  reduced model (Freedman-Lane); `basis` holds the reduced model's orthonormal columns and
  the predictor made orthogonal to them.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Optional

import numpy as np

from ..bind import designs
from ..errors import PlanError
from . import laws as L
from .spec import Check, check_for


@dataclass(frozen=True)
class Problem:
    kind: str                  # two-sample, paired, one-sample, k-sample, ordered, slope
    family: str                # the test, in the family's words (means, ranks, friedman, ...)
    alternative: str
    form: str                  # the permutation statistic's form (spec.Check.form)
    codes: np.ndarray          # group code of each unit (zeros without groups)
    weights: Optional[np.ndarray]   # linear statistics: T = sum_i w_pi(i) a_i
    x: Optional[np.ndarray]    # the predictor (slopes) or the dose score of each unit (ordered)
    sd: float                  # the standard-deviation unit, in the data's units
    sd_words: str
    effect: float              # the observed effect, in the data's units
    effect_words: str
    observed_pattern: np.ndarray   # the observed effect per unit, in sd units
    unit_pattern: np.ndarray       # a shift of 1 sd, per unit
    design_words: str
    per_sd: float              # the effect (in the data's units) that a shift of 1 sd stands for
    strata: Optional[np.ndarray] = None    # block code of each unit: arrangements stay within
    basis: Optional[np.ndarray] = None     # "residual": Q of the reduced model, then x made
    residual_df: int = 0                   #   orthogonal to it; the full model's residual df
    check: Optional[Check] = None          # the family's check: scores, counterpart, reported
    clusters: Optional[np.ndarray] = None  # clustered errors without units: cluster of each row
    matrix: Optional[np.ndarray] = None    # "quadform": T = S' M S of the group score sums
    unit_sizes: Optional[np.ndarray] = None    # with `units`: rows of each unit (the problem's
                                               #   units are then the design's units)

    @property
    def n(self) -> int:
        return len(self.codes)

    @property
    def sizes(self) -> np.ndarray:
        return np.bincount(self.codes)


def problem_for(design) -> Problem:
    if isinstance(design, designs.ManyDesign):
        _several(design)
    check = check_for(design)
    if isinstance(design, designs.TwoSampleDesign):
        pb = _two_sample(design, check)
    elif isinstance(design, designs.OneSampleDesign):
        pb = _one_sample(design, check)
    elif isinstance(design, designs.GroupsDesign):
        pb = _groups(design, check)
    elif isinstance(design, designs.AssociationDesign):
        pb = _slope(design, check)
    elif isinstance(design, designs.ControlDesign):
        from .control import control_problem

        pb = control_problem(design, check)
    elif isinstance(design, designs.AdjustedDesign):
        pb = _adjusted(design, check)
    else:
        raise PlanError(f"robustness is not available for {design.kind} analyses",
                        hint="it covers comparisons, relations and tables")
    alternative = pb.alternative
    if check.reversed:
        alternative = {"higher": "lower", "lower": "higher"}.get(alternative, alternative)
    pb = _with_clusters(pb, design)
    if check.matrix is not None:
        pb = replace(pb, matrix=np.asarray(check.matrix(design), dtype=float))
    return replace(pb, check=check, family=check.test or design.settings.family,
                   alternative=alternative)


def _with_clusters(pb: Problem, design) -> Problem:
    """The clusters of the clustered-errors law: the design's units, or runs of rows."""
    units = getattr(design, "units", None)
    if units is not None:
        return replace(pb, unit_sizes=np.asarray(units.sizes, dtype=np.int64),
                       design_words=f"{pb.design_words}; {units.count} units of "
                                    f"'{units.column}' ({units.rows} rows), unit means")
    if pb.kind in L.CLUSTER_KINDS and pb.form != "residual":
        return replace(pb, clusters=L.row_clusters(pb.codes, pb.x if pb.kind == "slope"
                                                   else None))
    return pb


def _several(design):
    """Several tests at once: the check takes one response or one pair at a time."""
    if design.pairwise:
        raise PlanError("robustness checks one comparison at a time, not every pair",
                        hint=f'name two levels: robustness compare {design.response} by '
                             f'{design.group} levels "{design.labels[0]}", '
                             f'"{design.labels[1]}"')
    raise PlanError("robustness checks one response at a time",
                    hint=f"name one response: robustness compare {design.names[0]} by "
                         f"{design.group}" if design.names and design.group else
                         "name one response")


def pattern_for(problem: Problem, shift) -> tuple[np.ndarray, float, float]:
    """(pattern per unit in sd units, shift in the data's units, shift in sd) for `shift`:
    None (the observed effect), or (size, in_sd) as the statement wrote it."""
    if shift is not None and shift[1]:
        size = float(shift[0])
        return size * problem.unit_pattern, size * problem.per_sd, size
    if not np.isfinite(problem.per_sd) or problem.per_sd <= 0:
        raise PlanError(f"the {problem.sd_words} is zero here, so a shift cannot be put in "
                        "standard deviations", hint="give it in standard deviations: shift 1 sd")
    if shift is None:
        return problem.observed_pattern, problem.effect, problem.effect / problem.per_sd
    size = float(shift[0])
    return size / problem.per_sd * problem.unit_pattern, size, size / problem.per_sd


def _two_sample(d, check: Check) -> Problem:
    x, y = d.x, d.y
    n1, n2 = len(x), len(y)
    if n1 < 2 or n2 < 2:
        raise PlanError("robustness needs at least two values in each group")
    ss = ((x - x.mean()) ** 2).sum() + ((y - y.mean()) ** 2).sum()
    sd = float(np.sqrt(ss / (n1 + n2 - 2)))
    effect, words = check.effect(d)
    codes = np.r_[np.zeros(n1, np.int64), np.ones(n2, np.int64)]
    unit = (codes == 0).astype(float)
    weights = unit if check.weights is None else check.weights(d)
    return Problem("two-sample", "", d.settings.alternative, check.form, codes, weights, None,
                   sd, "pooled within-group sd", effect, words,
                   unit * effect / _safe(sd), unit,
                   f"two samples of {n1} and {n2} ({d.labels[0]}, {d.labels[1]})", sd)


def _one_sample(d, check: Check) -> Problem:
    v = d.d
    if len(v) < 2:
        raise PlanError("robustness needs at least two values")
    sd = float(v.std(ddof=1))
    effect, words = check.effect(d)
    n = len(v)
    what = f"{n} pairs" if d.kind == "paired" else f"one sample of {n}"
    ones = np.ones(n)
    return Problem(d.kind, "", d.settings.alternative, check.form, np.zeros(n, np.int64), None,
                   None, sd, "sd of the differences" if d.kind == "paired" else "sd",
                   effect, words, ones * effect / _safe(sd), ones, what, sd)


def _groups(d, check: Check) -> Problem:
    if d.kind == "blocked":
        return _blocked(d, check)
    v, g = d.values, d.groups
    sizes = np.bincount(g)
    k, N = len(sizes), len(v)
    if N <= k:
        raise PlanError("robustness needs a group with two or more values")
    means = np.bincount(g, weights=v) / sizes
    sd = float(np.sqrt(((v - means[g]) ** 2).sum() / (N - k)))
    shape = " + ".join(str(s) for s in sizes)
    if d.kind == "ordered":
        s = d.scores[g]
        sc = s - s.mean()
        slope = float((sc * v).sum() / (sc * sc).sum())
        unit = sc / np.ptp(d.scores)
        form = check.form
        weights = pair_weights(g) if form == "pairs" else sc
        return Problem("ordered", "", d.settings.alternative, form, g.copy(), weights, s, sd,
                       "pooled within-group sd", slope,
                       "trend slope (per unit of dose score)", slope * sc / _safe(sd), unit,
                       f"{k} ordered groups of {shape}", sd / float(np.ptp(d.scores)))
    dev = (means - v.mean())[g]
    unit = (np.arange(k) / (k - 1) - 0.5)[g]
    return Problem("k-sample", "", d.settings.alternative, check.form, g.copy(), None, None,
                   sd, "pooled within-group sd", float(np.ptp(means)),
                   "range of the group means", dev / _safe(sd), unit,
                   f"{k} groups of {shape}", sd)


def _blocked(d, check: Check) -> Problem:
    """Treatments within blocks: the additive fit y = block + treatment gives the observed
    treatment effects and the residual sd; arrangements permute treatments within blocks."""
    v, g = d.values, d.groups
    _, b = np.unique(d.blocks, return_inverse=True)
    k, nb, N = int(g.max()) + 1, int(b.max()) + 1, len(v)
    X = np.column_stack([np.eye(nb)[b], np.eye(k)[g][:, 1:]])
    coef, *_ = np.linalg.lstsq(X, v, rcond=None)
    rank = int(np.linalg.matrix_rank(X))
    df = N - rank
    if df < 1 or rank < X.shape[1]:
        raise PlanError("robustness needs residual degrees of freedom in the additive fit of "
                        "blocks and treatments")
    resid = v - X @ coef
    sd = float(np.sqrt(resid @ resid / df))
    effects = np.r_[0.0, coef[nb:]]            # treatment effects, relative to the first
    pattern = effects[g]
    if k == 2:
        effect, words = float(-effects[1]), (f"difference {d.labels[0]} - {d.labels[1]} "
                                             "adjusted for blocks")
        unit = (g == 0).astype(float)
    else:
        effect, words = float(np.ptp(effects)), "range of the treatment effects adjusted for blocks"
        unit = (np.arange(k) / (k - 1) - 0.5)[g]
    form, weights = check.form, None
    if form == "linear":     # two groups: the first group's sum; ordered treatments: Page's
        weights = (g == 0).astype(float) if k == 2 else (g + 1).astype(float)
    what = (f"{k} treatments in {nb} blocks" if k > 2
            else f"2 groups ({d.labels[0]}, {d.labels[1]}) within {nb} blocks")
    return Problem("blocked", "", d.settings.alternative, form, g.copy(), weights, None, sd,
                   "residual sd of the additive fit (blocks + treatments)", effect, words,
                   pattern / _safe(sd), unit, what, sd, strata=b.astype(np.int64))


def pair_weights(x) -> np.ndarray:
    """sign(x_j - x_i) over the pairs i < j (the order of np.triu_indices(n, 1))."""
    x = np.asarray(x, dtype=float)
    i, j = np.triu_indices(len(x), 1)
    return np.sign(x[j] - x[i])


def _slope(d, check: Check) -> Problem:
    y, x = d.y, d.x
    n = len(y)
    if n < 4:
        raise PlanError("robustness needs at least four pairs")
    if d.covariates is not None:
        return _adjusted_slope(d)
    xc = x - x.mean()
    b = float((xc * y).sum() / (xc * xc).sum())
    resid = y - y.mean() - b * xc
    sd = float(np.sqrt((resid ** 2).sum() / (n - 2)))
    form = check.form
    if check.weights is not None:
        w = check.weights(d)
    elif form == "pairs":
        w = pair_weights(x)
    else:
        w = xc
    unit = xc / x.std(ddof=1)
    return Problem("slope", "", d.settings.alternative, form, np.zeros(n, np.int64), w,
                   x.copy(), sd, "residual sd about the line", b,
                   f"slope of {d.names[0]} on {d.names[1]}", b * xc / _safe(sd), unit,
                   f"{n} pairs of {d.names[0]} and {d.names[1]}", sd / float(x.std(ddof=1)))


def _adjusted_slope(d) -> Problem:
    from ..engine.association.adjusted import reduced_model
    from ..errors import DataError

    y, x = d.y, d.x
    n = len(y)
    try:
        rm = reduced_model(y, x, d.covariates)
    except DataError as err:
        raise PlanError(str(err)) from None
    xt = rm.basis[:, -1]
    b = float(xt @ rm.resid / rm.sxx)
    sd = float(np.sqrt(max(rm.ee - b * b * rm.sxx, 0.0) / rm.df))
    sxt = float(np.sqrt(rm.sxx / (n - 1)))
    names = ", ".join(d.covariate_names)
    return Problem("slope", "", d.settings.alternative, "residual", np.zeros(n, np.int64),
                   xt, x.copy(), sd, "residual sd of the full model", b,
                   f"slope of {d.names[0]} on {d.names[1]} adjusted for {names}",
                   b * xt / _safe(sd), xt / sxt,
                   f"{n} units: {d.names[0]} on {d.names[1]} adjusted for {names}", sd / sxt,
                   basis=rm.basis, residual_df=rm.df)


def _adjusted(d, check: Check) -> Problem:
    """Groups adjusted for covariates: the groups' layout, `basis` the orthonormal columns of
    [1, Z]. Simulated without covariate effects: the residuals on [1, Z] and the analysis of
    covariance are unchanged by adding any combination of the covariates to y."""
    v, g = d.values, d.groups
    n, k = len(v), len(d.labels)
    u, s, _ = np.linalg.svd(np.column_stack([np.ones(n), d.covariates]), full_matrices=False)
    q = u[:, s > 1e-10 * s[0]]
    dummies = (g[:, None] == np.arange(k)[None, :]).astype(float)
    X = np.column_stack([q, dummies[:, 1:]])
    coef, *_ = np.linalg.lstsq(X, v, rcond=None)
    df = n - int(np.linalg.matrix_rank(X))
    if df < 1:
        raise PlanError("robustness needs residual degrees of freedom in the analysis of "
                        "covariance")
    resid = v - X @ coef
    sd = float(np.sqrt(resid @ resid / df))
    effects = np.r_[0.0, coef[q.shape[1]:]]            # group effects against the first
    names = ", ".join(d.covariate_names)
    shape = " + ".join(str(c) for c in np.bincount(g))
    if k == 2:
        effect, unit = float(-effects[1]), (g == 0).astype(float)
        words = f"difference {d.labels[0]} - {d.labels[1]} adjusted for {names}"
        kind, weights = "two-sample", unit
    else:
        effect, unit = float(np.ptp(effects)), (np.arange(k) / (k - 1) - 0.5)[g]
        words, kind, weights = f"range of the group effects adjusted for {names}", "k-sample", None
    return Problem(kind, "", d.settings.alternative, check.form, g.copy(), weights, None, sd,
                   "residual sd of the analysis of covariance", effect, words,
                   (effects[g] - effects[g].mean()) / _safe(sd), unit,
                   f"{k} groups of {shape} adjusted for {names}", sd, basis=q)


def _safe(sd: float) -> float:
    return sd if sd > 0 and np.isfinite(sd) else np.nan


def data_row(design) -> np.ndarray:
    """The design's responses in the order of the problem's units."""
    if isinstance(design, designs.TwoSampleDesign):
        return np.r_[design.x, design.y]
    if isinstance(design, designs.OneSampleDesign):
        return np.asarray(design.d, dtype=float)
    if isinstance(design, (designs.GroupsDesign, designs.ControlDesign, designs.AdjustedDesign)):
        return np.asarray(design.values, dtype=float)
    return np.asarray(design.y, dtype=float)
