"""Two independent samples: permutation p-value, normal theory and the shift estimate."""
from __future__ import annotations

import numpy as np

from ..engine import rankintervals, twosample
from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..normal.theory import two_sample as normal_two_sample
from ..engine.core.limits import INTERVAL_DRAWS
from ..plan.planner import make_plan
from ..result import Estimate, Result
from .registry import Family


def plan(design):
    s = design.settings
    return make_plan("two-sample", s.family, s,
                     lambda draws: twosample.candidates(s.family, design.x, design.y, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    outcome, interval = twosample.run(s.family, design.x, design.y, s.alternative,
                                      the_plan.chosen.algorithm, s.level,
                                      draws=the_plan.draws, seed=the_plan.seed, progress=progress)
    normal = normal_two_sample(s.family, design.x, design.y, s.level, s.alternative)
    estimate = _estimate(design, interval, outcome.method, the_plan.draws)
    a, b = design.labels
    groups = [_summary(a, design.x), _summary(b, design.y)]
    return Result(statement, "two-sample", s.alternative, outcome, normal, estimate,
                  effect=_effect_words(s.family, design.effect), groups=groups,
                  two_sided_rule=TWO_SIDED_LINEAR, warnings=list(design.warnings))


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
    return Estimate(f"difference in medians {design.effect}",
                    float(np.median(x) - np.median(y)), None, s.level,
                    "no exact interval for this family")


def _summary(name, v):
    return {"name": name, "n": int(len(v)), "mean": float(np.mean(v)),
            "median": float(np.median(v)), "sd": float(np.std(v, ddof=1)) if len(v) > 1 else None}


def _sampled_words(method, draws, what):
    if method != "monte-carlo":
        return ""
    if draws > INTERVAL_DRAWS:
        return f" (on the first {INTERVAL_DRAWS:,} sampled {what})"
    return f" (on the sampled {what})"


def _check(scores, counterpart, normal_p, reported, effect):
    """The robustness check of a two-sample family (pieces named from robustness/)."""
    def check(design):
        from ..robustness import counterparts, effects, reported as rep, scoring
        from ..robustness.spec import Check

        return Check("linear", getattr(scoring, scores), counterpart,
                     getattr(counterparts, normal_p), getattr(rep, reported),
                     effect=getattr(effects, effect))
    return check


def _declare(keyword, title, summary, normal, estimate, robustness, default=False, help=""):
    return Family(keyword, ("two-sample",), title, summary, plan, execute, normal, estimate,
                  robustness=robustness, default_in=("two-sample",) if default else (),
                  help=help)


FAMILIES = [
    _declare("means", "permutation test of the difference in means (Pitman)",
             "difference in means, by permutation", "Welch t (unequal variances)",
             "difference in means; exact interval by inverting the test under a shift",
             _check("values", "Welch t", "welch_t", "mean_difference", "mean_difference"),
             default=True),
    _declare("ranks", "Wilcoxon rank-sum test (mid-ranks)", "Wilcoxon ranks with mid-ranks",
             "normal approximation to the rank sum (tie-corrected)",
             "Hodges-Lehmann shift; interval at the exact rank-sum quantiles",
             _check("ranks", "normal approximation to the rank sum", "score_sum_z", "as_is",
                    "hodges_lehmann_shift")),
    _declare("normal-scores", "van der Waerden normal-scores test",
             "van der Waerden normal scores",
             "normal approximation to the normal-scores sum", "Hodges-Lehmann shift",
             _check("normal_scores", "normal approximation to the normal-scores sum",
                    "score_sum_z", "as_is", "hodges_lehmann_shift")),
    _declare("medians", "Mood's median test", "Mood's median test",
             "normal approximation to the count above the median",
             "difference in medians (no exact interval)",
             _check("above_median", "normal approximation to the count above the median",
                    "score_sum_z", "as_is", "median_difference")),
]
