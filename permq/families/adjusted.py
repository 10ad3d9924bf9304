"""Groups compared with covariates in the statistic (`compare Y by G adjusting for Z`): the
randomisation test on covariate-adjusted residuals (Rosenbaum 2002), exact over the group
labels, with the analysis of covariance beside it."""
from __future__ import annotations

import numpy as np

from ..engine.core.pvalues import TWO_SIDED_LINEAR, TWO_SIDED_QUADRATIC
from ..lazy import module
from ..plan.planner import make_plan
from ..result import Estimate, Result
from .registry import Family, Kind, Reported

adjusted = module("permq.engine.adjusted")          # loaded when a statement first runs
twosample = module("permq.engine.twosample")
ksample = module("permq.engine.ksample")
normal_adjusted = module("permq.normal.adjusted")
normal_k = module("permq.normal.ksample")

KINDS = {"adjusted": Kind("compare", "groups adjusted for covariates",
                          "add 'adjusting for Z' to compare Y by G")}

STATISTICS = {("means", 2): "difference in mean covariate-adjusted residuals",
              ("ranks", 2): "rank sum of the first group's covariate-adjusted residuals "
                            "(mid-ranks)",
              ("means", 3): "F of the covariate-adjusted residuals",
              ("ranks", 3): "Kruskal-Wallis H of the covariate-adjusted residuals"}


def _reduced(design):
    return adjusted.reduce(design.values, design.groups, design.covariates)


def _split(red, design):
    r = red.residuals
    return r[design.groups == 0], r[design.groups == 1]


def _statistic(design) -> str:
    return STATISTICS[(design.settings.family, min(len(design.labels), 3))]


def plan(design):
    s = design.settings
    red = _reduced(design)
    if len(design.labels) > 2:
        fam = ksample.FAMILIES[s.family]
        cands = lambda draws: fam.candidates(red.residuals, design.groups, draws)
        return make_plan("k-sample", s.family, s, cands)     # that engine, on the residuals
    if s.family == "ranks":
        cands = lambda draws: twosample.candidates("ranks", *_split(red, design), draws)
        return make_plan("two-sample", "ranks", s, cands)
    return make_plan("adjusted", "means", s,
                     lambda draws: adjusted.candidates(red, design.groups, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    red = _reduced(design)
    algorithm, draws, seed = the_plan.chosen.algorithm, the_plan.draws, the_plan.seed
    labels = design.labels
    covs = ", ".join(design.covariate_names)
    normal = normal_adjusted.ancova(design.values, design.groups, design.covariates,
                                    s.alternative, s.level)
    estimate, notes = None, ()
    if len(labels) > 2:
        out = ksample.FAMILIES[s.family].run(red.residuals, design.groups, s.alternative,
                                             algorithm, draws, seed, progress)
        effect, rule = f"differences among {', '.join(labels)}, adjusted for {covs}", \
            TWO_SIDED_QUADRATIC
    elif s.family == "ranks":
        out, _ = twosample.run("ranks", *_split(red, design), s.alternative, algorithm, s.level,
                               draws, seed, progress)
        effect, rule = f"{labels[0]} - {labels[1]}, adjusted for {covs}", TWO_SIDED_LINEAR
    else:
        out, value, interval, notes = adjusted.run(red, design.groups, s.alternative, algorithm,
                                                   s.level, draws, seed, progress)
        effect, rule = f"{labels[0]} - {labels[1]}, adjusted for {covs}", TWO_SIDED_LINEAR
        how = ("exact: inverting the permutation test over the assignments" if out.method ==
               "exact" else "inverting the test over the same Monte Carlo assignments")
        estimate = Estimate(f"difference {labels[0]} - {labels[1]} adjusted for {covs}", value,
                            interval, s.level, how)
    out = adjusted.on_residuals(out, _statistic(design))
    return Result(statement, design.kind, s.alternative, out, normal, estimate, effect=effect,
                  groups=normal_k.group_summaries(design.values, design.groups, labels),
                  two_sided_rule=rule, warnings=list(design.warnings) + list(notes))


# ---------------------------------------------------------------- robustness

def residual_scores(problem, Y):
    """Residuals of each data set on [1, Z] (the problem's basis)."""
    q = problem.basis
    return Y - (Y @ q) @ q.T


def residual_ranks(problem, Y):
    from ..robustness.scoring import ranks

    return ranks(problem, residual_scores(problem, Y))


def ancova_p(problem, Y, A):
    """The ANCOVA t (two groups) or F (more) of each data set, vectorised."""
    from ..robustness.counterparts import t_tails

    q = problem.basis
    R = Y - (Y @ q) @ q.T
    k = len(problem.sizes)
    dummies = (problem.codes[:, None] == np.arange(k)[None, 1:]).astype(float)
    d = dummies - q @ (q.T @ dummies)
    u, sv, _ = np.linalg.svd(d, full_matrices=False)
    u = u[:, sv > 1e-10 * sv[0]]
    df = problem.n - q.shape[1] - u.shape[1]
    proj = R @ u
    ss = (proj ** 2).sum(axis=1)
    rss = np.maximum((R * R).sum(axis=1) - ss, 0.0)
    if k == 2:       # the first group's coefficient: its indicator is minus the dummy
        z = (problem.codes == 0).astype(float)
        mz = z - q @ (q.T @ z)
        szz = float(mz @ mz)
        tau = (R @ mz) / szz
        t = tau / np.sqrt(rss / df / szz)
        return t_tails(t, df, problem.alternative)
    from scipy import stats

    return stats.f.sf((ss / (k - 1)) / (rss / df), k - 1, df)


def ancova_width(problem, Y, level):
    """The ANCOVA t interval's width for the adjusted difference of each data set."""
    from ..robustness.widths import t_quantile

    q = problem.basis
    R = Y - (Y @ q) @ q.T
    z = (problem.codes == 0).astype(float)
    mz = z - q @ (q.T @ z)
    szz = float(mz @ mz)
    df = problem.n - q.shape[1] - 1
    rss = np.maximum((R * R).sum(axis=1) - (R @ mz) ** 2 / szz, 0.0)
    return 2 * t_quantile(level, df) * np.sqrt(rss / df / szz)


def exact_width(problem, A, reference, level):
    """The exact interval's width for each data set (A: its covariate-adjusted residuals), the
    engine's own confidence set over the reference's assignments (its hull)."""
    w = problem.weights
    q = problem.basis
    mz = w - q @ (q.T @ w)
    W = reference.matrix
    c = W @ mz - float(w @ mz)
    a = A @ W.T - (A @ w)[:, None]
    identity, count = (0.0, float(reference.count)) if reference.exact else \
        (1.0, float(reference.count + 1))
    out = np.empty(A.shape[0])
    for i in range(A.shape[0]):
        scale = max(abs(float(A[i] @ w)), float(np.abs(A[i]).max()))
        (lo, hi), _ = adjusted.confidence_set(a[i], c, identity, count, level, "two-sided",
                                     tol=1e-9 * scale)
        out[i] = hi - lo
    return out


def _check(design):
    from ..robustness import reported
    from ..robustness.spec import Check

    fam = design.settings.family
    scores = residual_ranks if fam == "ranks" else residual_scores
    counterpart = ("ANCOVA t for the group difference" if len(design.labels) == 2 else
                   "ANCOVA F for groups adjusted for the covariates")
    if len(design.labels) == 2:
        shown = reported.as_is if fam == "ranks" else reported.mean_difference
        if fam == "ranks":
            return Check("linear", scores, counterpart, ancova_p, shown)
        return Check("linear", scores, counterpart, ancova_p, shown, width=ancova_width,
                     exact_width=exact_width)
    return Check("quadratic", scores, counterpart, ancova_p,
                 reported.quadratic(ksample.FAMILIES[fam]))


FAMILIES = [
    Family("means", ("adjusted",), "randomisation test on covariate-adjusted residuals "
           "(Rosenbaum): the difference in means of two groups, the F of three or more",
           "covariate-adjusted randomisation test", plan, execute,
           "analysis of covariance: t of the adjusted difference (two groups), F (more)",
           "adjusted difference (two groups), exact interval by inverting the test",
           robustness=_check, default_in=("adjusted",), options=("adjusting",),
           help="the response is regressed on the covariates alone, the groups are permuted "
                "over the residuals:\nexact when the groups were randomised and the covariates "
                "fixed before (Rosenbaum 2002)"),
    Family("ranks", ("adjusted",), "rank test on covariate-adjusted residuals (Wilcoxon "
           "rank-sum of two groups, Kruskal-Wallis of more)",
           "covariate-adjusted rank test", plan, execute,
           "analysis of covariance: t of the adjusted difference (two groups), F (more)",
           "no permutation interval", robustness=_check, options=("adjusting",)),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('adjusted',), 'difference in mean covariate-adjusted',
             'covariate-adjusted randomisation test of the difference in means (Rosenbaum)',
             ('rosenbaum-2002', 'pitman-1937')),
    Reported(('adjusted',), 'rank sum',
             'Wilcoxon rank-sum test of covariate-adjusted residuals (Rosenbaum)',
             ('rosenbaum-2002', 'wilcoxon-1945')),
    Reported(('adjusted',), 'F of the covariate-adjusted',
             'covariate-adjusted randomisation F test (Rosenbaum)',
             ('rosenbaum-2002', 'pitman-1938')),
    Reported(('adjusted',), 'Kruskal-Wallis',
             'Kruskal-Wallis test of covariate-adjusted residuals (Rosenbaum)',
             ('rosenbaum-2002', 'kruskal-wallis-1952')),
]
