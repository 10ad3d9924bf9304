"""Censored times to an event in two groups: `compare days by arm event died`.

The log-rank test and its weighted forms as exact permutation tests over the group labels,
given the observed times and censoring (engine/events.py: the weighted log-rank score U is a
sum of unit scores, so the two-sample engine counts, lists or samples it). Beside each, the
textbook chi-square with the hypergeometric variance (normal/events.py); the hazard ratio by
Peto's one-step exp(U / V) with its normal-theory interval; Kaplan-Meier medians per group.

`alternative higher`: the first group has more events than expected under the null (U > 0),
that is, its hazard is the higher (its times are the shorter).
"""
from __future__ import annotations

from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..plan.planner import make_plan
from ..result import Result
from .registry import Family, Kind, Reported

KINDS = {"events": Kind("compare", "censored times",
                        "compare days by supplier event failed (1 = event, 0 = censored)")}


def _data(design):
    from ..engine.events import EventTimes

    return EventTimes(tuple(float(v) for v in design.time1), tuple(int(v) for v in design.event1),
                      tuple(float(v) for v in design.time2), tuple(int(v) for v in design.event2))


def plan(design):
    from ..engine import events

    data = _data(design)
    return make_plan("two-sample", design.settings.family, design.settings,
                     lambda draws: events.candidates(design.settings.family, data, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    from ..engine import events
    from ..normal import events as normal

    s = design.settings
    data = _data(design)
    outcome = events.run(s.family, data, s.alternative, the_plan.chosen.algorithm, s.level,
                         draws=the_plan.draws, seed=the_plan.seed, progress=progress)
    args = (design.time1, design.event1, design.time2, design.event2)
    nt = normal.chi_square(s.family, *args, s.alternative, s.level, design.labels)
    also = [] if s.family == "log-rank" else [normal.chi_square("log-rank", *args,
                                                                  s.alternative)]
    estimate = normal.hazard_ratio(*args, s.level, design.labels)
    a, b = design.labels
    survival = [group_summary(a, design.time1, design.event1),
                group_summary(b, design.time2, design.event2)]
    return Result(statement, "events", s.alternative, outcome, nt, estimate,
                  effect=f"hazard of {a} against {b} (higher: {a} has the events sooner); "
                         f"event: {design.event_words}",
                  two_sided_rule=TWO_SIDED_LINEAR, warnings=list(design.warnings),
                  also_normal=also, extra={"survival": survival})


def group_summary(name, time, event) -> dict:
    from ..normal.events import km_median

    return {"name": name, "n": int(len(time)), "events": int(sum(event)),
            "censored": int(len(time) - sum(event)), "median": km_median(time, event)}


def censored_check(design):
    """The robustness check of censored times (robustness/censored), with this weight."""
    from ..robustness.spec import CensoredCheck

    return CensoredCheck(design.settings.family)

HELP = """  censored times to an event, two groups:
  compare days by supplier event failed in lamps    failed: 1 = the event, 0 = censored then
  compare days by arm event outcome "dead"          your text column: that value marks an
                                                    event, any other a censored time
  exact permutation test of the score U = O - E of the first group over the group labels,
  given the times and censoring; beside it the textbook chi-square; hazard ratio exp(U / V);
  Kaplan-Meier medians. 'alternative higher': the first group has the higher hazard."""

# each weight: (the test, its short name, the counterpart, the help's note on the weight)
WEIGHTS = {
    "log-rank": ("log-rank test", "log-rank test",
                 "log-rank chi-square (hypergeometric variance)", ""),
    "gehan": ("Gehan's generalised Wilcoxon test", "Gehan test: early differences weigh more",
              "Gehan-Breslow weighted log-rank chi-square",
              "\n  gehan: each event time weighted by the number at risk (Gehan 1965)"),
    "tarone-ware": ("Tarone-Ware test", "Tarone-Ware test: root-at-risk weights",
                    "Tarone-Ware weighted log-rank chi-square",
                    "\n  tarone-ware: weights the square root of the number at risk "
                    "(Tarone & Ware 1977)"),
    "peto-prentice": ("Peto-Prentice generalised Wilcoxon test",
                      "Peto-Prentice test: survival-estimate weights",
                      "Peto-Prentice weighted log-rank chi-square",
                      "\n  peto-prentice: weights prod (1 - d / (n + 1)) over earlier event "
                      "times (Peto & Peto 1972; Prentice 1978)"),
}

FAMILIES = [
    Family(word, ("events",), title + (" (exact permutation law of O - E)"
                                        if word == "log-rank" else " (exact permutation law)"),
           short if word != "log-rank" else "log-rank test of censored times", plan, execute,
           counterpart,
           "hazard ratio exp(U / V) with its normal-theory interval; Kaplan-Meier medians",
           robustness=censored_check, default_in=("events",) if word == "log-rank" else (),
           help=HELP + note)
    for word, (title, short, counterpart, note) in WEIGHTS.items()]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(("events",), "log-rank", "log-rank test by permutation", ("mantel-1966",)),
    Reported(("events",), "Gehan", "Gehan's generalised Wilcoxon test by permutation",
             ("gehan-1965",)),
    Reported(("events",), "Tarone-Ware", "Tarone-Ware test by permutation",
             ("tarone-ware-1977",)),
    Reported(("events",), "Peto-Prentice", "Peto-Prentice generalised Wilcoxon test by "
             "permutation", ("peto-peto-1972", "prentice-1978")),
]
# Standard citations, given from memory
BIBLIOGRAPHY = {
    "mantel-1966": "Mantel, N. (1966). Evaluation of survival data and two new rank order "
                   "statistics arising in its consideration. Cancer Chemotherapy Reports 50, "
                   "163-170.",
    "gehan-1965": "Gehan, E. A. (1965). A generalized Wilcoxon test for comparing arbitrarily "
                  "singly-censored samples. Biometrika 52, 203-223.",
    "tarone-ware-1977": "Tarone, R. E. and Ware, J. (1977). On distribution-free tests for "
                        "equality of survival distributions. Biometrika 64, 156-160.",
    "peto-peto-1972": "Peto, R. and Peto, J. (1972). Asymptotically efficient rank invariant "
                      "test procedures. Journal of the Royal Statistical Society A 135, "
                      "185-207.",
    "prentice-1978": "Prentice, R. L. (1978). Linear rank tests with right censored data. "
                     "Biometrika 65, 167-179.",
}
