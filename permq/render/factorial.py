"""Renderers for two crossed factors (`FactorialResult`), from its JSON object: the terminal
block (cell means, one line per term, how each was tested), Markdown, CSV rows, HTML and the
reporting sentence. They never compute."""
from __future__ import annotations

from html import escape

from . import numbers as fmt

FAMILY = "two factors"
LABEL = 15
NORMAL_WORDS = ("two-way ANOVA F of each term over the error mean square of the model with the "
                "interaction (normal errors, equal variances)")


def _p_text(t: dict) -> str:
    if t["method"] == "exact":
        return f"{fmt.p(t['p_value'])} exact"
    lo, hi = t["p_interval"]
    half = max(t["p_value"] - lo, hi - t["p_value"])
    return f"{fmt.p(t['p_value'])} ±{fmt.p(half)} Monte Carlo"


def _how(t: dict) -> str:
    if t["method"] == "exact":
        return f"exact: {t['algorithm']}, {fmt.count(t['arrangements'])} arrangements"
    lo, hi = t["p_interval"]
    return (f"{t['algorithm']}: {t['draws']:,} draws; 99% interval for p "
            f"[{fmt.p(lo)}, {fmt.p(hi)}]")


def _normal_p(t: dict) -> str:
    nt = t.get("normal_theory")
    return fmt.p(nt["p_value"]) if nt else "-"


def cell_lines(d: dict) -> list:
    c = d["cells"]
    head = [f"{c['rows']} \\ {c['columns']}"] + [str(v) for v in c["column_levels"]]
    body = [[str(level)] + [f"{fmt.num(m)} (n {int(n)})" for m, n in zip(means, ns)]
            for level, means, ns in zip(c["row_levels"], c["mean"], c["n"])]
    widths = [max(len(r[i]) for r in [head] + body) for i in range(len(head))]
    out = []
    for i, row in enumerate([head] + body):
        label = "cell means" if i == 0 else ""
        cells = [row[0].ljust(widths[0])] + [v.rjust(w) for v, w in zip(row[1:], widths[1:])]
        out.append(f"  {label:<{LABEL}}" + "  ".join(cells))
    return out


def term_table(d: dict) -> list:
    titles = ["term", "F", "df", "p (permutation)", "p (F test)"]
    rows = [[t["term"], fmt.num(t["statistic"]["value"]), ", ".join(str(v) for v in t["df"]),
             _p_text(t), _normal_p(t)] for t in d["terms"]]
    widths = [max(len(r[i]) for r in [titles] + rows) for i in range(len(titles))]
    out = []
    for row in [titles] + rows:
        cells = [row[0].ljust(widths[0])] + [row[1].rjust(widths[1]), row[2].rjust(widths[2]),
                                             row[3].ljust(widths[3]), row[4].rjust(widths[4])]
        out.append("  " + "  ".join(cells).rstrip())
    return out


def text_block(r, color: bool = False, bold: str = "", dim: str = "", reset: str = "") -> str:
    d = r.to_dict()
    title = fmt.heading(d["statement"])
    first, second = d["factors"]
    lines = [f"{bold}{title}{reset}" if color else title,
             f"{FAMILY} · two-way permutation F · {d['response']} by {first} and {second}"]
    lines += cell_lines(d)
    table = term_table(d)
    lines.append(f"{bold}{table[0]}{reset}" if color else table[0])
    lines += table[1:]
    for i, t in enumerate(d["terms"]):
        label = "method" if i == 0 else ""
        lines.append(f"  {label:<{LABEL}}{t['term']}: {t['arranged']}")
        lines.append(f"  {'':<{LABEL}}  {_how(t)}")
    if d["method"] != "exact":
        lines.append(f"  {'':<{LABEL}}{fmt.seed(d['seed'], r.seed_source)}")
    note = lambda s: f"{dim}{s}{reset}" if color else s
    lines.append(note(f"  {'sums of sq.':<{LABEL}}{d['sums_of_squares']}"))
    lines.append(note(f"  {'':<{LABEL}}F test: {NORMAL_WORDS}"))
    lines.append(note(f"  {'':<{LABEL}}{d['two_sided_rule']}"))
    for w in d["warnings"] + [w for t in d["terms"] for w in t["warnings"]]:
        lines.append(note(f"  {'note':<{LABEL}}{w}"))
    return "\n".join(lines) + "\n"


def markdown_section(d: dict) -> str:
    first, second = d["factors"]
    out = [f"**`{d['statement']}`**: two-way permutation F of {d['response']} by {first} and "
           f"{second}; sums of squares {d['sums_of_squares']}.", "",
           "| term | F | df | p (permutation) | method | p (F test) |", "|---|---|---|---|---|---|"]
    for t in d["terms"]:
        cells = [t["term"], fmt.num(t["statistic"]["value"]), ", ".join(map(str, t["df"])),
                 fmt.p(t["p_value"]), f"{t['arranged']}; {_how(t)}", _normal_p(t)]
        out.append("| " + " | ".join(c.replace("|", "\\|") for c in cells) + " |")
    notes = d["warnings"] + [w for t in d["terms"] for w in t["warnings"]]
    if notes:
        out.append("")
        out += [f"- {w}" for w in notes]
    return "\n".join(out) + "\n"


def csv_rows(d: dict, columns: list) -> list:
    """One CSV row per term."""
    out = []
    for t in d["terms"]:
        row = {k: "" for k in columns}
        nt = t.get("normal_theory") or {}
        lo, hi = t.get("p_interval") or ("", "")
        row.update(statement=d["statement"], family=d["family"], name=t["term"],
                   statistic_name=t["statistic"]["name"], statistic=t["statistic"]["value"],
                   alternative=d["alternative"], p_value=t["p_value"], method=t["method"],
                   algorithm=t["algorithm"], arrangements=t.get("arrangements", ""),
                   draws=t.get("draws", ""), p_low=lo, p_high=hi,
                   seed=d["seed"] if t["method"] != "exact" else "",
                   normal_test=nt.get("test", ""), normal_statistic=nt.get("statistic", ""),
                   normal_df=nt.get("df", ""), normal_p_value=nt.get("p_value", ""),
                   note=t["arranged"],
                   warnings="; ".join(d["warnings"] + t["warnings"]))
        out.append(row)
    return out


def html_table(d: dict) -> str:
    c = d["cells"]
    head = "".join(f"<th>{escape(str(v))}</th>" for v in c["column_levels"])
    body = "".join(
        f"<tr><th>{escape(str(level))}</th>" + "".join(
            f'<td class="num">{escape(fmt.num(m))} (n {int(n)})</td>' for m, n in zip(means, ns))
        + "</tr>" for level, means, ns in zip(c["row_levels"], c["mean"], c["n"]))
    cells = (f"<table><tr><th>{escape(c['rows'])} \\ {escape(c['columns'])}</th>{head}</tr>"
             f"{body}</table>")
    titles = ["term", "F", "df", "p (permutation)", "method", "p (F test)"]
    rows = "".join(
        "<tr>" + "".join(f"<td>{escape(v)}</td>" for v in [
            t["term"], fmt.num(t["statistic"]["value"]), ", ".join(map(str, t["df"])),
            fmt.p(t["p_value"]), f"{t['arranged']}; {_how(t)}", _normal_p(t)]) + "</tr>"
        for t in d["terms"])
    terms = ("<table><tr>" + "".join(f"<th>{v}</th>" for v in titles) + "</tr>" + rows
             + "</table>")
    return (cells + terms + f'<p class="note">sums of squares {escape(d["sums_of_squares"])}'
            "</p>")


def sentence(d: dict) -> str:
    first, second = d["factors"]
    parts = []
    for t in d["terms"]:
        how = ("exact" if t["method"] == "exact" else f"Monte Carlo, {t['draws']:,} draws")
        parts.append(f"{t['term']} F({t['df'][0]}, {t['df'][1]}) = "
                     f"{fmt.num(t['statistic']['value'], 3)}, permutation p = "
                     f"{fmt.p(t['p_value'])} ({how}; F test p = {_normal_p(t)})")
    seed = f", seed {d['seed']}" if d["method"] != "exact" else ""
    return (f"two-way permutation ANOVA of {d['response']} by {first} and {second} (main "
            f"effects by restricted permutation, the interaction by residual permutation"
            f"{seed}): " + "; ".join(parts) + ".")
