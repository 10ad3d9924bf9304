"""Paired differences and one sample against a value: sign-flip tests and their estimates."""
from __future__ import annotations

import numpy as np

from ..engine import onesample, rankintervals
from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..normal import theory
from ..engine.core.limits import INTERVAL_DRAWS
from ..plan.planner import make_plan
from ..result import Estimate, Result
from .registry import Family, Reported, effect_pieces
from ..engine.core.scores import median

ZERO_RULE = ("zero differences carry no sign and are left out of the sign flips; for ranks they "
             "keep their place in the ranking (Pratt's rule)")


def plan(design):
    s = design.settings
    return make_plan(design.kind, s.family, s,
                     lambda draws: onesample.candidates(s.family, design.d, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    outcome, interval = onesample.run(s.family, design.d, s.alternative,
                                      the_plan.chosen.algorithm, s.level, draws=the_plan.draws,
                                      seed=the_plan.seed, progress=progress)
    normal = NORMAL[s.family](design.d, s.level, s.alternative)
    estimate = _estimate(design, interval, outcome.method, the_plan.draws)
    warnings = list(design.warnings)
    zeros = int(np.sum(design.d == 0))
    if zeros:
        warnings.append(f"{zeros} zero difference{'s' if zeros > 1 else ''}: {ZERO_RULE}")
    d = design.d + design.reference
    groups = [{"name": design.effect if design.kind == "paired" else design.labels[0],
               "n": int(len(d)), "mean": float(d.mean()), "median": float(median(d)),
               "sd": float(d.std(ddof=1)) if len(d) > 1 else None}]
    return Result(statement, design.kind, s.alternative, outcome, normal, estimate,
                  effect=_effect_words(s.family, design), groups=groups,
                  two_sided_rule=TWO_SIDED_LINEAR, warnings=warnings,
                  extra={"zero_rule": ZERO_RULE})


NORMAL = {"means": theory.one_sample_t, "ranks": theory.signed_rank_z, "signs": theory.sign_z}


def _effect_words(family, design):
    what = design.effect
    if family == "means":
        return f"mean of {what}"
    if family == "ranks":
        return f"pseudo-median of {what}"
    return f"median of {what}"


def _estimate(design, interval, method, the_draws=0):
    s = design.settings
    d = design.d
    label = design.effect
    if s.family == "means":
        how = ("inverting the sign-flip test under a shift model"
               + _sampled_words(method, the_draws, "sign patterns"))
        return Estimate(f"mean of {label}", float(d.mean()), interval, s.level, how)
    if s.family == "ranks":
        est, iv, exact = rankintervals.hodges_lehmann_one_sample(d, s.level, s.alternative)
        how = ("order statistics of the Walsh averages at the exact signed-rank quantiles "
               "(no-ties law)" if exact else "order statistics at normal-approximation ranks")
        return Estimate(f"Hodges-Lehmann pseudo-median of {label}", est, iv, s.level, how)
    est, iv = rankintervals.median_interval(d, s.level, s.alternative)
    return Estimate(f"median of {label}", est, iv, s.level,
                    "order statistics at binomial quantiles (sign-test interval)")


def _sampled_words(method, draws, what):
    if method != "monte-carlo":
        return ""
    if draws > INTERVAL_DRAWS:
        return f" (on the first {INTERVAL_DRAWS:,} sampled {what})"
    return f" (on the sampled {what})"


def _check(scores, counterpart, normal_p, reported, effect, centre, width=None,
           order_widths=None):
    """The robustness check of a sign-flip family (pieces named from robustness/)."""
    def check(design):
        from ..robustness import counterparts, effects, reported as rep, scoring, widths
        from ..robustness.spec import Check

        return Check("signs", getattr(scoring, scores), counterpart,
                     getattr(counterparts, normal_p), getattr(rep, reported),
                     effect=getattr(effects, effect), centre=centre,
                     width=getattr(widths, width) if width else None,
                     order_widths=getattr(widths, order_widths) if order_widths else None)
    return check


def _t_name(problem) -> str:
    return "one-sample t on the differences" if problem.kind == "paired" else "one-sample t"


def _declare(keyword, title, summary, normal, estimate, robustness, sizes, default=False):
    kinds = ("paired", "one-sample")
    return Family(keyword, kinds, title, summary, plan, execute, normal, estimate,
                  robustness=robustness, default_in=kinds if default else (),
                  effect_sizes=effect_pieces(*sizes))


FAMILIES = [
    _declare("means", "sign-flip permutation test of the mean (Fisher)",
             "mean difference, by sign flips", "one-sample t",
             "mean; exact interval by inverting the sign-flip test",
             _check("values", _t_name, "one_sample_t", "mean_of_flips", "mean", "mean",
                    width="one_sample_t"),
             ("standardised_mean_difference_with_interval",), default=True),
    _declare("ranks", "Wilcoxon signed-rank test (mid-ranks, Pratt's rule for zeros)",
             "Wilcoxon signed ranks", "normal approximation to the signed-rank sum",
             "Hodges-Lehmann pseudo-median; interval at the exact signed-rank quantiles",
             _check("signed_ranks", "normal approximation to the signed-rank sum",
                    "signed_rank_z", "positive_sum", "pseudo_median", "pseudo-median",
                    order_widths="pseudo_median"),
             ("standardised_mean_difference", "matched_rank_biserial")),
    _declare("signs", "sign test", "sign test (paired, one sample)",
             "normal approximation to the sign count",
             "median; interval at binomial quantiles",
             _check("signs", "normal approximation to the sign count", "sign_z",
                    "positive_sum", "median", "median", order_widths="sign_interval"),
             ("standardised_mean_difference", "positive_share")),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('paired', 'one-sample'), 'mean difference',
             'sign-flip permutation test of the mean (Fisher)',
             ('fisher-1935',)),
    Reported(('paired', 'one-sample'), 'signed-rank',
             "Wilcoxon signed-rank test (zeros by Pratt's rule)",
             ('wilcoxon-1945', 'pratt-1959')),
    Reported(('paired', 'one-sample'), 'number of positive',
             'sign test',
             ('dixon-mood-1946',)),
]
