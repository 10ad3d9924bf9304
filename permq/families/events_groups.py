"""Censored times in three or more groups: `compare days by dose event died` with 3+ levels.

The k-sample weighted log-rank statistic, the quadratic form of the groups' observed-minus-
expected sums in their permutation covariance, exact over every assignment of the units to
groups of the observed sizes (engine/events_groups.py, on the k-sample engine); beside it the
textbook chi-square U' V^- U on k - 1 degrees of freedom (normal/events_groups.py); observed
and expected events and Kaplan-Meier medians per group. There is no single estimate for k
groups: the summary gives each group's observed and expected events instead.
"""
from __future__ import annotations

from ..lazy import module
from ..plan.planner import make_plan
from ..result import Result
from .events import REPORTED as TWO_GROUPS_REPORTED, WEIGHTS, censored_check, group_summary
from .registry import Family, Kind, Reported

engine = module("permq.engine.events_groups")
normal = module("permq.normal.events_groups")

KINDS = {"events-groups": Kind("compare", "censored times in three or more groups",
                               "compare days by G event E with three or more levels of G")}

QUADRATIC_RULE = "the statistic is already two-sided: p = P(L >= l) under the null"


def _arrays(design):
    return design.time, design.event, design.groups


def plan(design):
    s = design.settings
    return make_plan("k-sample", s.family, s, lambda draws: engine.candidates(
        s.family, *_arrays(design), draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    k = len(design.labels)
    args = _arrays(design)
    outcome = engine.run(s.family, *args, s.alternative, the_plan.chosen.algorithm,
                         draws=the_plan.draws, seed=the_plan.seed, progress=progress)
    nt = normal.chi_square(s.family, *args, k)
    also = [] if s.family == "log-rank" else [normal.chi_square("log-rank", *args, k)]
    observed, u, _ = normal.observed_expected("log-rank", *args, k)
    survival = []
    for i, name in enumerate(design.labels):
        sel = design.groups == i
        row = group_summary(name, design.time[sel], design.event[sel])
        row["expected"] = float(observed[i] - u[i])
        survival.append(row)
    return Result(statement, "events", s.alternative, outcome, nt, None,
                  effect=f"hazards of the {k} groups of {design.names[1]}; event: "
                         f"{design.event_words}",
                  two_sided_rule=QUADRATIC_RULE, warnings=list(design.warnings),
                  also_normal=also, extra={"survival": survival})



HELP = """  censored times, three or more groups:
  compare days by supplier event failed in lamps      (supplier with 3 or more levels)
  the exact permutation test of L = (N - 1) sum S_g^2 / n_g / sum a^2, the groups' O - E
  sums S_g in their permutation covariance, over every assignment to groups; beside it the
  textbook chi-square U' V^- U on k - 1 df; observed and expected events per group."""

FAMILIES = [
    Family(word, ("events-groups",), f"k-sample {title} (exact permutation law)",
           f"k-sample {short} of censored times", plan, execute,
           f"{counterpart}, k - 1 df",
           "none for k groups: observed and expected events per group",
           robustness=censored_check, default_in=("events-groups",) if word == "log-rank" else (),
           help=HELP + note)
    for word, (title, short, counterpart, note) in WEIGHTS.items()]

# How reports name the tests (registry.Reported): the two-group names with their sources
REPORTED = [Reported(("events",), "k-sample " + r.statistic,
                     f"k-sample {r.name.removesuffix(' by permutation')} by permutation",
                     r.sources + ("klein-moeschberger-2003",))
            for r in TWO_GROUPS_REPORTED]
# Standard citation, given from memory
BIBLIOGRAPHY = {
    "klein-moeschberger-2003": "Klein, J. P. and Moeschberger, M. L. (2003). Survival "
                               "Analysis: Techniques for Censored and Truncated Data, 2nd ed. "
                               "Springer, New York.",
}
