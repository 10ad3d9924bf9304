"""Contingency tables, paired binary outcomes and one proportion."""
from __future__ import annotations

import dataclasses

from ..errors import BindError
from ..lazy import module
from ..plan.planner import make_plan
from ..result import Result
from .registry import Family, Reported

# loaded when a statement first runs
tables, tables_2x2 = module("permq.engine.tables.rxc"), module("permq.engine.tables.twobytwo")
tables_paired = module("permq.engine.tables.paired")
tables_proportion = module("permq.engine.tables.proportion")
table_stats = module("permq.engine.tables.stats")
normal_tables = module("permq.normal.tables")

# the counterpart of each r x c family, by name in normal/tables.py
RC_NORMAL = {"fisher": "pearson_chi_square", "chi-square": "pearson_chi_square",
             "likelihood-ratio": "likelihood_ratio"}


def route_of(design) -> str:
    if design.form in ("proportion", "paired"):
        return design.form
    if design.table.shape == (2, 2) and design.settings.family == "fisher":
        return "2x2"
    return "rxc"


def plan(design):
    s = design.settings
    route = route_of(design)
    t = design.table
    if route == "rxc" and s.family != "trend" and s.alternative != "two-sided":
        raise BindError(f"the {s.family} statistic of a {t.shape[0]} x {t.shape[1]} table has "
                        "no direction", hint="use 'ordered' for a trend, or drop 'alternative'")
    if route == "proportion":
        cands = lambda draws: tables_proportion.candidates(t)
    elif route == "paired":
        cands = lambda draws: tables_paired.candidates(t)
    elif route == "2x2":
        cands = lambda draws: tables_2x2.candidates(t)
    else:
        cands = lambda draws: tables.candidates(t, s.family, draws, design.row_scores,
                                                design.col_scores)
    return make_plan("table", s.family, s, cands)


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s, t = design.settings, design.table
    route = route_of(design)
    alg, draws, seed = the_plan.chosen.algorithm, the_plan.draws, the_plan.seed
    also, estimate = [], None
    if route == "proportion":
        out = tables_proportion.run(t, "binomial", s.alternative, alg, p0=design.reference,
                                    progress=progress)
        k, n = int(t[0, 0]), int(t.sum())
        normal = normal_tables.one_proportion(k, n, design.reference, s.level, s.alternative)
        estimate = tables_proportion.proportion(t, s.level, s.alternative)
        effect = f"proportion of successes - {design.reference:g}"
        rule = tables_proportion.TWO_SIDED_RULE
    elif route == "paired":
        out = tables_paired.run(t, "mcnemar", s.alternative, alg, progress=progress)
        out = dataclasses.replace(out, statistic_name=(
            f"discordant pairs {design.row_labels[0]} / {design.col_labels[1]} (b)"))
        normal = normal_tables.mcnemar(t, s.level, s.alternative)
        estimate = tables_paired.odds_ratio(t, s.level, s.alternative)
        rows, cols = design.row_labels, design.col_labels
        effect = (f"discordant pairs: {rows[0]} with {cols[1]}, against {rows[1]} with "
                  f"{cols[0]}")
        rule = tables_paired.TWO_SIDED_RULE
    elif route == "2x2":
        out = tables_2x2.run(t, "fisher", s.alternative, alg, progress=progress)
        normal = normal_tables.log_odds_ratio(t, s.level, s.alternative)
        if s.alternative == "two-sided":
            also.append(normal_tables.pearson_chi_square(t))
        estimate = tables_2x2.odds_ratio(t, s.level, s.alternative)
        effect = (f"odds ratio of '{design.col_labels[0]}' in '{design.row_labels[0]}' "
                  f"against '{design.row_labels[1]}'")
        if design.names:        # from columns: the arms are the `by` column's levels
            effect = (f"odds ratio of '{design.row_labels[0]}' in '{design.col_labels[0]}' "
                      f"against '{design.col_labels[1]}'")
        rule = tables_2x2.TWO_SIDED_RULE
    else:
        u, v = design.row_scores, design.col_scores
        out = tables.run(t, s.family, s.alternative, alg, draws, seed, progress, u, v)
        if s.family == "trend":
            normal = normal_tables.trend(t, alternative=s.alternative, row_scores=u,
                                         col_scores=v)
            effect = "a rise of the column order with the row order"
        else:
            normal = getattr(normal_tables, RC_NORMAL[s.family])(t)
            if s.family == "fisher":
                also.append(normal_tables.likelihood_ratio(t))
            effect = "association of rows and columns"
        rule = table_stats.RULES[s.family]
    summary = normal_tables.table_summary(t, design.row_labels, design.col_labels)
    binomial = route in ("proportion", "paired")     # counts of successes, not arrangements
    return Result(statement, "table", s.alternative, out, normal, estimate, effect=effect,
                  two_sided_rule=rule, warnings=list(design.warnings), also_normal=also,
                  extra={"table": summary}, reference="outcomes" if binomial else "arrangements",
                  exact_heading="exact binomial" if binomial else "")


TABLE_KINDS = ("table", "ordered-table")


def _count_check(design):
    """The count check: each simulated table gets the route and statistic this design's own
    exact test takes."""
    from ..robustness.spec import CountCheck

    s = design.settings
    return CountCheck(route_of(design), s.family, ordered=s.family == "trend")

FAMILIES = [
    Family("fisher", TABLE_KINDS, "Fisher's exact test (Freeman-Halton for r x c)",
           "Fisher's exact test", plan, execute,
           "Pearson chi-square (and the likelihood ratio G2)",
           "2 x 2: conditional maximum-likelihood odds ratio with its exact interval",
           robustness=_count_check, default_in=("table",)),
    Family("chi-square", TABLE_KINDS, "exact test of Pearson's chi-square",
           "Pearson chi-square, exact", plan, execute, "Pearson chi-square approximation",
           robustness=_count_check),
    Family("likelihood-ratio", TABLE_KINDS, "exact test of the likelihood-ratio statistic G2",
           "likelihood-ratio statistic, exact", plan, execute,
           "chi-square approximation to G2", robustness=_count_check),
    Family("trend", ("ordered-table",), "exact linear-by-linear association (trend) test",
           "linear-by-linear trend (ordered tables)", plan, execute,
           "normal approximation to the linear-by-linear statistic", robustness=_count_check,
           default_in=("ordered-table",)),
    Family("fisher", ("paired-table",), "McNemar's exact test (binomial on discordant pairs)",
           "Fisher's exact test", plan, execute, "McNemar's chi-square",
           "conditional odds ratio of the discordant pairs with its exact interval",
           robustness=_count_check, default_in=("paired-table",)),
    Family("binomial", ("proportion",), "exact binomial test", "exact binomial test", plan,
           execute, "normal approximation to the binomial (score test)",
           "proportion with its Clopper-Pearson interval", robustness=_count_check,
           default_in=("proportion",), selectable=False),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('table',), 'top-left count',
             "Fisher's exact test",
             ('fisher-1935b',),
             'over {n} tables with the observed margins'),
    Reported(('table',), 'table probability',
             'Fisher-Freeman-Halton exact test',
             ('freeman-halton-1951',),
             'over {n} tables with the observed margins'),
    Reported(('table',), 'Pearson chi-square',
             "exact test of Pearson's chi-square",
             ('pearson-1900',),
             'over {n} tables with the observed margins'),
    Reported(('table',), 'likelihood-ratio',
             'exact likelihood-ratio test',
             ('wilks-1938',),
             'over {n} tables with the observed margins'),
    Reported(('table',), 'linear-by-linear',
             'exact linear-by-linear trend test (Cochran-Armitage for 2 x k)',
             ('cochran-1954', 'armitage-1955'),
             'over {n} tables with the observed margins'),
    Reported(('table',), 'discordant pairs',
             "McNemar's exact test",
             ('mcnemar-1947',),
             'from the binomial law of the {trials} discordant pairs'),
    Reported(('table',), 'count of successes',
             'exact binomial test',
             (),
             'from the binomial law of the {trials} trials'),
]
