"""Renderers for several tests at once (`ManyResult`): terminal block, Markdown, CSV rows.

The terminal shows the first TEXT_ROWS rows (sorted by raw p) and says how many more there are;
CSV and JSON carry every row. They never compute.
"""
from __future__ import annotations

from . import numbers as fmt

TEXT_ROWS = 20
CSV_EXTRA = ["name", "n", "p_adjusted", "adjustment", "note"]


def _head(r) -> list:
    if r.method == "exact":
        how = f"exact: {r.algorithm}, {fmt.count(r.arrangements)} arrangements"
    else:
        how = (f"Monte Carlo: {r.draws:,} joint draws, {fmt.seed(r.seed, r.seed_source)}; "
               f"p = (b + 1) / ({r.draws:,} + 1), the smallest possible is "
               f"{fmt.p(1 / (r.draws + 1))}")
    unit = {"pairwise": "pairs", "for each": "features", "many-to-one": "comparisons",
            "lowest effective dose": "steps"}.get(r.family, "responses")
    tested = f"{r.tested:,} {unit}" + (f" ({r.untested:,} not tested)" if r.untested else "")
    from .text import units_lines

    lines = [f"  {'adjustment':<15}{r.adjustment}: {r.adjustment_rule}",
             f"  {'method':<15}{how}",
             f"  {'tested':<15}{tested}"] + units_lines(r.extra)
    if r.overall:
        o = r.overall
        lines.append(f"  {'overall':<15}{o['test']} = {fmt.num(o['statistic'])}, "
                     f"p = {fmt.p(o['p_value'])} (on the same arrangements)")
    if r.normal_test:
        lines.append(f"  {'beside it':<15}{r.normal_test}")
    if r.filters:
        what = ", ".join(f"{k} {v:g}" for k, v in r.filters.items())
        lines.append(f"  {'shown':<15}{len(r.rows):,} of {r.total_rows:,} rows ({what})")
    return lines


def _cells(r, row) -> list:
    iv = fmt.interval(row.interval) if row.interval is not None else "-"
    cells = [row.name, "/".join(str(c) for c in row.n) or "-", fmt.num(row.statistic),
             fmt.num(row.estimate), iv, fmt.p(row.p_value), fmt.p(row.p_adjusted), row.note]
    if r.normal_test:
        cells.insert(7, fmt.p(row.normal_p) if row.normal_p is not None else "-")
    return cells


def _titles(r) -> list:
    first = {"pairwise": "pair", "for each": "feature", "many-to-one": "comparison",
             "lowest effective dose": "doses tested"}.get(r.family, "response")
    n = "n" if first in ("pair", "comparison", "doses tested") else "n " + "/".join(r.labels)
    if len(n) > 16:
        n = "n"
    stat = r.statistic_name.split(":")[0]
    level = f"{r.level * 100:g}% interval" if r.estimate_name else "interval"
    titles = [first, n, stat, "estimate", level, "p (raw)", f"p ({r.adjustment})", ""]
    if r.normal_test:
        titles.insert(7, "p (normal)")
    return titles


def text_block(r, color: bool = False, bold: str = "", dim: str = "", reset: str = "") -> str:
    title = fmt.heading(r.statement)
    lines = [f"{bold}{title}{reset}" if color else title,
             f"{r.family} · {r.test} · effect: {r.effect}"]
    lines += _head(r)
    shown = r.rows[:TEXT_ROWS]
    table = [_titles(r)] + [_cells(r, row) for row in shown]
    last = len(table[0]) - 1
    keep = [i for i in range(len(table[0])) if any(t[i] not in ("", "-") for t in table[1:])
            or i in (0, 5, 6)]
    widths = {i: max(len(t[i]) for t in table) for i in keep}
    for t in table:
        cells = [t[i].ljust(widths[i]) if i in (0, 1, last) else t[i].rjust(widths[i])
                 for i in keep]
        lines.append("  " + "  ".join(cells).rstrip())
    more = len(r.rows) - len(shown)
    if more:
        lines.append(f"  ... {more:,} more row{'s' if more != 1 else ''} (every row: --format "
                     "csv or json; fewer: top N or below X)")
    if r.conclusion:
        lines.append(f"  {'conclusion':<15}{r.conclusion}")
    if r.estimate_name:
        lines.append(_dim(f"  {'estimate':<15}{r.estimate_name}; interval: {r.interval_method}",
                          color, dim, reset))
    lines.append(_dim(f"  {'statistic':<15}{r.statistic_name}", color, dim, reset))
    if r.where:
        lines.append(_dim(f"  {'ran on':<15}{r.where}", color, dim, reset))
    for w in r.warnings:
        lines.append(_dim(f"  {'note':<15}{w}", color, dim, reset))
    return "\n".join(lines) + "\n"


def _dim(s, color, dim, reset):
    return f"{dim}{s}{reset}" if color else s


def markdown_section(r) -> str:
    how = (f"exact, {fmt.count(r.arrangements)} arrangements" if r.method == "exact"
           else f"Monte Carlo, {r.draws:,} joint draws, seed {r.seed}")
    out = [f"**`{r.statement}`**: {r.test}; adjustment {r.adjustment} ({r.adjustment_rule}); "
           f"{how}.", ""]
    titles = _titles(r)
    titles[-1] = "note"
    out.append("| " + " | ".join(titles) + " |")
    out.append("|" + "---|" * len(titles))
    for row in r.rows:
        out.append("| " + " | ".join(c.replace("|", "\\|") for c in _cells(r, row)) + " |")
    if r.conclusion:
        out.append("")
        out.append(f"Conclusion: {r.conclusion}")
    if r.normal_test:
        out.append("")
        out.append(f"p (normal): {r.normal_test}.")
    if r.estimate_name:
        out.append("")
        out.append(f"Estimate: {r.estimate_name}; interval: {r.interval_method}.")
    if r.warnings:
        out.append("")
        out += [f"- {w}" for w in r.warnings]
    return "\n".join(out) + "\n"


def csv_rows(d: dict, columns: list) -> list:
    """One CSV row per row of a several-tests record (its JSON object)."""
    base = {k: "" for k in columns}
    base.update(statement=d["statement"], family=d["family"],
                statistic_name=d["statistic"]["name"], alternative=d["alternative"],
                method=d["method"], algorithm=d["algorithm"],
                arrangements=d.get("arrangements", ""), draws=d.get("draws", ""),
                seed=d.get("seed") if d.get("seed") is not None else "",
                adjustment=d["adjustment"], warnings="; ".join(d.get("warnings", [])))
    est = d.get("estimate") or {}
    out = []
    for row in d["rows"]:
        line = dict(base)
        iv = row.get("interval") or ["", ""]
        line.update(name=row["name"], n="/".join(str(c) for c in row["n"]),
                    statistic=_blank(row["statistic"]), p_value=_blank(row["p_value"]),
                    p_adjusted=_blank(row["p_adjusted"]), estimate=_blank(row["estimate"]),
                    estimate_name=est.get("name", ""), level=est.get("level", ""),
                    interval_low=iv[0], interval_high=iv[1], note=row.get("note", ""),
                    normal_p_value=_blank(row.get("normal_p")))
        out.append(line)
    return out


def _blank(v):
    return "" if v is None else v
