"""A binary response against a dose: `relate dead to dose` when `dead` has two values.

The exact conditional logistic (score) test of the slope: given the number of events, the
sufficient statistic sum(x y) has a null law found by counting (its two-sided rule is the
linear one, so it is the permutation test of Pearson's correlation, named for what it tests);
the conditional MLE of the logistic slope with its exact interval (Cox 1970; Hirji, Mehta &
Patel 1987), median unbiased where the MLE is infinite (complete separation); beside the
asymptotic logistic fit (Wald z and interval; the likelihood-ratio test) and the asymptotic
score test (Cochran-Armitage z).
"""
from __future__ import annotations

import math

from ..plan.planner import make_plan
from ..result import Estimate, NormalTheory, Result
from .registry import Family, Kind, Reported

KINDS = {"dose-response": Kind("relate", "a binary response",
                               "relate Y to X with Y two-valued (0 / 1)")}


def _strata(design):
    from ..engine.counts import trend

    return [trend.stratum(design.x, design.y)]


def plan(design):
    from ..engine.counts import trend

    st = _strata(design)
    return make_plan("dose-response", design.settings.family, design.settings,
                     lambda draws: trend.candidates(st, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    from ..engine.counts import trend
    from ..normal import counts as normal

    s = design.settings
    y_name, x_name = design.names
    st = _strata(design)
    out, law = trend.run(st, s.alternative, the_plan.chosen.algorithm, the_plan.draws,
                         the_plan.seed, progress,
                         name=f"sum of {x_name} over the events ({design.outcomes[0]})")
    wald, lr = normal.logistic(design.y, design.x, s.level, s.alternative)
    mean, var = trend.null_moments(st)
    score = normal.stratified_trend(mean, var, out.statistic, s.alternative)
    score = NormalTheory("score z (Cochran-Armitage): the asymptotic form of this test",
                         score.statistic, None, score.p_value)
    name = f"logistic slope of {design.outcomes[0]} on {x_name}"
    if law is None:
        law = trend.law_for_estimate(st, s.budget_seconds)
    if law is not None:
        b, (lo, hi), mue = trend.slope(law, s.level, s.alternative)
        how = "exact conditional: inverts the two one-sided score tests, alpha/2 each"
        if mue:
            how += "; median unbiased, as the conditional MLE is infinite (separation)"
        estimate = Estimate(name + (" (median unbiased)" if mue else " (conditional MLE)"), b,
                            (lo, hi), s.level, how)
    else:
        estimate = Estimate(name, math.nan, None, s.level,
                            "not estimated: its exact law would take past the budget (the test is Monte Carlo)")
    groups = [{"name": f"{x_name} where {design.outcomes[0]}", "n": int(design.y.sum()),
               "mean": float(design.x[design.y == 1].mean()),
               "median": float(_median(design.x[design.y == 1]))},
              {"name": f"{x_name} where {design.outcomes[1]}", "n": int((1 - design.y).sum()),
               "mean": float(design.x[design.y == 0].mean()),
               "median": float(_median(design.x[design.y == 0]))}]
    effect = f"logistic slope of {design.outcomes[0]} on {x_name} (log odds per unit)"
    return Result(statement, "dose-response", s.alternative, out, wald, estimate, effect=effect,
                  groups=groups, two_sided_rule=_rule(), warnings=list(design.warnings),
                  also_normal=[lr, score])


def _rule():
    from ..engine.counts.conditional import RULE_LINEAR

    return RULE_LINEAR


def _median(v):
    import numpy as np

    return np.median(v)


def _count_check(design):
    """The count check: the table of events at each dose, every simulated one given the
    conditional logistic test."""
    from ..robustness.spec import CountCheck

    return CountCheck("logistic", "logistic", ordered=True)


HELP = """relate dead to dose                 dead two-valued (0 / 1, no / yes): the event is the
                                    second value in natural order
The slope is in log odds per unit of dose; under complete separation the estimate is median
unbiased (finite), where the maximum-likelihood fit beside it has none."""

FAMILIES = [
    Family("logistic", ("dose-response",), "exact conditional logistic (score) test of the slope",
           "binary response: exact conditional logistic", plan, execute,
           "asymptotic logistic fit: Wald z and the likelihood-ratio test",
           "logistic slope: conditional MLE (median unbiased under separation) with its exact "
           "interval", robustness=_count_check,
           default_in=("dose-response",), help=HELP),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('dose-response',), 'sum of',
             'exact conditional logistic (score) test',
             ('cox-1970', 'hirji-mehta-patel-1987'),
             'over {n} choices of the event units given their number'),
]
