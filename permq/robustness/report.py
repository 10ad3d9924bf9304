"""Verdicts and plain sentences from the simulated rates; builds the RobustnessResult.

A rate departs from the level when it lies more than Z Monte Carlo standard errors from it,
the standard error being the larger of the rate's own and sqrt(alpha (1 - alpha) / datasets)
(the error a test with the exact level would show). With Z = 3 and twelve rates a panel, a
test that holds its level everywhere is flagged somewhere about 3% of the time.
"""
from __future__ import annotations

import math

from . import coverage
from .batch import normal_test_name
from .result import LawRow, RobustnessResult
from .simulate import Simulation

Z = 3.0


def _se0(rate, alpha, datasets):
    return max(rate.se, math.sqrt(alpha * (1 - alpha) / datasets))


def level_verdict(rate, alpha: float, datasets: int) -> str:
    se = _se0(rate, alpha, datasets)
    if rate.value > alpha + Z * se:
        return "too liberal"
    if rate.value < alpha - Z * se:
        return "too conservative"
    return "holds its level"


def permutation_verdict(rate, alpha: float, datasets: int, not_exact) -> str:
    v = level_verdict(rate, alpha, datasets)
    if not_exact:
        return f"not exact here, {v}"
    if v == "too conservative":
        return "exact, conservative here (few distinct p-values)"
    if v == "too liberal":
        return "exact in theory, yet above the level beyond Monte Carlo error"
    return "exact"


def _combined(normal: str, perm: str, not_exact) -> str:
    parts = []
    if normal != "holds its level":
        parts.append(f"normal theory {normal}")
    if not_exact:
        parts.append(f"permutation not exact ({perm.split(', ', 1)[1]})")
    elif perm != "exact":
        parts.append("permutation conservative" if "conservative" in perm else perm)
    return "; ".join(parts) if parts else "both hold their level"


def rows(sim: Simulation) -> list:
    out = []
    for r in sim.rates:
        nv = level_verdict(r.normal_null, sim.alpha, sim.datasets)
        pv = permutation_verdict(r.permutation_null, sim.alpha, sim.datasets, r.not_exact)
        out.append(LawRow(r.law.key, r.law.name, r.law.words,
                          r.normal_null.value, r.normal_null.se,
                          r.permutation_null.value, r.permutation_null.se,
                          r.normal_power.value, r.normal_power.se,
                          r.permutation_power.value, r.permutation_power.se,
                          nv, pv, r.not_exact or "", _combined(nv, pv, r.not_exact)))
    return out


def listing(items) -> str:
    items = list(items)
    if len(items) <= 1:
        return "".join(items)
    return ", ".join(items[:-1]) + " and " + items[-1]


def summary(table: list, alpha: float, normal_test: str, shift_words: str) -> list:
    pct = f"{alpha:.0%}" if alpha * 100 == round(alpha * 100) else f"{alpha:g}"
    lines = []
    by = {}
    for r in table:
        by.setdefault(r.normal_verdict, []).append(r)
    said = []
    for verdict in ("too liberal", "too conservative"):
        if verdict in by:
            said.append(f"{verdict} under " + listing(f"{r.name} ({r.normal_rate:.3f})"
                                                      for r in by[verdict]))
    holds = [r.name for r in by.get("holds its level", [])]
    if said:
        lines.append(f"Normal theory, {normal_test}, at {pct}: " + "; ".join(said)
                     + (f"; it holds its level under {listing(holds)}." if holds else "."))
    else:
        lines.append(f"Normal theory, {normal_test}, holds its {pct} level under every law "
                     "of the panel, for this design.")
    exact = [r for r in table if not r.not_exact]
    if exact:
        worst = max(exact, key=lambda r: r.permutation_rate)
        above = [r for r in exact if "above" in r.permutation_verdict]
        lines.append(f"The permutation test is exact under {listing(r.name for r in exact)}: "
                     "the errors are exchangeable under the null there"
                     + (f"; its highest rate is {worst.permutation_rate:.3f}." if not above else
                        f"; yet its rate is above {pct} beyond Monte Carlo error under "
                        f"{listing(r.name for r in above)}."))
    by_reason = {}
    for r in table:
        if r.not_exact:
            by_reason.setdefault(r.not_exact, []).append(r)
    for reason, laws in by_reason.items():
        if len(laws) == 1:
            r = laws[0]
            lines.append(f"Under {r.name} it loses its exactness ({reason}): its rate is "
                         f"{r.permutation_rate:.3f} ± {r.permutation_se:.3f}, "
                         f"{r.permutation_verdict.split(', ', 1)[1]}.")
            continue
        off = [r for r in laws if not r.permutation_verdict.endswith("holds its level")]
        lines.append(f"The permutation test is not exact here: {reason}. Its rate is "
                     + listing(f"{r.permutation_rate:.3f} under {r.name}" for r in laws)
                     + ("; it holds its level under every one of them." if not off else
                        "; " + listing(f"{r.permutation_verdict.split(', ', 1)[1]} under "
                                        f"{r.name}" for r in off) + "."))
    lines.extend(_power_lines(table, shift_words))
    return lines


def _power_lines(table: list, shift_words: str) -> list:
    normal = next((r for r in table if r.key == "normal"), table[0])
    out = [f"Power at {shift_words}: under {normal.name} errors {normal.normal_power:.2f} "
           f"(normal theory) and {normal.permutation_power:.2f} (permutation)."]
    fair = [r for r in table if r.normal_verdict == "holds its level"
            and r.permutation_verdict in ("exact", "not exact here, holds its level")]
    out.extend(power_comparison(fair, "permutation test"))
    if len(fair) < len(table):
        out.append("Power is compared only where both tests hold their level.")
    return out


def power_comparison(fair: list, test_words: str) -> list:
    """Which test is the more powerful, and under which laws, beyond Z Monte Carlo errors of
    the difference (rows where the comparison is fair)."""
    ahead, behind = [], []
    for r in fair:
        gap = r.permutation_power - r.normal_power
        se = math.hypot(r.permutation_power_se, r.normal_power_se)
        if gap > Z * se:
            ahead.append(r.name)
        elif gap < -Z * se:
            behind.append(r.name)
    out = []
    if ahead:
        out.append(f"The {test_words} is the more powerful under {listing(ahead)}.")
    if behind:
        out.append(f"Normal theory is the more powerful under {listing(behind)}.")
    return out


def power_lines(main, table, normal_test: str, shift_words: str, null_effect: bool,
                test_words: str) -> list:
    """Power at the effect under the design's main law or scheme, and which test is the more
    powerful where neither is too liberal."""
    out = [f"Power at {shift_words}: under {main.name}, {main.normal_power:.2f} "
           f"({normal_test}) and {main.permutation_power:.2f} ({test_words})."]
    if null_effect:
        out.append("That effect is no effect at all: the power columns repeat the rates under "
                   "the null.")
        return out
    fair = [r for r in table if r.normal_verdict != "too liberal"
            and "liberal" not in r.permutation_verdict and "above" not in r.permutation_verdict]
    out.extend(power_comparison(fair, test_words))
    if len(fair) < len(table):
        out.append("Power is compared only where neither test is too liberal.")
    return out


def precision_lines(sim, unit: str = "law") -> list:
    """A sentence when too few data sets were drawn for the verdicts to be sharp: a rate is
    called off the level only beyond Z standard errors, and with few data sets that band is
    wider than half the level."""
    band = Z * math.sqrt(sim.alpha * (1 - sim.alpha) / sim.datasets)
    if band <= sim.alpha / 2:
        return []
    enough = math.ceil((Z / 0.5) ** 2 * (1 - sim.alpha) / sim.alpha / 100) * 100
    return [f"With {sim.datasets:,} data sets a {unit}, a rate is called off the level only "
            f"when it is more than about {band:.3f} from it; give datasets {enough:,} or more for "
            "sharper verdicts."]


def build(statement, problem, observed, sim: Simulation, shift, shift_sd,
          shift_words, picture, warnings, cover=None) -> RobustnessResult:
    table = rows(sim)
    level, no_cover = cover if cover is not None else (None, "not asked")
    intervals = [] if no_cover else coverage.rows(
        sim.rates, level, sim.datasets, exact=not coverage.exact_applies(problem, observed))
    if sim.exact:
        ref = f"exact: all {sim.arrangements:,} arrangements, for every data set"
    else:
        ref = (f"Monte Carlo: {sim.arrangements:,} random arrangements a data set, drawn afresh "
               f"for every block of data sets; p = (b + 1) / (m + 1)")
    normal_test = normal_test_name(problem)
    lines = summary(table, sim.alpha, normal_test, shift_words) + precision_lines(sim)
    lines += coverage.summary(intervals, level, problem.check.interval is not None) \
        if intervals else []
    if all(r.permutation_rate == 0 and r.permutation_power == 0 for r in table):
        lines.insert(1, f"The permutation test never rejected a data set at {sim.alpha:.0%}: with "
                        f"{sim.arrangements:,} arrangements its p-values do not fall that low.")
    return RobustnessResult(
        statement, observed.family, problem.design_words, observed.outcome.statistic_name,
        normal_test, problem.alternative, sim.alpha, sim.datasets, ref, sim.exact,
        sim.arrangements, sim.seed, shift, shift_sd, shift_words, problem.sd, problem.sd_words,
        table, lines, observed, picture, list(warnings), coverage=intervals,
        coverage_level=level if intervals else None,
        no_coverage=no_cover if cover is not None else "")
