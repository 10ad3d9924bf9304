"""Association and slopes: permutation tests of correlation and regression slopes."""
from __future__ import annotations

from ..lazy import module
from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..plan.planner import make_plan
from ..result import Estimate, Result
from .registry import Family, Reported, effect_pieces

association = module("permq.engine.association")  # loaded when a statement first runs
normal_association = module("permq.normal.association")

WORDS = {"pearson": "Pearson correlation", "spearman": "Spearman correlation (mid-ranks)",
         "kendall": "Kendall's tau", "slope": "slope"}


def plan(design):
    s = design.settings
    return make_plan("association", s.family, s,
                     lambda draws: association.candidates(s.family, design.y, design.x, draws,
                                                          covariates=design.covariates))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    y_name, x_name = design.names
    out, est = association.run_with_estimate(
        s.family, design.y, design.x, s.alternative, the_plan.chosen.algorithm, s.level,
        the_plan.draws, the_plan.seed, progress, design.covariates)
    normals = normal_association.normal_theory(s.family, design.y, design.x, s.alternative,
                                               s.level, design.covariates)
    adjusted = f", adjusted for {', '.join(design.covariate_names)}" if design.covariate_names else ""
    effect = f"{WORDS[s.family]} of {y_name} with {x_name}{adjusted}"
    if s.family == "slope":
        effect = f"slope of {y_name} on {x_name}{adjusted}"
    if est is not None:
        est = Estimate(effect, est.value, est.interval, est.level, est.method)
    groups = [{"name": y_name, "n": int(len(design.y)), "mean": float(design.y.mean()),
               "median": float(_median(design.y)), "sd": float(design.y.std(ddof=1))},
              {"name": x_name, "n": int(len(design.x)), "mean": float(design.x.mean()),
               "median": float(_median(design.x)), "sd": float(design.x.std(ddof=1))}]
    return Result(statement, "association", s.alternative, out, normals[0], est, effect=effect,
                  groups=groups, two_sided_rule=TWO_SIDED_LINEAR, warnings=list(design.warnings),
                  also_normal=list(normals[1:]))


def _median(v):
    import numpy as np

    return np.median(v)


def _spearman_weights(design):
    from ..engine.core.scores import midranks

    rx = midranks(design.x)
    return rx - rx.mean()


def _check(form, scores, counterpart, normal_p, reported, weights=None, inverts=False,
           width=None, interval=None):
    def check(design):
        from ..robustness import counterparts, reported as rep, scoring, widths
        from ..robustness.spec import Check

        if design.covariates is not None:     # the adjusted slope: residual permutation
            return Check("residual", scoring.residuals,
                         "least-squares t test of the slope adjusted for covariates",
                         counterparts.adjusted_slope_t, rep.as_is)
        return Check(form, getattr(scoring, scores), counterpart, getattr(counterparts, normal_p),
                     getattr(rep, reported), weights=weights, inverts=inverts,
                     width=getattr(widths, width) if width else None,
                     interval=getattr(counterparts, interval) if interval else None)
    return check


def _declare(keyword, title, summary, normal, estimate, robustness, **more):
    return Family(keyword, ("association",), title, summary, plan, execute, normal, estimate,
                  robustness=robustness, **more)


FAMILIES = [
    _declare("pearson", "permutation test of Pearson's correlation", "Pearson correlation",
             "t test of Pearson's r", "sample correlation (no permutation interval)",
             _check("linear", "values", "t test of Pearson's r", "slope_t", "correlation",
                    interval="fisher_z_interval"),
             default_in=("association",)),
    _declare("spearman", "permutation test of Spearman's rho (mid-ranks)",
             "Spearman rank correlation", "t approximation for Spearman's rho",
             "sample rank correlation (no permutation interval)",
             _check("linear", "ranks", "t approximation for Spearman's rho", "slope_t",
                    "correlation", weights=_spearman_weights)),
    _declare("kendall", "Kendall's tau (tau-b with ties), exact by counting inversions",
             "Kendall's tau", "normal approximation for Kendall's S",
             "sample tau (no permutation interval)",
             _check("pairs", "values", "normal approximation for Kendall's S", "kendall_z",
                    "kendall_tau")),
    _declare("slope", "permutation test of the least-squares slope; with covariates, "
             "Freedman-Lane residual permutation", "least-squares slope",
             "least-squares t test of the slope (and its HC3 form)",
             "slope; exact interval by inverting the test (none when adjusted)",
             _check("linear", "values", "least-squares t test of the slope", "slope_t", "slope",
                    inverts=True, width="slope_t"),
             options=("adjusting",), effect_sizes=effect_pieces("standardised_slope")),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('association',), 'Pearson',
             "permutation test of Pearson's correlation",
             ('pitman-1937b',)),
    Reported(('association',), 'Spearman',
             "permutation test of Spearman's rank correlation",
             ('spearman-1904',)),
    Reported(('association',), 'Kendall',
             "permutation test of Kendall's tau",
             ('kendall-1938',)),
    Reported(('association',), 'least-squares slope',
             'permutation test of the least-squares slope',
             ('pitman-1937b',)),
    Reported(('association',), 't of the slope',
             'Freedman-Lane permutation test of the adjusted slope',
             ('freedman-lane-1983',)),
]
