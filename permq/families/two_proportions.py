"""Two proportions: x1 of n1 against x2 of n2 (two independent binomial samples).

The default test is Boschloo's: it is exact whatever the common proportion (it takes the
largest p-value over it, as every unconditional test does), and its rejection region holds
Fisher's, so it is never less powerful than Fisher's test and usually more (Boschloo 1970).
Fisher's test conditions on the total number of successes, which two samples of fixed size
do not fix; it stays beside the unconditional answer, and is the choice (`using fisher`) when
the units were randomised between fixed outcomes. Barnard's test orders the outcomes by the
score z instead (`using barnard`).

The estimate is the risk difference with its exact unconditional interval (Chan & Zhang
1999), beside Newcombe's score interval; the risk ratio follows with its exact unconditional
interval, beside the Miettinen-Nurminen score interval.
"""
from __future__ import annotations

import dataclasses
import math

from ..plan.cost import OPS_PER_SECOND
from ..plan.planner import make_plan
from ..result import Estimate, Result
from .registry import Family, Kind, Reported
from .results import also_estimate, also_test

KINDS = {"two-proportions": Kind("count", "two proportions", "count 3 of 20 vs 9 of 21")}

FISHER_WORDS = "Fisher's exact test (conditional on the total)"
BOSCHLOO_WORDS = "Boschloo's exact unconditional test"


def _data(design):
    from ..engine.counts.unconditional import Binomials

    return Binomials(*design.counts)


def plan(design):
    s = design.settings
    data = _data(design)
    if s.family == "fisher":
        from ..engine.tables import twobytwo

        tests = lambda draws: twobytwo.candidates(data.table)
    else:
        from ..engine.counts import unconditional

        tests = lambda draws: unconditional.candidates(data, s.family, draws)
    extra = _interval_ops(design, data)

    def cands(draws):   # the exact intervals come with either method, when they are affordable
        return [dataclasses.replace(c, ops=c.ops + extra) for c in tests(draws)]

    return make_plan("two-proportions", s.family, s, cands)


def _interval_ops(design, data) -> float:
    """The intervals' estimated operations, or 0 when they will not be computed."""
    from ..engine.counts import riskintervals

    ops = riskintervals.interval_ops(data)
    s = design.settings
    return ops if s.exact or ops / OPS_PER_SECOND <= s.budget_seconds else 0.0


def execute(design, the_plan, progress, statement: str = "") -> Result:
    from ..engine.counts import unconditional
    from ..engine.tables import twobytwo
    from ..normal import counts as normal
    from ..normal.tables import table_summary

    s, data = design.settings, _data(design)
    alg, draws, seed = the_plan.chosen.algorithm, the_plan.draws, the_plan.seed
    x1, n1, x2, n2 = design.counts
    tests = []
    if s.family == "fisher":
        out = twobytwo.run(data.table, "fisher", s.alternative, alg, progress=progress)
        rule = twobytwo.TWO_SIDED_RULE
        beside = unconditional.run(data, "boschloo", s.alternative, progress=progress)
        tests.append(also_test(BOSCHLOO_WORDS, beside))
    else:
        out = unconditional.run(data, s.family, s.alternative, alg, draws, seed, progress)
        rule = unconditional.RULES[s.family]
        beside = twobytwo.run(data.table, "fisher", s.alternative, progress=progress)
        tests.append(also_test(FISHER_WORDS, beside))
        if s.family == "barnard":
            other = unconditional.run(data, "boschloo", s.alternative, progress=progress)
            tests.append(also_test(BOSCHLOO_WORDS, other))
    nt = normal.two_proportions(x1, n1, x2, n2, s.level, s.alternative)
    difference, ratio = _estimates(design, data, progress)
    first, second = design.labels
    effect = f"proportion of {design.outcomes[0]}: {first} - {second}"
    summary = table_summary(data.table, [first, second], list(design.outcomes))
    extra = {"table": summary, "tests_also": tests, "estimates_also": [ratio]}
    warnings = list(design.warnings) + _disagreement(out.p_value, difference, s)
    return Result(statement, "two-proportions", s.alternative, out, nt, difference,
                  effect=effect, two_sided_rule=rule, warnings=warnings, extra=extra)


def _disagreement(p, difference, s) -> list:
    """A note when the test and the interval answer 'is the difference 0?' differently: the
    interval inverts the score ordering (Barnard's), the test may order otherwise."""
    if difference.interval is None:
        return []
    lo, hi = difference.interval
    keeps_zero = lo <= 0.0 <= hi
    rejects = p <= 1.0 - s.level
    if keeps_zero == (not rejects):
        return []
    level = f"{(1.0 - s.level) * 100:g}%"
    return [f"the test and the interval disagree at {level}: the interval inverts the score "
            f"(Barnard) ordering, the {s.family} test orders the outcomes otherwise"]


def _estimates(design, data, progress):
    """The risk difference (the result's estimate) and the risk ratio (beside it)."""
    from ..engine.counts import riskintervals
    from ..normal import counts as normal

    s = design.settings
    x1, n1, x2, n2 = design.counts
    seconds = riskintervals.interval_ops(data) / OPS_PER_SECOND
    affordable = _interval_ops(design, data) > 0
    diff_value = x1 / n1 - x2 / n2
    ratio_value = _ratio(x1, n1, x2, n2)
    name_d = "risk difference p1 - p2"
    name_r = "risk ratio p1 / p2"
    if affordable:
        d_iv = riskintervals.difference_interval(data, s.level, s.alternative)
        progress.step(0.5, "exact intervals")
        r_iv = riskintervals.ratio_interval(data, s.level, s.alternative)
        progress.step(1.0, "exact intervals")
        how = riskintervals.INTERVAL_WORDS
    else:
        d_iv = r_iv = None
        how = (f"the exact unconditional interval would take about {seconds:.2g} s, past the "
               "budget: add 'exact' to have it")
    difference = Estimate(name_d, diff_value, d_iv, s.level, how)
    ratio = Estimate(name_r, ratio_value, r_iv, s.level, how)
    score = normal.ratio_score_interval(x1, n1, x2, n2, s.level, s.alternative)
    return difference, also_estimate(ratio, score, "Miettinen-Nurminen score")


def _ratio(x1, n1, x2, n2) -> float:
    if x2 == 0:
        return math.nan if x1 == 0 else math.inf
    return (x1 / n1) / (x2 / n2)


def _count_check(design):
    """The count check: every simulated 2 x 2 table gets this family's own exact test."""
    from ..robustness.spec import CountCheck

    family = design.settings.family
    route = "fisher-proportions" if family == "fisher" else "unconditional"
    return CountCheck(route, family)


KIND = ("two-proportions",)
ESTIMATE = ("risk difference with its exact unconditional interval (Chan & Zhang 1999); the risk "
            "ratio beside it")
NORMAL = "score z (pooled) test; Newcombe and Miettinen-Nurminen score intervals"
HELP = """count 3 of 20 vs 9 of 21                 two samples: successes of trials each
count dead by dose using boschloo         a two-valued column in two groups (the event: the
                                          second value in natural order, e.g. 1 of 0 / 1)
count [[3, 17], [9, 12]] using barnard    rows the samples, successes then failures
Boschloo's test is the default: exact for every common proportion and never less powerful
than Fisher's test, whose p-value is shown beside it."""

FAMILIES = [
    Family("boschloo", KIND, "Boschloo's exact unconditional test (Fisher's p as the statistic)",
           "two proportions: Boschloo's unconditional test", plan, execute, NORMAL, ESTIMATE,
           robustness=_count_check,
           default_in=KIND, help=HELP),
    Family("barnard", KIND, "Barnard's exact unconditional test (score statistic)",
           "two proportions: Barnard's unconditional test", plan, execute, NORMAL, ESTIMATE,
           robustness=_count_check,
           help=HELP),
    Family("fisher", KIND, "Fisher's exact test (conditional on the total of successes)",
           "Fisher's exact test", plan, execute, NORMAL, ESTIMATE,
           robustness=_count_check,
           help=HELP),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('two-proportions',), "Fisher's exact p-value",
             "Boschloo's exact unconditional test",
             ('boschloo-1970',),
             'over the {n} outcomes of the two samples, the largest over the common proportion'),
    Reported(('two-proportions',), 'score z',
             "Barnard's exact unconditional test",
             ('barnard-1945',),
             'over the {n} outcomes of the two samples, the largest over the common proportion'),
    Reported(('two-proportions',), 'top-left count',
             "Fisher's exact test",
             ('fisher-1935b',),
             'over {n} tables with the observed margins'),
]
