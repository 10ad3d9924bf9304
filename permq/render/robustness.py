"""The robustness check and the diagnostics line, in text, Markdown and CSV (they never compute)."""
from __future__ import annotations

import textwrap

from . import numbers as fmt
from .pictures import picture_lines

BOLD, DIM, RESET = "\x1b[1m", "\x1b[2m", "\x1b[0m"


def _c(s, code, color):
    return f"{code}{s}{RESET}" if color else s


def _pct(alpha: float) -> str:
    return f"{alpha * 100:g}%"


def _rate(v, se, digits=3) -> str:
    return f"{v:.{digits}f} ±{se:.{digits}f}"


def column_words(rr) -> dict:
    """Column words: counts are tried under sampling schemes, against the exact test."""
    if rr.counts:
        return {"law": "scheme", "perm": "exact test", "power": "power at the effect",
                "shift": "effect"}
    return {"law": "law", "perm": "permutation", "power": "power at the shift", "shift": "shift"}


# ---------------------------------------------------------------- text

def robustness_block(rr, color: bool = False) -> str:
    lines = [_c(fmt.heading(rr.statement), BOLD, color)]
    lines.append(f"robustness · {rr.family} · {rr.design} · {rr.statistic}")
    obs = rr.observed
    if obs is not None:
        normal = (f" · normal theory p {fmt.p(obs.normal.p_value)}, {obs.normal.test}"
                  if obs.normal else "")
        lines.append(f"  {'observed':<15}{column_words(rr)['perm']} p "
                     f"{fmt.p(obs.outcome.p_value)} "
                     f"({'exact' if obs.outcome.method == 'exact' else 'Monte Carlo'}){normal}")
    lines.append(f"  {'significance':<15}{_pct(rr.significance)} ({rr.alternative}); "
                 f"{rr.datasets:,} data sets a {column_words(rr)['law']}; "
                 f"{fmt.seed(rr.seed, rr.seed_source)}")
    lines.append(f"  {column_words(rr)['shift']:<15}{rr.shift_words}")
    lines.append(f"  {'simulated test':<15}{rr.reference}")
    lines.extend(_table(rr, color))
    lines.extend(_coverage_table(rr, color))
    for s in rr.summary:
        lines.append(textwrap.fill(s, 100, initial_indent="  ", subsequent_indent="    "))
    if rr.picture is not None:
        lines.extend(picture_lines(rr.picture.to_dict()))
    for w in rr.warnings:
        lines.append(_c(f"  {'note':<15}{w}", DIM, color))
    return "\n".join(lines) + "\n"


def _table(rr, color) -> list:
    w = column_words(rr)
    law_w = max(15, max(len(r.name) for r in rr.rows) + 2)
    out = [f"  {'':<{law_w}}{'rejection rate under the null':<32}{w['power']}",
           _c(f"  {w['law']:<{law_w}}{'normal theory':<16}{w['perm']:<16}"
              f"{'normal theory':<16}{w['perm']:<16}verdict", BOLD, color)]
    for r in rr.rows:
        out.append(f"  {r.name:<{law_w}}{_rate(r.normal_rate, r.normal_se):<16}"
                   f"{_rate(r.permutation_rate, r.permutation_se):<16}"
                   f"{_rate(r.normal_power, r.normal_power_se):<16}"
                   f"{_rate(r.permutation_power, r.permutation_power_se):<16}{r.verdict}")
    return out


def _coverage_table(rr, color) -> list:
    """Coverage of both intervals per law, with the miss rate in each tail."""
    if not getattr(rr, "coverage", None):
        return []
    law_w = max(15, max(len(r.name) for r in rr.coverage) + 2)
    widths = any(r.width_ratio is not None for r in rr.coverage)
    ratio_head = f"{'width ratio':<16}" if widths else ""
    out = [f"  {'':<{law_w}}{f'coverage of the {rr.coverage_level:.0%} intervals':<36}"
           "misses above / below the truth",
           _c(f"  {'law':<{law_w}}{'exact':<18}{'normal theory':<18}{'exact':<18}"
              f"{'normal theory':<18}{ratio_head}verdict (exact; normal theory)", BOLD, color)]
    for r in rr.coverage:
        ratio = ""
        if widths:
            ratio = f"{_rate(r.width_ratio, r.width_ratio_se):<16}" if r.width_ratio is not None \
                else f"{'-':<16}"
        none = r.exact is None          # the analysis gives no exact interval
        out.append(f"  {r.name:<{law_w}}{'-' if none else _rate(r.exact, r.exact_se):<18}"
                   f"{_rate(r.normal, r.normal_se):<18}"
                   f"{'-' if none else f'{r.exact_above:.3f} / {r.exact_below:.3f}':<18}"
                   f"{f'{r.normal_above:.3f} / {r.normal_below:.3f}':<18}"
                   f"{ratio}{r.exact_verdict}; {r.normal_verdict}")
    if widths:
        seen = max(r.width_datasets for r in rr.coverage)
        out.append(f"  {'':<{law_w}}width ratio: mean of exact / normal-theory interval width "
                   f"over {seen:,} data sets a law")
    return out


def diagnostics_line(r) -> str:
    """One line for a result block, or "" when the result carries no diagnostics."""
    d = r.extra.get("diagnostics")
    if not d:
        return ""
    parts = []
    if d.get("skewness") is not None:
        parts.append(f"skewness {d['skewness']:.2f}")
    if d.get("largest_residual_sd") is not None:
        parts.append(f"largest residual {d['largest_residual_sd']:.2f} sd")
    if d.get("spread_ratio") is not None:
        parts.append(f"spread ratio {d['spread_ratio']:.2f}")
    if d.get("disagree") is not None:
        parts.append(("permutation and normal theory fall on opposite sides of "
                      if d["disagree"] else "both p-values on the same side of ")
                     + _pct(d["level"]))
    return f"  {'diagnostics':<15}" + "; ".join(parts) if parts else ""


def null_picture_block(r) -> list:
    pic = r.extra.get("null_picture")
    return picture_lines(pic) if pic else []


# ---------------------------------------------------------------- Markdown and CSV

def markdown_section(rr) -> str:
    w = column_words(rr)
    rows = [f"**`{rr.statement}`**: {rr.design}, {rr.statistic}; {rr.datasets:,} data sets a "
            f"{w['law']}, significance {_pct(rr.significance)}, seed {rr.seed}; {w['shift']}: "
            f"{rr.shift_words}; simulated test: {rr.reference}.", "",
            f"| {w['law']} | normal theory: rate under the null | {w['perm']}: rate under the "
            f"null | normal theory: power | {w['perm']}: power | verdict |",
            "|---|---|---|---|---|---|"]
    for r in rr.rows:
        rows.append(f"| {r.name} | {_rate(r.normal_rate, r.normal_se)} | "
                    f"{_rate(r.permutation_rate, r.permutation_se)} | "
                    f"{_rate(r.normal_power, r.normal_power_se)} | "
                    f"{_rate(r.permutation_power, r.permutation_power_se)} | {r.verdict} |")
    rows.append("")
    rows.extend(f"- {s}" for s in rr.summary)
    return "\n".join(rows) + "\n"


def csv_row(d: dict, columns: list) -> dict:
    """A robustness record as one row of the results table (the laws are in the JSON)."""
    row = {k: "" for k in columns}
    sim = d["simulated_permutation_test"]
    row.update(statement=d["statement"], family="robustness", alternative=d["analysis"]["alternative"],
               method=sim["method"], algorithm=sim["description"], seed=d["seed"],
               normal_test=d["analysis"]["normal_test"], statistic_name=d["analysis"]["statistic"],
               level=d["significance"], warnings="; ".join(d["summary"] + d["warnings"]))
    return row
