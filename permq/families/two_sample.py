"""Two independent samples: permutation p-value, normal theory and the shift estimate."""
from __future__ import annotations

from math import comb

import numpy as np

from ..engine import rankintervals, twosample
from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..lazy import module
from ..normal import theory
from ..engine.core.limits import INTERVAL_DRAWS
from ..plan.planner import make_plan
from ..result import EngineOutcome, Estimate, Result
from .registry import Family, Reported, effect_pieces, family_for
from ..engine.core.scores import median

ranked = module("permq.engine.tables.ranked")       # the table route, loaded when it runs


def plan(design):
    s = design.settings
    table_route = family_for(design).extra.get("table_route", False)

    def cands(draws):
        out = twosample.candidates(s.family, design.x, design.y, draws)
        if table_route:      # few distinct values: the test on the 2 x categories table
            arrangements = out[0].arrangements
            c = ranked.rank_sum_candidate(design.x, design.y, arrangements)
            if c is not None:
                out.insert(len(out) - 1, c)
        return out

    return make_plan("two-sample", s.family, s, cands)


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    if (family_for(design).extra.get("table_route", False)     # (the table route alone loads
            and the_plan.chosen.algorithm == ranked.TABLE):     # the table engine)
        outcome, interval = _table_route(design, progress), None
    else:
        outcome, interval = twosample.run(s.family, design.x, design.y, s.alternative,
                                          the_plan.chosen.algorithm, s.level,
                                          draws=the_plan.draws, seed=the_plan.seed,
                                          progress=progress)
    normal = NORMAL[s.family](design.x, design.y, s.level, s.alternative)
    estimate = _estimate(design, interval, outcome.method, the_plan.draws)
    a, b = design.labels
    groups = [_summary(a, design.x), _summary(b, design.y)]
    return Result(statement, "two-sample", s.alternative, outcome, normal, estimate,
                  effect=_effect_words(s.family, design.effect), groups=groups,
                  two_sided_rule=TWO_SIDED_LINEAR, warnings=list(design.warnings))


NORMAL = {"means": theory.welch_t, "ranks": theory.rank_sum_z,
          "normal-scores": theory.normal_scores_z, "medians": theory.median_count_z}
def _table_route(design, progress) -> EngineOutcome:
    """The rank sum's exact p-value from the table network (its statistic as the engine's)."""
    x, y = np.asarray(design.x, float), np.asarray(design.y, float)
    rule = twosample.rule_of(design.settings.family)
    p, _ = ranked.rank_sum(x, y, design.settings.alternative, progress)
    return EngineOutcome(rule.statistic_name, twosample.observed(rule, x, y), p, "exact",
                         ranked.WORDS.format(what=ranked.RANK_SUM_WORDS),
                         arrangements=float(comb(len(x) + len(y), len(x))))


def _effect_words(family, effect):
    return {"means": f"difference in means {effect}",
            "ranks": f"shift {effect}",
            "normal-scores": f"shift {effect}",
            "medians": f"difference in medians {effect}"}[family]


def _estimate(design, interval, method, the_draws=0):
    s = design.settings
    x, y = design.x, design.y
    if s.family == "means":
        how = ("inverting the permutation test under a shift model"
               + _sampled_words(method, the_draws, "arrangements"))
        return Estimate(f"difference in means {design.effect}", float(x.mean() - y.mean()),
                        interval, s.level, how)
    if s.family == "ranks":
        est, iv, exact = rankintervals.hodges_lehmann_two_sample(x, y, s.level, s.alternative)
        how = ("order statistics of the pairwise differences at the exact rank-sum quantiles "
               "(no-ties law)" if exact else "order statistics at normal-approximation ranks")
        return Estimate(f"Hodges-Lehmann shift {design.effect}", est, iv, s.level, how)
    if s.family == "normal-scores":    # the shift the test is for; its interval is the rank sum's
        est = float(median(rankintervals.pairwise_differences(x, y)))
        return Estimate(f"Hodges-Lehmann shift {design.effect}", est, None, s.level,
                        "no exact interval for this family ('using ranks' gives this shift "
                        "with the rank-sum test's exact interval)")
    return Estimate(f"difference in medians {design.effect}",
                    float(median(x) - median(y)), None, s.level,
                    "no exact interval for this family")


def _summary(name, v):
    return {"name": name, "n": int(len(v)), "mean": float(np.mean(v)),
            "median": float(median(v)), "sd": float(np.std(v, ddof=1)) if len(v) > 1 else None}


def _sampled_words(method, draws, what):
    if method != "monte-carlo":
        return ""
    if draws > INTERVAL_DRAWS:
        return f" (on the first {INTERVAL_DRAWS:,} sampled {what})"
    return f" (on the sampled {what})"


def _check(scores, counterpart, normal_p, reported, effect, width=None, order_widths=None):
    """The robustness check of a two-sample family (pieces named from robustness/)."""
    def check(design):
        from ..robustness import counterparts, effects, reported as rep, scoring, widths
        from ..robustness.spec import Check

        return Check("linear", getattr(scoring, scores), counterpart,
                     getattr(counterparts, normal_p), getattr(rep, reported),
                     effect=getattr(effects, effect),
                     width=getattr(widths, width) if width else None,
                     order_widths=getattr(widths, order_widths) if order_widths else None)
    return check


def _declare(keyword, title, summary, normal, estimate, robustness, sizes, default=False,
             help="", extra=None):
    return Family(keyword, ("two-sample",), title, summary, plan, execute, normal, estimate,
                  robustness=robustness, default_in=("two-sample",) if default else (),
                  help=help, effect_sizes=effect_pieces(*sizes), extra=extra or {})


FAMILIES = [
    _declare("means", "permutation test of the difference in means (Pitman)",
             "difference in means, by permutation", "Welch t (unequal variances)",
             "difference in means; exact interval by inverting the test under a shift",
             _check("values", "Welch t", "welch_t", "mean_difference", "mean_difference",
                    width="welch"),
             ("standardised_difference_with_interval",), default=True,
             extra={"unequal_spread_test": "welch"}),
    _declare("ranks", "Wilcoxon rank-sum test (mid-ranks)", "Wilcoxon ranks with mid-ranks",
             "normal approximation to the rank sum (tie-corrected)",
             "Hodges-Lehmann shift; interval at the exact rank-sum quantiles",
             _check("ranks", "normal approximation to the rank sum", "score_sum_z", "as_is",
                    "hodges_lehmann_shift", order_widths="hodges_lehmann"),
             ("standardised_difference", "probability_of_superiority"),
             extra={"table_route": True,    # few categories: the 2 x c table's network
                    "unequal_spread_test": "brunner-munzel"}),
    _declare("normal-scores", "van der Waerden normal-scores test",
             "van der Waerden normal scores",
             "normal approximation to the normal-scores sum", "Hodges-Lehmann shift",
             _check("normal_scores", "normal approximation to the normal-scores sum",
                    "score_sum_z", "as_is", "hodges_lehmann_shift"),
             ("standardised_difference",), extra={"unequal_spread_test": "brunner-munzel"}),
    _declare("medians", "Mood's median test", "Mood's median test",
             "normal approximation to the count above the median",
             "difference in medians (no exact interval)",
             _check("above_median", "normal approximation to the count above the median",
                    "score_sum_z", "as_is", "median_difference"),
             ("standardised_difference",), extra={"unequal_spread_test": "brunner-munzel"}),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('two-sample',), 'difference in means',
             'permutation test of the difference in means (Pitman)',
             ('pitman-1937',)),
    Reported(('two-sample',), 'rank sum',
             'Wilcoxon rank-sum test',
             ('wilcoxon-1945', 'mann-whitney-1947')),
    Reported(('two-sample',), 'normal-scores',
             'van der Waerden normal-scores test',
             ('van-der-waerden-1952',)),
    Reported(('two-sample',), 'count of the first group above',
             "Mood's median test",
             ('mood-1950',)),
]
