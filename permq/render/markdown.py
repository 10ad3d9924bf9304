"""Markdown: a table of results for reports, failures listed below it."""
from __future__ import annotations

from ..result import Failure, Result
from ..robustness.result import RobustnessResult
from . import numbers as fmt
from .robustness import markdown_section
from ..result_many import ManyResult
from .many import markdown_section as many_section
from ..result_factorial import FactorialResult
from .factorial import markdown_section as factorial_section


def render(outputs) -> str:
    rows = ["| statement | family | statistic | p (permutation) | method | p (normal theory) |"
            " estimate | interval | normal-theory interval |",
            "|---|---|---|---|---|---|---|---|---|"]
    errors, checks, families = [], [], []
    for o in outputs:
        if isinstance(o, ManyResult):
            families.append(many_section(o))
            continue
        if isinstance(o, FactorialResult):
            families.append(factorial_section(o.to_dict()))
            continue
        if isinstance(o, RobustnessResult):
            checks.append(markdown_section(o))
            continue
        if isinstance(o, Failure):
            errors.append(f"- `{o.statement}`: {o.message}" + (f" ({o.hint})" if o.hint else ""))
            continue
        if not isinstance(o, Result):
            continue
        oc, nt, est = o.outcome, o.normal, o.estimate
        method = (f"exact, {fmt.count(oc.arrangements)} {o.reference}" if oc.method == "exact"
                  else f"Monte Carlo, {oc.draws:,} draws, {fmt.seed(oc.seed, o.seed_source)}")
        cells = [f"`{o.statement}`", o.family, f"{oc.statistic_name} = {fmt.num(oc.statistic)}",
                 fmt.p(oc.p_value) if oc.method == "exact"
                 else fmt.sampled_p(oc.p_value, oc.p_interval), method, fmt.normal_p(nt),
                 f"{est.name} = {fmt.num(est.value)}" if est else "-",
                 fmt.interval(est.interval) if est and est.interval else "-",
                 fmt.interval(nt.interval) if nt and nt.interval else "-"]
        rows.append("| " + " | ".join(c.replace("|", "\\|") for c in cells) + " |")
    parts = ["\n".join(rows) + "\n"] if len(rows) > 2 else []     # no empty results table
    if families:
        parts.append("Several tests at once:\n\n" + "\n".join(families))
    if checks:
        parts.append("Robustness:\n\n" + "\n".join(checks))
    if errors:
        parts.append("Statements that failed:\n\n" + "\n".join(errors) + "\n")
    return "\n".join(parts)
