"""Three or more groups: permutation F, Kruskal-Wallis, normal scores and the median test."""
from __future__ import annotations

from ..lazy import module
from ..engine.core.pvalues import TWO_SIDED_QUADRATIC
from ..plan.planner import make_plan
from ..result import Result
from .registry import Family, Reported, effect_pieces

ksample = module("permq.engine.ksample")           # loaded when a statement first runs
normal_k = module("permq.normal.ksample")

# the counterpart of each family, by name in normal/ksample.py
NORMAL = {"means": "one_way_anova", "ranks": "kruskal_chi_square",
          "normal-scores": "normal_scores_chi_square",
          "medians": "median_chi_square"}


def plan(design):
    s = design.settings
    fam = ksample.FAMILIES[s.family]
    return make_plan("k-sample", s.family, s,
                     lambda draws: fam.candidates(design.values, design.groups, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    v, g = design.values, design.groups
    out = ksample.FAMILIES[s.family].run(v, g, s.alternative, the_plan.chosen.algorithm,
                                         the_plan.draws, the_plan.seed, progress)
    also = [normal_k.welch_anova(v, g)] if s.family == "means" else []
    normal = getattr(normal_k, NORMAL[s.family])(v, g)
    return Result(statement, design.kind, s.alternative, out, normal, None,
                  effect=f"differences among {', '.join(design.labels)}",
                  groups=normal_k.group_summaries(v, g, design.labels),
                  two_sided_rule=TWO_SIDED_QUADRATIC, warnings=list(design.warnings),
                  also_normal=also)


def _check(keyword, scores, counterpart, normal_p):
    """The robustness check of a k-sample family: sum_g S_g^2 / n_g of the group score sums."""
    def check(design):
        from ..robustness import counterparts, reported, scoring
        from ..robustness.spec import Check

        return Check("quadratic", getattr(scoring, scores), counterpart,
                     getattr(counterparts, normal_p),
                     reported.quadratic(ksample.FAMILIES[keyword]))
    return check


def _declare(keyword, title, normal, scores, counterpart, normal_p, default=False):
    sizes = effect_pieces("epsilon_squared" if keyword == "ranks" else "eta_squared")
    return Family(keyword, ("k-sample",), title, "", plan, execute, normal, "", effect_sizes=sizes,
                  robustness=_check(keyword, scores, counterpart, normal_p),
                  default_in=("k-sample",) if default else ())


FAMILIES = [
    _declare("means", "permutation F test", "one-way ANOVA F (and Welch's ANOVA)",
             "values", "one-way ANOVA F", "anova_f", default=True),
    _declare("ranks", "Kruskal-Wallis test (mid-ranks)", "Kruskal-Wallis chi-square approximation",
             "ranks", "Kruskal-Wallis chi-square approximation", "chi_square_of_scores"),
    _declare("normal-scores", "van der Waerden k-sample test",
             "chi-square approximation to the normal-scores statistic", "normal_scores",
             "van der Waerden chi-square approximation", "chi_square_of_scores"),
    _declare("medians", "Mood's median test for k groups", "median test chi-square approximation",
             "above_median", "median test chi-square approximation", "median_chi_square"),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('k-sample',), 'F',
             'permutation F test (Pitman)',
             ('pitman-1938',)),
    Reported(('k-sample',), 'Kruskal-Wallis',
             'Kruskal-Wallis test',
             ('kruskal-wallis-1952',)),
    Reported(('k-sample',), 'van der Waerden',
             'van der Waerden normal-scores k-sample test',
             ('van-der-waerden-1952',)),
    Reported(('k-sample',), 'median test',
             'k-sample median test',
             ('mood-1950',)),
]
