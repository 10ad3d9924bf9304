"""Two independent samples: permutation p-value, normal theory and the shift estimate."""
from __future__ import annotations

import numpy as np

from ..engine import rankintervals, twosample
from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..normal.theory import two_sample as normal_two_sample
from ..engine.core.limits import INTERVAL_DRAWS
from ..plan.planner import make_plan
from ..result import Estimate, Result


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
