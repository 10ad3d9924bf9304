"""Verdicts and plain sentences for a count design's check; builds the RobustnessResult.

The verdicts are `report`'s (3 Monte Carlo standard errors from the level); the sentences
speak of sampling schemes and counts: how small the expected counts are where the large-sample
approximation errs, where the exact test is conservative because its p-values take few values,
where clustering breaks it.
"""
from __future__ import annotations

import dataclasses

import numpy as np

from ...engine.tables.rxc import reduce_table
from .. import report
from ..report import listing as _listing
from ..result import RobustnessResult

WHY_EXACT = {
    "table": "the units are independent there, so given its margins the table is "
             "hypergeometric, the law the test conditions on",
    "paired": "given the discordant count, each discordant pair goes either way with chance "
              "1/2 there, the law the test conditions on",
    "proportion": "the count is binomial at the null value there, the law the test uses",
    "rates": "the counts are Poisson there (and, given their total, binomial), the laws the "
             "test uses",
    "two-proportions": "the units are independent there: the samples' counts are binomial "
                       "with a common chance, whose worst case the unconditional test takes "
                       "(and, given both margins, the table is hypergeometric, as Fisher's "
                       "test assumes)",
    "dose-response": "the units are independent there, so given the margins the events fall "
                     "on the units as a random choice, the law the conditional test uses",
    "paired-categories": "the units are independent there and each unit's two outcomes are "
                         "in either order with chance 1/2, so given the pair totals the swaps "
                         "are the law the test conditions on",
    "several-paired": "the units are independent there and each unit's outcomes are "
                      "exchangeable across the columns, so given its total its yeses fall on "
                      "the columns as a random choice, the law the test conditions on",
    "strata": "the units are independent there, so given its margins every stratum's table is "
              "hypergeometric, the law the test conditions on",
    "ordered-strata": "the units are independent there, so given its margins every stratum's "
                      "events fall on its units as a random choice, the law the test uses",
}
MAIN_SCHEME = {"table": "rows-fixed", "paired": "independent-pairs",
               "paired-categories": "independent-units",
               "several-paired": "independent-outcomes",
               "proportion": "independent-trials", "rates": "poisson",
               "two-proportions": "rows-fixed", "dose-response": "rows-fixed",
               "strata": "rows-fixed", "ordered-strata": "rows-fixed"}


def _pct(alpha: float) -> str:
    return f"{alpha:.0%}" if alpha * 100 == round(alpha * 100) else f"{alpha:g}"


def counts_words(design) -> str:
    """How small the counts are, for the sentence on the large-sample approximation."""
    t = np.asarray(design.table, float)
    if design.form == "proportion":
        n, p0 = t.sum(), float(design.reference)
        return f"expected successes {n * p0:.3g} and failures {n * (1 - p0):.3g} under the null"
    if design.form == "paired":
        return f"{int(t[0, 1] + t[1, 0])} discordant pairs"
    if design.form == "paired-categories":
        return f"{int(t.sum() - np.trace(t))} units that changed category"
    if design.form == "several-paired":
        rows = t.sum(axis=1)
        return (f"{int(((rows > 0) & (rows < t.shape[1])).sum())} of {t.shape[0]} units "
                "with both outcomes")
    if design.form == "rates":
        return "events " + ", ".join(str(int(v)) for v in t.ravel())
    if design.form in ("strata", "ordered-strata"):
        small = []
        for s in t.reshape(-1, design.groups, 2):
            if s.sum() > 0:
                small.append((np.outer(s.sum(axis=1), s.sum(axis=0)) / s.sum()).min())
        return f"smallest expected count within a stratum {min(small):.3g}"
    keep = t[t.sum(axis=1) > 0][:, t.sum(axis=0) > 0]
    e = np.outer(keep.sum(axis=1), keep.sum(axis=0)) / keep.sum()
    small = int((e < 5).sum())
    return (f"smallest expected count {e.min():.3g}; {small} of {e.size} cells expect fewer "
            "than 5")


def design_words(design) -> str:
    t = np.asarray(design.table, np.int64)
    if design.form == "proportion":
        return f"{int(t[0, 0])} of {int(t.sum())} against {design.reference:g}"
    if design.form == "paired":
        return (f"{int(t.sum())} pairs, {int(t[0, 1] + t[1, 0])} discordant "
                f"(b = {int(t[0, 1])}, c = {int(t[1, 0])})")
    if design.form == "several-paired":
        return f"{t.shape[0]} units, {t.shape[1]} yes/no outcomes each"
    if design.form == "paired-categories":
        return (f"{t.shape[0]} x {t.shape[0]} paired categories, {int(t.sum())} units, "
                f"{int(t.sum() - np.trace(t))} changed")
    if design.form in ("strata", "ordered-strata"):
        k = design.groups
        return (f"{t.shape[0] // k} strata of {k} groups"
                + (", ordered" if design.form == "ordered-strata" else "")
                + f", N = {int(t.sum())}")
    if design.form == "rates":
        what = " against ".join(design.col_labels)
        return what + ("" if len(design.col_labels) > 1 else f", reference rate "
                                                                f"{design.reference:g}")
    rows = ", ".join(str(int(v)) for v in t.sum(axis=1))
    from ..spec import check_for

    order = ", ordered" if check_for(design).ordered else ""
    return f"{t.shape[0]} x {t.shape[1]} table{order}, row totals {rows}, N = {int(t.sum())}"


def _normal_line(table, alpha, normal_test, design) -> str:
    pct = _pct(alpha)
    by: dict = {}
    for r in table:
        by.setdefault(r.normal_verdict, []).append(r)
    said = [f"{v} under " + _listing(f"{r.name} ({r.normal_rate:.3f})" for r in by[v])
            for v in ("too liberal", "too conservative") if v in by]
    counts = counts_words(design)
    if not said:
        return (f"Normal theory, {normal_test}, holds its {pct} level under every sampling "
                f"scheme of the panel at these counts ({counts}).")
    holds = [r.name for r in by.get("holds its level", [])]
    return (f"Normal theory, {normal_test}, a large-sample approximation ({counts}), at {pct}: "
            + "; ".join(said) + (f"; it holds its level under {_listing(holds)}." if holds
                                 else "."))


def _exact_lines(table, alpha, form) -> list:
    pct = _pct(alpha)
    lines = []
    exact = [r for r in table if not r.not_exact]
    if exact:
        worst = max(exact, key=lambda r: r.permutation_rate)
        lines.append(f"The exact test keeps its level under {_listing(r.name for r in exact)}: "
                     f"{WHY_EXACT[form]}; its highest rate is {worst.permutation_rate:.3f}.")
        low = [r for r in exact if "conservative" in r.permutation_verdict]
        if low:
            lines.append("It is conservative under " + _listing(
                f"{r.name} ({r.permutation_rate:.3f})" for r in low)
                + f": with these counts its p-values take few values, and the largest level "
                  f"it can attain is well below {pct} (discreteness, not a fault of the test).")
        above = [r for r in exact if "above" in r.permutation_verdict]
        if above:
            lines.append(f"Its rate is above {pct} beyond Monte Carlo error under "
                         f"{_listing(r.name for r in above)}.")
    for r in table:
        if not r.not_exact:
            continue
        verdict = r.permutation_verdict.split(", ", 1)[1]
        line = (f"Under {r.name} it is not exact ({r.not_exact}): its rate is "
                f"{r.permutation_rate:.3f} ± {r.permutation_se:.3f}, {verdict}.")
        if verdict == "too liberal" and r.normal_verdict == "too liberal":
            line += (f" The normal-theory rate is inflated too ({r.normal_rate:.3f}): neither "
                     "test allows for the dependence; count clusters, not units.")
        elif verdict != "too liberal" and any("conservative" in e.permutation_verdict
                                              for e in exact):
            line += " At these counts its discreteness outweighs the dependence."
        lines.append(line)
    if all(r.permutation_rate == 0 and r.permutation_power == 0 for r in table):
        lines.append(f"The exact test never rejected a simulated table at {pct}: with these "
                     f"counts no table reaches p ≤ {pct}.")
    return lines


def _power_lines(table, form, normal_test, shift_words, null_effect) -> list:
    main = next((r for r in table if r.key == MAIN_SCHEME[form]), table[0])
    return report.power_lines(main, table, normal_test, shift_words, null_effect, "exact test")


def degenerate(design):
    """Why no test can reject under any scheme of the panel, or None."""
    t = np.asarray(design.table)
    if design.form == "paired" and t[0, 1] + t[1, 0] == 0:
        return ("No discordant pairs: under every scheme the simulated pairs have none either, "
                "so neither test can reject, and every rate is 0.")
    if design.form == "paired-categories" and t.sum() == np.trace(t):
        return ("No unit changed category: the simulated units never change either, so "
                "neither test can reject, and every rate is 0.")
    if design.form == "table" and min(reduce_table(t)[0].shape) < 2:
        return ("With its empty rows or columns left out the table has one row or one column: "
                "under every scheme it stays so, a single table has such margins, neither "
                "test can reject, and every rate is 0.")
    return None


def summary(table, alpha, normal_test, design, shift_words, null_effect) -> list:
    why = degenerate(design)
    if why:
        return [why]
    return ([_normal_line(table, alpha, normal_test, design)]
            + _exact_lines(table, alpha, design.form)
            + _power_lines(table, design.form, normal_test, shift_words, null_effect))


def rows(sim) -> list:
    """`report.rows`, with the exact test named as such in the verdict column."""
    return [dataclasses.replace(r, verdict=r.verdict.replace("permutation", "exact test"))
            for r in report.rows(sim)]


def build(statement, design, observed, sim, tests, effect, picture, warnings) -> RobustnessResult:
    table = rows(sim)
    normal_test = observed.normal.test if observed.normal is not None else "normal theory"
    lines = summary(table, sim.alpha, normal_test, design, effect.words, effect.null_effect)
    lines += report.precision_lines(sim, "scheme")
    nan = float("nan")
    return RobustnessResult(
        statement, observed.family, design_words(design), observed.outcome.statistic_name,
        normal_test, design.settings.alternative, sim.alpha, sim.datasets,
        tests.reference_words(), sim.exact, sim.arrangements, sim.seed,
        effect.value, nan, effect.words, nan,
        "counts have no standard-deviation unit: the effect is the one in shift, and sd "
        "fields are empty", table, lines, observed, picture, list(warnings), counts=True)
