"""Ordered groups: the linear trend in dose scores (means) and Jonckheere-Terpstra (ranks)."""
from __future__ import annotations

from ..lazy import module
from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..plan.planner import make_plan
from ..result import Result
from .registry import Family, Reported, effect_pieces

ordered = module("permq.engine.ordered")           # loaded when a statement first runs
normal_k = module("permq.normal.ksample")


def plan(design):
    s = design.settings
    fam = ordered.FAMILIES[s.family]
    v, g = design.values, design.groups
    if s.family == "means":
        cands = lambda draws: fam.candidates(v, g, design.scores, draws)
    else:
        cands = lambda draws: fam.candidates(v, g, draws)
    return make_plan("ordered", s.family, s, cands)


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    v, g = design.values, design.groups
    alg, draws, seed = the_plan.chosen.algorithm, the_plan.draws, the_plan.seed
    fam = ordered.FAMILIES[s.family]
    also = []
    if s.family == "means":
        out = fam.run(v, g, s.alternative, alg, draws, seed, progress, scores=design.scores)
        normal = normal_k.linear_trend_t(v, g, design.scores, s.alternative, s.level)
    else:
        out = fam.run(v, g, s.alternative, alg, draws, seed, progress)
        normal = normal_k.jonckheere_normal(v, g, s.alternative)
        also.append(normal_k.linear_trend_t(v, g, design.scores, s.alternative, s.level))
    estimate = ordered.slope_estimate(v, g, design.scores, s.level, s.alternative, progress,
                                      limits=the_plan.limits)
    return Result(statement, design.kind, s.alternative, out, normal, estimate,
                  effect=f"a rise along {' < '.join(design.labels)}",
                  groups=normal_k.group_summaries(v, g, design.labels),
                  two_sided_rule=TWO_SIDED_LINEAR, warnings=list(design.warnings),
                  also_normal=also)


def _trend_check(design):
    from ..robustness import counterparts, reported, scoring
    from ..robustness.spec import Check

    return Check("linear", scoring.values, "linear trend t", counterparts.trend_t,
                 reported.trend)


def _jonckheere_check(design):
    from ..robustness import counterparts, reported, scoring
    from ..robustness.spec import Check

    return Check("pairs", scoring.values, "Jonckheere-Terpstra normal approximation",
                 counterparts.jonckheere_z, reported.jonckheere)


FAMILIES = [
    Family("means", ("ordered",), "permutation test of the linear trend in dose scores",
           "", plan, execute, "linear trend t", "trend slope; exact interval by inversion",
           robustness=_trend_check, default_in=("ordered",),
           effect_sizes=effect_pieces("eta_squared")),
    Family("ranks", ("ordered",), "Jonckheere-Terpstra test", "", plan, execute,
           "Jonckheere-Terpstra normal approximation (and the linear trend t)",
           "trend slope; exact interval by inversion", robustness=_jonckheere_check,
           effect_sizes=effect_pieces("epsilon_squared", "concordance_share")),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('ordered',), 'Jonckheere',
             'Jonckheere-Terpstra test',
             ('jonckheere-1954', 'terpstra-1952')),
    Reported(('ordered',), 'linear trend',
             'permutation test of a linear trend in the dose scores',
             ('pitman-1938',)),
]
