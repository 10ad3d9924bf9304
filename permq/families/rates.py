"""Event rates over an exposure: `count 7 events in 120.5 vs 0.05` (one rate against a
reference rate) and `count 7 events in 120.5 vs 2 events in 98` (two rates).

One rate: the exact Poisson test, Garwood's exact interval for the rate, beside the score z
and its score interval. Two rates: the exact conditional test of a rate ratio of 1 (the
binomial law of the first count given the total) with its exact interval, beside the score z
and the Wald interval for the log rate ratio (Wald z also shown).
"""
from __future__ import annotations

from ..plan.planner import make_plan
from ..result import Result
from .registry import Family, Kind, Reported

KINDS = {"rate": Kind("count", "one rate", "count 7 events in 120.5 vs 0.05"),
         "two-rates": Kind("count", "two rates", "count 7 events in 120.5 vs 2 events in 98")}


def _data(design):
    from ..engine.counts.rates import Rates

    return Rates(tuple(design.counts), tuple(design.exposures), design.reference)


def plan(design):
    from ..engine.counts import rates

    data = _data(design)
    return make_plan("rates", design.settings.family, design.settings,
                     lambda draws: rates.candidates(data, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    from ..engine.counts import rates
    from ..normal import counts as normal

    s, data = design.settings, _data(design)
    out = rates.run(data, s.alternative, the_plan.chosen.algorithm, the_plan.draws,
                    the_plan.seed, progress)
    estimate = rates.estimate(data, s.level, s.alternative)
    also = []
    if data.two:
        (x1, x2), (t1, t2) = data.counts, data.exposures
        nt = normal.two_rates(x1, t1, x2, t2, s.level, s.alternative)
        also.append(normal.wald_log_rate_ratio(x1, t1, x2, t2, s.alternative))
        effect = (f"rate ratio: {x1} events in {t1:g} against {x2} events in {t2:g} "
                  "(first rate / second)")
        groups = [_group(f"{x1} in {t1:g}", x1, t1), _group(f"{x2} in {t2:g}", x2, t2)]
    else:
        x, t = data.counts[0], data.exposures[0]
        nt = normal.one_rate(x, t, data.reference, s.level, s.alternative)
        effect = f"rate of events per unit of exposure, against {data.reference:g}"
        groups = [_group(f"{x} in {t:g}", x, t)]
    return Result(statement, "rates", s.alternative, out, nt, estimate, effect=effect,
                  two_sided_rule=rates.RULE, warnings=list(design.warnings), also_normal=also,
                  extra={"rates": groups})


def _group(name, x, t) -> dict:
    return {"name": name, "events": int(x), "exposure": float(t), "rate": x / t}


def _count_check(design):
    """The count check: Poisson counts and their departures, every simulated count given the
    exact test."""
    from ..robustness.spec import CountCheck

    return CountCheck("rates", "poisson")


HELP = """count 7 events in 120.5 vs 0.05                one rate against a reference rate
count 7 events in 120.5 vs 2 events in 98      two rates: the rate ratio, first / second
Exposures are in any unit (person-years, machine-hours); rates are events per unit."""

FAMILIES = [
    Family("poisson", ("rate", "two-rates"),
           "exact Poisson test (one rate); exact conditional test of the rate ratio (two rates)",
           "event rates: exact Poisson", plan, execute,
           "score z (and the Wald z for the log rate ratio)",
           "rate with Garwood's interval; rate ratio with its exact conditional interval",
           robustness=_count_check,
           default_in=("rate", "two-rates"), help=HELP, selectable=False),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('rates',), "first group's events",
             'exact conditional test of the rate ratio',
             (),
             'over the {n} splits of the total (binomial)'),
    Reported(('rates',), 'count of events',
             'exact Poisson test',
             (),
             'from the Poisson law at the reference rate ({n} counts, from 0)'),
]
