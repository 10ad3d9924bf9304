"""Censored times in two groups within strata: `compare days by dose event died within litter`.

The stratified weighted log-rank score U (each stratum's own risk sets) as an exact
permutation test over the labels within each stratum (engine/events_strata.py: counted,
listed or sampled by the blocked engine's stratified sum); beside it the stratified chi-square
(normal/events_strata.py); the stratified hazard ratio exp(U / V) with its normal-theory
interval; Kaplan-Meier medians per group and the events per stratum.

`alternative higher`: the first group has more events than expected within its strata, that
is, its hazard is the higher.
"""
from __future__ import annotations

from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..lazy import module
from ..plan.planner import make_plan
from ..result import Result
from .events import REPORTED as TWO_GROUPS_REPORTED, WEIGHTS, censored_check, group_summary
from .registry import Family, Kind, Reported

engine = module("permq.engine.events_strata")
normal = module("permq.normal.events_strata")

KINDS = {"events-strata": Kind("compare", "censored times within strata",
                               "add 'within STRATUM' (two groups)", "events")}


def _names(design) -> dict:
    return dict(enumerate(design.strata_labels))


def _arrays(design):
    return design.time, design.event, design.groups, design.strata


def plan(design):
    s = design.settings
    return make_plan("blocked", s.family, s, lambda draws: engine.candidates(
        s.family, *_arrays(design), draws, _names(design)))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    args = _arrays(design)
    outcome = engine.run(s.family, *args, s.alternative, the_plan.chosen.algorithm,
                         draws=the_plan.draws, seed=the_plan.seed, progress=progress,
                         names=_names(design), limits=the_plan.limits)
    nt = normal.chi_square(s.family, *args, s.alternative, s.level)
    also = [] if s.family == "log-rank" else [
        normal.chi_square("log-rank", *args, s.alternative, with_interval=False)]
    estimate = normal.hazard_ratio(*args, s.level, design.labels)
    a, b = design.labels
    survival = [group_summary(name, design.time[design.groups == i],
                              design.event[design.groups == i])
                for i, name in enumerate(design.labels)]
    return Result(statement, "events", s.alternative, outcome, nt, estimate,
                  effect=f"hazard of {a} against {b} within strata of {design.names[3]} "
                         f"(higher: {a} has the events sooner); event: {design.event_words}",
                  two_sided_rule=TWO_SIDED_LINEAR, warnings=list(design.warnings),
                  also_normal=also, extra={"survival": survival, "strata": _rows(design)})


def _rows(design) -> list:
    rows = []
    for i, name in enumerate(design.strata_labels):
        sel = design.strata == i
        rows.append({"stratum": name, "groups": [
            {"group": g, "n": int((sel & (design.groups == j)).sum()),
             "events": int(design.event[sel & (design.groups == j)].sum())}
            for j, g in enumerate(design.labels)]})
    return rows




HELP = """  censored times, two groups within strata:
  compare days by supplier event failed within bench in lamps
  each stratum has its own risk sets; the exact permutation test of the summed score
  U = sum over strata of O - E of the first group, relabelling units within each stratum
  only; beside it the stratified chi-square; the stratified hazard ratio exp(U / V) with its
  normal-theory interval. 'alternative higher': the first group has the higher hazard."""

FAMILIES = [
    Family(word, ("events-strata",), f"stratified {title} (exact permutation law within "
           "strata)", f"stratified {short} of censored times", plan, execute,
           f"stratified {counterpart}",
           "stratified hazard ratio exp(U / V) with its normal-theory interval (no exact "
           "interval: the permutation law tests equal hazards only)",
           robustness=censored_check, default_in=("events-strata",) if word == "log-rank" else (),
           help=HELP + note)
    for word, (title, short, counterpart, note) in WEIGHTS.items()]

# How reports name the tests (registry.Reported): the two-group names with their sources
REPORTED = [Reported(("events",), "stratified " + r.statistic,
                     f"stratified {r.name.removesuffix(' by permutation')} by permutation "
                     "within strata",
                     r.sources + ("kalbfleisch-prentice-1980",))
            for r in TWO_GROUPS_REPORTED]
# Standard citation, given from memory
BIBLIOGRAPHY = {
    "kalbfleisch-prentice-1980": "Kalbfleisch, J. D. and Prentice, R. L. (1980). The "
                                 "Statistical Analysis of Failure Time Data. Wiley, New York.",
}
