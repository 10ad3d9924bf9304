"""Paired outcomes beyond the 2 x 2 table.

- Two outcomes in three or more categories on each unit (`count before vs after paired`):
  the exact conditional tests of marginal homogeneity (Stuart-Maxwell form; the default: did
  the distribution of outcomes change?) and of symmetry (Bowker 1948), over the swaps of each
  unit's two outcomes (engine/tables/symmetry.py), beside their chi-square approximations.
- Several yes/no outcomes on each unit (`count day1 vs day2 vs day3 paired`): Cochran's Q
  (Cochran 1950, Biometrika 37:256) by permutation of each unit's outcomes among the columns:
  Cochran's Q is Friedman's tie-corrected statistic on 0/1 data, so the blocked engine's exact
  and Monte Carlo algorithms give its law, beside the chi-square approximation on k - 1 df.
"""
from __future__ import annotations

import dataclasses

import numpy as np

from ..lazy import module
from ..plan.planner import make_plan
from ..result import Estimate, NormalTheory, Result
from .registry import Family, Kind, Reported, effect_pieces

symmetry = module("permq.engine.tables.symmetry")
blocks_engine = module("permq.engine.blocks")

KINDS = {
    "paired-categories": Kind("count", "paired categories",
                              "count first vs second paired, in three or more categories"),
    "several-paired": Kind("count", "several paired outcomes",
                           "count first vs second vs third paired (yes/no outcomes)"),
}

MARGINAL_RULE = "the statistic is already two-sided: p = P(T >= t) under the null"


# ---------------------------------------------------------------- two outcomes, k categories

def plan_categories(design):
    s = design.settings
    return make_plan("paired-categories", s.family, s,
                     lambda draws: symmetry.candidates(s.family, design.table, draws))


def execute_categories(design, the_plan, progress, statement: str = "") -> Result:
    s, t = design.settings, design.table
    out = symmetry.run(s.family, t, the_plan.chosen.algorithm, the_plan.draws, the_plan.seed,
                       progress)
    first, second = design.names
    if s.family == "symmetry":
        normal = _chi_square("Bowker's chi-square", symmetry.bowker(t),
                             len(symmetry.pairs(t)))
        effect = f"asymmetry of the changes between {first} and {second}"
    else:
        w, df = symmetry.stuart_maxwell(t)
        normal = _chi_square("Stuart-Maxwell chi-square", w, df)
        effect = f"a change in the distribution of outcomes from {first} to {second}"
    rows, cols = symmetry.marginal_proportions(t)
    levels = [r.split(" ", 1)[1] if " " in r else r for r in design.row_labels]
    biggest = int(np.argmax(np.abs(rows - cols)))
    estimate = Estimate(f"largest change of a marginal proportion ({levels[biggest]}, "
                        f"{first} - {second})", float(rows[biggest] - cols[biggest]), None,
                        s.level, "marginal proportions; no exact interval for this family")
    from ..normal.tables import table_summary

    summary = table_summary(t, design.row_labels, design.col_labels)
    warnings = list(design.warnings)
    discordant = int(t.sum() - np.trace(t))
    warnings.append(f"{discordant} of {int(t.sum())} units changed category; the "
                    f"{int(np.trace(t))} that did not carry no information for these tests")
    return Result(statement, "table", s.alternative, out, normal, estimate, effect=effect,
                  two_sided_rule=symmetry.TWO_SIDED_RULE, warnings=warnings,
                  extra={"table": summary})


def _chi_square(name, value, df) -> NormalTheory:
    from ..lazy import stats

    if df < 1:
        return NormalTheory(f"{name}: not available (no discordant units)", float("nan"), None,
                            float("nan"))
    return NormalTheory(f"{name} on {df} df", float(value), float(df),
                        float(stats.chi2.sf(value, df)))


# ---------------------------------------------------------------- several yes/no outcomes

def plan_cochran(design):
    s = design.settings
    return make_plan("blocked", "friedman", s,
                     lambda draws: blocks_engine.candidates(
                         "friedman", design.values, design.groups, design.blocks, draws,
                         n_groups=len(design.labels), block_names=design.block_labels,
                         group_names=design.labels))


def execute_cochran(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    out = blocks_engine.run("friedman", design.values, design.groups, design.blocks,
                            "two-sided", the_plan.chosen.algorithm, the_plan.draws,
                            the_plan.seed, progress, n_groups=len(design.labels),
                            block_names=design.block_labels, group_names=design.labels)
    out = dataclasses.replace(out, statistic_name="Cochran's Q")
    k = len(design.labels)
    y = design.values.reshape(-1, k)
    q = cochran_q(y)
    normal = _chi_square("chi-square approximation to Cochran's Q", q, k - 1)
    props = y.mean(axis=0)
    groups = [{"name": name, "n": int(len(y)), "mean": float(p), "median": None, "sd": None}
              for name, p in zip(design.labels, props)]
    estimate = Estimate(f"range of the proportions {design.response}", float(np.ptp(props)),
                        None, s.level, "sample proportions; no exact interval for this family")
    warnings = list(design.warnings)
    same = int(np.sum(np.all(y == y[:, :1], axis=1)))
    if same:
        warnings.append(f"{same} unit{'s' if same != 1 else ''} with the same outcome in every "
                        "column carry no information for this test")
    result = Result(statement, "blocked", s.alternative, out, normal, estimate,
                    effect=f"differences among {', '.join(design.labels)} in the proportion "
                           f"of {design.response}",
                    groups=groups, two_sided_rule=MARGINAL_RULE, warnings=warnings)
    result.summary_decimals = [4] * k            # the means are proportions
    return result


def cochran_q(y: np.ndarray) -> float:
    """(k - 1) (k sum C_j^2 - N^2) / (k N - sum R_i^2) for units x columns of 0/1."""
    k = y.shape[1]
    cols, rows, n = y.sum(axis=0), y.sum(axis=1), y.sum()
    den = k * n - float((rows ** 2).sum())
    return float((k - 1) * (k * (cols ** 2).sum() - n ** 2) / den) if den > 0 else 0.0


# ---------------------------------------------------------------- declarations

def _several_check(design):
    """The count check of several yes/no outcomes (robustness/tables/several_paired.py)."""
    from ..robustness.spec import CountCheck

    return CountCheck("several-paired")


def _categories_check(statistic: str):
    """The count check of paired categories (robustness/tables/paired_categories.py) with
    the engine's statistic."""
    def check(design):
        from ..robustness.spec import CountCheck

        return CountCheck("paired-categories", statistic)
    return check


FAMILIES = [
    Family("marginal-homogeneity", ("paired-categories",),
           "exact test of marginal homogeneity (Stuart-Maxwell form)",
           "did the distribution change (paired categories)", plan_categories,
           execute_categories, "Stuart-Maxwell chi-square",
           "largest change of a marginal proportion (no exact interval)",
           robustness=_categories_check("marginal-homogeneity"),
           default_in=("paired-categories",), effect_sizes=effect_pieces()),
    Family("symmetry", ("paired-categories",), "exact test of symmetry (Bowker)",
           "Bowker's symmetry of the changes (paired categories)", plan_categories,
           execute_categories, "Bowker's chi-square",
           "largest change of a marginal proportion (no exact interval)",
           robustness=_categories_check("symmetry"),
           effect_sizes=effect_pieces()),
    Family("cochran", ("several-paired",),
           "Cochran's Q test by permutation within units",
           "Cochran's Q (several yes/no outcomes)", plan_cochran, execute_cochran,
           "chi-square approximation to Cochran's Q", "range of the column proportions",
           robustness=_several_check,
           default_in=("several-paired",), effect_sizes=effect_pieces()),
]

# How reports name the tests (registry.Reported)
SWAPS = "over the {n} ways of swapping the changed units' two outcomes"
REPORTED = [
    Reported(("table",), "Bowker", "exact test of symmetry (Bowker)", ("bowker-1948",), SWAPS),
    Reported(("table",), "Stuart-Maxwell",
             "exact test of marginal homogeneity (Stuart-Maxwell form)",
             ("stuart-1955", "maxwell-1970"), SWAPS),
    Reported(("blocked",), "Cochran's Q", "Cochran's Q test by permutation within units",
             ("cochran-1950",)),
]
# Standard citations, given from memory
BIBLIOGRAPHY = {
    "bowker-1948": "Bowker, A. H. (1948). A test for symmetry in contingency tables. Journal "
                   "of the American Statistical Association 43, 572-574.",
    "stuart-1955": "Stuart, A. (1955). A test for homogeneity of the marginal distributions in "
                   "a two-way classification. Biometrika 42, 412-416.",
    "maxwell-1970": "Maxwell, A. E. (1970). Comparing the classification of subjects by two "
                    "independent judges. British Journal of Psychiatry 116, 651-655.",
    "cochran-1950": "Cochran, W. G. (1950). The comparison of percentages in matched samples. "
                    "Biometrika 37, 256-266.",
}
