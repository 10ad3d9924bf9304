"""Two groups with unequal spread: `using welch` (the Welch t by permutation) and
`using brunner-munzel` (the Brunner-Munzel statistic by permutation, with the estimate
P(A > B) + 1/2 P(A = B) and its interval). Kind "two-sample"."""
from __future__ import annotations

import math

from ..plan.planner import make_plan
from ..result import Estimate, Result
from .registry import Family, Reported

RULE = "two-sided p = P(|T| >= |t|) under the null (T studentized: no centring needed)"


def _rule(design):
    """The engine's rule for this family's statistic."""
    from ..engine import studentized

    return studentized.WELCH if design.settings.family == "welch" else studentized.BRUNNER_MUNZEL


def plan(design):
    from ..engine import studentized

    s = design.settings
    rule = _rule(design)
    return make_plan("studentized", s.family, s,
                     lambda draws: studentized.candidates(rule, design.x, design.y, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    from ..engine import studentized
    from .two_sample import _summary

    s = design.settings
    out = studentized.run(_rule(design), design.x, design.y, s.alternative,
                          the_plan.chosen.algorithm, the_plan.draws, the_plan.seed, s.level,
                          progress)
    a, b = design.labels
    if s.family == "welch":
        from ..normal.theory import welch_t

        normal = welch_t(design.x, design.y, s.level, s.alternative)
        iv = studentized.interval(out.estimate, out.se, out.critical, s.alternative)
        estimate = Estimate(f"difference in means {design.effect}", out.estimate, iv, s.level,
                            _how("its Welch standard error", out.critical, s, "0"))
        effect = f"difference in means {design.effect}"
    else:
        from ..normal.control import brunner_munzel

        normal = brunner_munzel(design.x, design.y, s.level, s.alternative)
        iv = studentized.interval(out.estimate, out.se, out.critical, s.alternative, (0.0, 1.0))
        how = (_how("its standard error (from the placements)", out.critical, s, "1/2")
               if iv is not None else "no interval: the placements have no spread (the "
               "groups do not overlap)")
        estimate = Estimate(f"P({a} > {b}) + 1/2 P({a} = {b})", out.estimate, iv, s.level, how)
        effect = f"P({a} > {b}) + 1/2 P({a} = {b}), against 1/2"
    return Result(statement, "two-sample", s.alternative, out.outcome, normal, estimate,
                  effect=effect, groups=[_summary(a, design.x), _summary(b, design.y)],
                  two_sided_rule=RULE, warnings=list(design.warnings))


def _how(scale, c, s, null_value) -> str:
    side = {"two-sided": "|T|", "higher": "T", "lower": "-T"}[s.alternative]
    c_text = f"{c:.4g}" if math.isfinite(c) else "none"
    return (f"estimate -+ c x {scale}, c = {c_text} the {100 * s.level:g}% point of {side} over "
            f"the arrangements: {null_value} lies outside exactly when p <= {1 - s.level:g}")


def _welch_robustness(design):
    from ..robustness.control import welch_check

    return welch_check(design)


def _brunner_munzel_robustness(design):
    from ..robustness.control import brunner_munzel_check

    return brunner_munzel_check(design)


FAMILIES = [
    Family("welch", ("two-sample",), "permutation test of the Welch t (studentized: valid "
           "under unequal spread as the groups grow)", "Welch t by permutation, for unequal "
           "spread", plan, execute, "Welch t (unequal variances)",
           "difference in means; interval from the permutation law of the Welch t",
           robustness=_welch_robustness,
           help="""compare weight by dose levels "40", "0" in doses using welch
  the Welch t recomputed for every split of the units: exact when the groups are
  exchangeable, and asymptotically valid for a difference in means when their spreads
  differ (Janssen 1997; Chung and Romano 2013)"""),
    Family("brunner-munzel", ("two-sample",), "Brunner-Munzel test by permutation",
           "Brunner-Munzel by permutation: P(A > B) + 1/2 P(A = B)", plan, execute,
           "Brunner-Munzel t (Satterthwaite df)",
           "P(A > B) + 1/2 P(A = B), with its interval from the permutation law",
           robustness=_brunner_munzel_robustness,
           help="""compare weight by dose levels "40", "0" in doses using brunner-munzel
  the rank counterpart of 'welch': tests P(A > B) + 1/2 P(A = B) = 1/2 without assuming
  equal spread (Neubert and Brunner 2007), and estimates it with an interval"""),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('two-sample',), 'Welch t',
             'studentized permutation test of the Welch t',
             ('janssen-1997', 'chung-romano-2013')),
    Reported(('two-sample',), 'Brunner-Munzel',
             'Brunner-Munzel test by permutation',
             ('brunner-munzel-2000', 'neubert-brunner-2007')),
]
