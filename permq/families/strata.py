"""A binary response in groups within strata: `count dead by dose within sex`.

Two groups (2 x 2 x K): the exact conditional test of a common odds ratio of 1 (Birch 1964;
one stratum gives Fisher's exact test), its conditional MLE and exact interval (Mehta, Patel
& Gray 1985), beside the Mantel-Haenszel test and odds ratio; Zelen's (1971) exact test that
the strata share one odds ratio (`using homogeneity`), beside Breslow-Day. The default result
adds Zelen's p where it is cheap to have.

Ordered groups (2 x k x K, `ordered`): the exact conditional trend test in the groups' dose
scores (the numeric levels, else 1, 2, ...), which is the exact conditional logistic score
test with one intercept a stratum, and its common logistic slope per unit of dose with the
exact interval, beside the stratified Cochran-Armitage z.
"""
from __future__ import annotations

import math

from ..engine.counts.conditional import RULE_LINEAR, RULE_PROBABILITY
from ..plan.cost import OPS_PER_SECOND
from ..plan.planner import make_plan
from ..result import Estimate, Result
from .registry import Family, Kind, Reported
from .results import also_test, strata_rows

KINDS = {"strata": Kind("count", "two groups within strata", "count Y by G within S, G with two "
                                                               "levels"),
         "ordered-strata": Kind("count", "ordered groups within strata",
                                "count Y by G within S ordered")}
ZELEN_SHARE = 0.2   # Zelen's test joins the default result when it takes this share of the budget


def _strata(design):
    from ..engine.counts import strata

    return strata.as_strata(design.tables[:, :, :])


def _trend_strata(design):
    from ..engine.counts import trend

    return [trend.grouped(t.sum(axis=1), t[:, 0], design.scores) for t in design.tables]


def plan(design):
    s = design.settings
    if s.family == "trend":
        from ..engine.counts import trend

        st = _trend_strata(design)
        cands = lambda draws: trend.candidates(st, draws)
    elif s.family == "homogeneity":
        from ..engine.counts import homogeneity

        st = _strata(design)
        _need_two(st)
        cands = lambda draws: homogeneity.candidates(st, draws)
    else:
        from ..engine.counts import strata

        st = _strata(design)
        cands = lambda draws: strata.candidates(st, draws)
    return make_plan("strata", s.family, s, cands)


def _need_two(st):
    from ..engine.counts.strata import informative
    from ..errors import PlanError

    if len(informative(st)) < 2:
        raise PlanError("the homogeneity of odds ratios needs two or more strata that vary",
                        hint="drop 'using homogeneity' for the common odds ratio")


def execute(design, the_plan, progress, statement: str = "") -> Result:
    if design.settings.family == "trend":
        return _execute_trend(design, the_plan, progress, statement)
    from ..engine.counts import homogeneity, strata
    from ..normal import counts as normal

    s = design.settings
    st = _strata(design)
    alg, draws, seed = the_plan.chosen.algorithm, the_plan.draws, the_plan.seed
    first, second = design.group_labels
    tests, also = [], []
    mh = normal.mantel_haenszel(design.tables, s.level, s.alternative)
    bd = normal.breslow_day(design.tables)
    estimate = strata.common_odds_ratio(st, s.level, s.alternative)
    if s.family == "homogeneity":
        out = homogeneity.run(st, alg, draws, seed, progress)
        nt, rule = bd, homogeneity.RULE
        also.append(mh)
        effect = f"odds ratios of {design.outcomes[0]}, {first} against {second}, across strata"
        estimate = None
    else:
        out = strata.run(st, s.alternative, alg, draws, seed, progress)
        nt, rule = mh, RULE_PROBABILITY
        also.append(bd)
        effect = (f"common odds ratio of {design.outcomes[0]}: {first} against {second}, within "
                  f"{design.names[2]}" if design.names else "common odds ratio")
        zelen = _zelen_if_cheap(st, s, progress)
        if zelen is not None:
            tests.append(also_test("Zelen's exact test of homogeneous odds ratios", zelen))
    used = len(strata.informative(st))
    warnings = list(design.warnings)
    extra = {"strata": strata_rows(design.tables, design.stratum_labels, design.group_labels),
             "tests_also": tests, "informative_strata": used}
    return Result(statement, "strata", s.alternative, out, nt, estimate, effect=effect,
                  two_sided_rule=rule, warnings=warnings, also_normal=also, extra=extra)


def _zelen_if_cheap(st, s, progress):
    from ..engine.counts import homogeneity, strata

    if len(strata.informative(st)) < 2:
        return None
    exact = homogeneity.candidates(st, 0)[0]
    if exact.ops / OPS_PER_SECOND > ZELEN_SHARE * s.budget_seconds:
        return None
    return homogeneity.run(st, "network", progress=progress)


def _execute_trend(design, the_plan, progress, statement):
    from ..engine.counts import trend
    from ..normal import counts as normal

    s = design.settings
    st = _trend_strata(design)
    alg, draws, seed = the_plan.chosen.algorithm, the_plan.draws, the_plan.seed
    out, law = trend.run(st, s.alternative, alg, draws, seed, progress,
                         name=f"sum of the dose scores over the events ({design.outcomes[0]})")
    mean, var = trend.null_moments(st)
    nt = normal.stratified_trend(mean, var, out.statistic, s.alternative)
    estimate = None
    name = "logistic slope per unit of dose, common to the strata"
    if law is None:
        law = trend.law_for_estimate(st, s.budget_seconds)
    if law is not None:
        b, (lo, hi), mue = trend.slope(law, s.level, s.alternative)
        how = ("exact conditional: inverts the two one-sided trend tests, alpha/2 each"
               + ("; median unbiased, as the conditional MLE is infinite" if mue else ""))
        estimate = Estimate(name + (" (median unbiased)" if mue else " (conditional MLE)"),
                            b, (lo, hi), s.level, how)
    else:
        estimate = Estimate(name, math.nan, None, s.level,
                            "not estimated: its exact law would take past the budget (the test is Monte Carlo)")
    effect = (f"a rise of {design.outcomes[0]} with {design.names[1]} ({_scores_words(design)}), "
              f"within {design.names[2]}")
    extra = {"strata": strata_rows(design.tables, design.stratum_labels, design.group_labels)}
    return Result(statement, "strata", s.alternative, out, nt, estimate, effect=effect,
                  two_sided_rule=RULE_LINEAR, warnings=list(design.warnings),
                  extra=extra)


def _scores_words(design) -> str:
    labels, scores = design.group_labels, design.scores
    if all(_number(g) == v for g, v in zip(labels, scores)):
        return "the levels as dose scores"
    return "scores " + ", ".join(f"{v:g} for {g}" for g, v in zip(labels, scores))


def _number(text):
    try:
        return float(text)
    except ValueError:
        return None


def _count_check(design):
    """The count check: stratified schemes, every simulated stack of strata given this
    family's own exact test."""
    from ..robustness.spec import CountCheck

    family = design.settings.family
    route = {"fisher": "strata", "homogeneity": "homogeneity", "trend": "strata-trend"}[family]
    return CountCheck(route, family, ordered=family == "trend")


HELP = """count dead by dose within sex               two groups in every stratum (2 x 2 x K)
count dead by dose within sex using homogeneity   do the strata share one odds ratio?
count dead by dose within litter ordered    three or more doses: the stratified trend test
The event is the second value of the response in natural order (1 of 0 / 1, "yes" of "no");
the odds ratio is the first group's odds against the second's (levels "B", "A" to turn it)."""

FAMILIES = [
    Family("fisher", ("strata",),
           "exact conditional test of a common odds ratio (Birch; Fisher's test for one stratum)",
           "common odds ratio, exact conditional", plan, execute,
           "Mantel-Haenszel chi-square (and Breslow-Day for homogeneity)",
           "common odds ratio: conditional maximum likelihood with its exact interval",
           robustness=_count_check, default_in=("strata",), help=HELP),
    Family("homogeneity", ("strata",), "Zelen's exact test of homogeneous odds ratios",
           "homogeneity of odds ratios across strata (Zelen)", plan, execute,
           "Breslow-Day chi-square with Tarone's correction", "",
           robustness=_count_check, help=HELP),
    Family("trend", ("ordered-strata",),
           "exact conditional trend test within strata (stratified Cochran-Armitage)",
           "linear-by-linear trend (ordered tables)", plan, execute,
           "stratified Cochran-Armitage z",
           "common logistic slope per unit of dose with its exact interval",
           robustness=_count_check, default_in=("ordered-strata",), help=HELP),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('strata',), 'sum over strata',
             'exact conditional test of a common odds ratio',
             ('birch-1964', 'mehta-patel-gray-1985'),
             "over {n} values of the statistic given every stratum's margins"),
    Reported(('strata',), 'probability of the strata',
             "Zelen's exact test of homogeneous odds ratios",
             ('zelen-1971',),
             'over the {n} configurations with the observed total'),
    Reported(('strata',), 'sum of the dose scores',
             'exact conditional trend test within strata',
             ('cochran-1954', 'armitage-1955', 'mantel-1963'),
             'over {n} choices of the event units within the strata'),
]
