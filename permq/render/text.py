"""Terminal text: one aligned block per result, the exact and normal-theory answers side by side."""
from __future__ import annotations

import math
import re

from ..result_factorial import FactorialResult
from ..result_many import ManyResult
from ..result import Failure, Note, Result
from ..robustness.result import RobustnessResult
from ..power.result import PowerResult
from . import numbers as fmt
from .counts import count_lines, data_lines
from .robustness import diagnostics_line, null_picture_block, robustness_block

BOLD, DIM, RED, RESET = "\x1b[1m", "\x1b[2m", "\x1b[31m", "\x1b[0m"


def _df(nt) -> str:
    """", df N" after a normal-theory statistic, unless the test's name already gives them
    ("F on 2 and 22 df")."""
    if nt.df is None or re.search(r"\bdf\b", nt.test):
        return ""
    return f", df {fmt.df(nt.df)}"


def _statistic(nt) -> str:
    """'3.817, df 9.54', or 'undefined (zero spread)' where the test is not defined."""
    if nt.undefined:
        return f"undefined ({nt.undefined})"
    return f"{fmt.num(nt.statistic)}{_df(nt)}"


def render(outputs, color: bool = False) -> str:
    return "\n".join(render_one(o, color) for o in outputs)


def render_one(o, color: bool = False) -> str:
    if isinstance(o, ManyResult):
        from .many import text_block

        return text_block(o, color, BOLD, DIM, RESET)
    if isinstance(o, FactorialResult):
        from .factorial import text_block as factorial_block

        return factorial_block(o, color, BOLD, DIM, RESET)
    if isinstance(o, Result):
        return result_block(o, color) + "".join(ln + "\n" for ln in null_picture_block(o))
    if isinstance(o, RobustnessResult):
        return robustness_block(o, color)
    if isinstance(o, PowerResult):
        return str(o)
    if isinstance(o, Failure):
        return failure_block(o, color)
    if isinstance(o, Note):
        return o.text + "\n"
    return str(o)


def _c(s, code, color):
    return f"{code}{s}{RESET}" if color else s


def _interval_or_why(iv) -> str:
    """An interval's ends; with no finite end, why (the reference set is too small for any
    value to be rejected at this level)."""
    if iv is None:
        return "none"
    if all(isinstance(v, float) and math.isinf(v) for v in iv):
        return "unbounded (too few units)"
    return fmt.interval(iv)


def units_lines(extra: dict) -> list:
    """The randomised unit's two lines (`units COLUMN`), or none."""
    if "units" not in extra:
        return []
    u = extra["units"]
    low, high = u["rows_per_unit"]["min"], u["rows_per_unit"]["max"]
    per = f"{low}" if low == high else f"{low} to {high}"
    return [f"  {'units':<15}{u['units']} units of '{u['column']}', {u['rows']} rows "
            f"({per} a unit), arrangements move whole units",
            f"  {'':<15}a unit's value: the {u['unit_value']}"]


def result_block(r: Result, color: bool = False) -> str:
    o, nt, est = r.outcome, r.normal, r.estimate
    lines = [_c(fmt.heading(r.statement), BOLD, color)]
    lines.append(f"{r.family} · {o.statistic_name} · effect: {r.effect}")
    lines.extend(group_lines(r))
    lines.extend(units_lines(r.extra))
    if "table" in r.extra:
        lines.extend(table_lines(r.extra["table"]))
    lines.extend(data_lines(r))
    lines.append(f"  {'statistic':<15}{fmt.num(o.statistic, 6)}")
    method_word = "exact" if o.method == "exact" else "Monte Carlo"
    heading = (r.exact_heading if o.method == "exact" and r.exact_heading
               else "permutation (" + method_word + ")")
    p_label = f"p ({r.alternative})"
    normal_p = fmt.normal_p(nt)
    exact_p = fmt.p(o.p_value) if o.method == "exact" else fmt.sampled_p(o.p_value, o.p_interval)
    exact_iv = _interval_or_why(est.interval) if est is not None else ""
    # the permutation column is 28 wide, wider when its longest entry needs it
    w = max(28, *(len(v) + 2 for v in (heading, exact_p, exact_iv)))
    lines.append(f"  {'':<15}{heading:<{w}}normal theory")
    lines.append(_c(f"  {p_label:<15}{exact_p:<{w}}{normal_p}", BOLD, color))
    if o.method != "exact" and o.draws and fmt.as_extreme(o.p_value, o.draws) == 0:
        lines.append(f"  {'':<15}no draw as extreme as the observed: p = 1 / ({o.draws:,} + 1)")
    if nt:
        lines.append(f"  {'':<15}normal theory: {nt.test}: {_statistic(nt)}")
    for extra in r.also_normal:
        if extra.undefined:
            lines.append(f"  {'also':<15}{extra.test}: {_statistic(extra)}")
        else:
            lines.append(f"  {'also':<15}p {fmt.p(extra.p_value)} from {extra.test}: "
                         f"{_statistic(extra)}")
    if est is not None:
        lines.append(f"  {'estimate':<15}{est.name} = {fmt.num(est.value)}")
        lvl = f"{est.level * 100:g}% interval"
        normal_iv = fmt.interval(nt.interval) if nt and nt.interval is not None else "-"
        lines.append(f"  {lvl:<15}{exact_iv:<{w}}{normal_iv}")
        lines.append(_c(f"  {'':<15}{est.method}", DIM, color))
        for x in r.also_normal:          # further textbook intervals, one line each
            if x.interval is not None:
                lines.append(f"  {'also':<15}{lvl} {fmt.interval(x.interval)}: "
                             f"{x.interval_method}")
    lines.extend(count_lines(r))
    lines.extend(equivalence_lines(r))
    lines.extend(effect_size_lines(r))
    if diagnostics_line(r):
        lines.append(diagnostics_line(r))
    if o.method == "exact" and (o.arrangements is None or o.arrangements == float("inf")):
        how = f"exact: {o.algorithm}"
    elif o.method == "exact":
        how = f"exact: {o.algorithm}, {fmt.count(o.arrangements)} {r.reference}"
    else:
        b = fmt.as_extreme(o.p_value, o.draws)
        how = (f"Monte Carlo: {o.draws:,} draws, {f'{b:,}' if b else 'none'} as extreme as the "
               f"observed; {fmt.seed(o.seed, r.seed_source)}")
    lines.append(f"  {'method':<15}{how}")
    floor = smallest_line(r)
    if floor:
        lines.append(_c(f"  {'smallest p':<15}{floor}", DIM, color))
    if o.method != "exact":
        lines.append(_c(f"  {'':<15}p = (b + 1) / (m + 1) for b of m draws as extreme; in "
                        "brackets its 99% interval for the exact p", DIM, color))
    if r.alternative == "two-sided" and r.two_sided_rule:
        lines.append(_c(f"  {'':<15}{r.two_sided_rule}", DIM, color))
    for w in list(r.warnings) + list(o.warnings):
        lines.append(_c(f"  {'note':<15}{w}", DIM, color))
    return "\n".join(lines) + "\n"


def equivalence_lines(r: Result) -> list:
    """`margin M`: both two one-sided tests and the verdict (`extra["equivalence"]`)."""
    e = r.extra.get("equivalence")
    if not e:
        return []
    ex, tb = e["exact"], e["t_based"]

    def parts(d):
        got = [f"at -{e['margin']:g}: {fmt.p(d['p_lower_margin'])}"
               if d.get("p_lower_margin") is not None else "",
               f"at +{e['margin']:g}: {fmt.p(d['p_upper_margin'])}"
               if d.get("p_upper_margin") is not None else ""]
        return ", ".join(g for g in got if g)
    sign = {"equivalence": "±", "non-inferiority": "-", "non-superiority": "+"}[e["kind"]]
    out = [f"  {'margin':<15}{e['kind']}, margin {sign}{e['margin']:g}: exact p "
           f"{fmt.p(ex['p_value'])} "
           f"({parts(ex)}); {tb['test']}: p {fmt.p(tb['p_value'])} ({parts(tb)})"]
    if ex.get("interval"):
        out.append(f"  {'':<15}{ex['interval_level']:.0%} exact interval "
                   f"{fmt.interval(tuple(ex['interval']))}")
    out.append(f"  {'':<15}{e['verdict']}")
    return out


def smallest_line(r: Result) -> str:
    """The smallest p the exact design can give (`extra["smallest_p"]`), one line."""
    sp = r.extra.get("smallest_p")
    if not sp or r.outcome.method != "exact":
        return ""
    bound = "at least " if sp["lower_bound"] else ""
    two = "" if sp["two_sided"] is None else f", two-sided {bound}{fmt.p(sp['two_sided'])}"
    return f"one-sided {bound}{fmt.p(sp['one_sided'])}{two} ({sp['basis']})"


def group_lines(r: Result) -> list:
    """n, mean, median and sd of each group, aligned; the numbers of one response share one
    format: the data's own decimals plus one (`Result.summary_decimals`)."""
    if not r.groups:
        return []
    places = r.summary_decimals or [None] * len(r.groups)

    def show(v, d):
        return fmt.fixed(v, d) if d is not None else fmt.num(v)

    rows = [[g["name"], str(g["n"]), show(g["mean"], d), show(g["median"], d),
             show(g["sd"], d) if g.get("sd") is not None else ""]
            for g, d in zip(r.groups, places)]
    w = [max(len(row[i]) for row in rows) for i in range(5)]
    out = []
    for i, row in enumerate(rows):
        label = "groups" if i == 0 else ""
        sd = f"  sd {row[4]:>{w[4]}}" if row[4] else ""
        out.append(f"  {label:<15}{row[0]:<{max(w[0], 15)}}  n {row[1]:>{w[1]}}  mean "
                   f"{row[2]:>{w[2]}}  median {row[3]:>{w[3]}}{sd}")
    return out


def effect_size_lines(r: Result) -> list:
    """One line per effect size (its interval where there is one), then each arm's proportions."""
    out = []
    for i, s in enumerate(r.extra.get("effect_sizes") or []):
        label = "effect size" if i == 0 else ""
        iv = ""
        if s.get("interval") is not None:
            lo, hi = (float(v) for v in s["interval"])
            iv = f"  {s['level'] * 100:g}% interval {_interval_or_why((lo, hi))}"
        out.append(f"  {label:<15}{s['name']} = {fmt.num(s['value'])}{iv}")
    for i, arm in enumerate(r.extra.get("arm_proportions") or []):
        label = "proportions" if i == 0 else ""
        shares = ", ".join(f"{k} {v:.3f}" for k, v in arm["proportions"].items())
        out.append(f"  {label:<15}{arm['arm']} (n {arm['n']}): {shares}")
    return out


def table_lines(tab) -> list:
    """The counts with their margins, aligned."""
    head = [""] + list(tab["columns"]) + ["total"]
    body = [[r] + [str(v) for v in row] + [str(tot)]
            for r, row, tot in zip(tab["rows"], tab["counts"], tab["row_totals"])]
    body.append(["total"] + [str(v) for v in tab["column_totals"]] + [str(tab["total"])])
    widths = [max(len(row[i]) for row in [head] + body) for i in range(len(head))]
    out = []
    for i, row in enumerate([head] + body):
        label = "table" if i == 0 else ""
        cells = [row[0].ljust(widths[0])] + [c.rjust(w) for c, w in zip(row[1:], widths[1:])]
        out.append(f"  {label:<15}" + "  ".join(cells))
    return out


def failure_block(f: Failure, color: bool = False) -> str:
    where = f"line {f.line}, column {f.column}" if f.line else ""
    head = _c(f"{f.kind}", RED, color) + (f" at {where}" if where else "") + f": {f.message}"
    out = [head]
    if f.caret:
        out += ["  " + ln for ln in f.caret.splitlines()]
    if f.hint:
        out.append(f"  hint: {f.hint}")
    return "\n".join(out) + "\n"
