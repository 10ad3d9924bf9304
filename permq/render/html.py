"""HTML fragments of results: the notebook's `_repr_html_` and the report's result sections.

Each fragment is built from the result's JSON object (the contract) and escapes every text;
pictures come from `render/svg.py`. Nothing here computes.
"""
from __future__ import annotations

from html import escape

from . import numbers as fmt
from ..contract.forms import form_of
from .sentences import sentence

STYLE = """
.permq-result{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;font-size:13px;
  margin:0.6em 0 1.2em 0;max-width:58em}
.permq-result h3{font-size:14px;font-family:ui-monospace,monospace;margin:0 0 0.3em 0;
  font-weight:600}
.permq-result table{border-collapse:collapse;margin:0.3em 0}
.permq-result th,.permq-result td{border-bottom:1px solid #ddd;padding:2px 10px 2px 4px;
  text-align:left;vertical-align:top}
.permq-result th{font-weight:600;color:#333}
.permq-result td.num{text-align:right;font-variant-numeric:tabular-nums}
.permq-result .sentence{margin:0.4em 0;padding:0.3em 0.6em;background:#f4f6f8;
  border-left:3px solid #4a6fa5}
.permq-result .note{color:#666}
.permq-result .error{color:#a00}
"""


def output_html(output) -> str:
    """One output (Result, ManyResult, RobustnessResult, Failure) as a styled fragment."""
    record = output.to_dict()
    return f"<style>{STYLE}</style>" + section(record, pictures=True)


def section(record: dict, pictures: bool = True, anchor: str = "") -> str:
    ident = f' id="{escape(anchor)}"' if anchor else ""
    head = f"<h3>{escape(fmt.one_line(record['statement']))}</h3>"
    form = form_of(record)
    if form == "failure":
        e = record["error"]
        where = f" (line {e['line']}, column {e['column']})" if e.get("line") else ""
        return (f'<div class="permq-result"{ident}>{head}<p class="error">'
                f"{escape(e['message'])}{where}</p></div>")
    if form == "several":
        body = several_table(record)
    elif form == "factorial":
        from .factorial import html_table

        body = html_table(record)
    elif form == "power":
        from .power import html_table as power_table

        body = power_table(record)
    elif form == "robustness":
        body = robustness_table(record)
        if pictures:
            from .svg import law_rates

            body += law_rates(record)
    else:
        body = result_table(record)
    if pictures and record.get("null_picture"):
        from .svg import null_distribution

        body += null_distribution(record["null_picture"])
    elif pictures and form == "result":
        body += ('<p class="note">no picture: the null distribution is not kept for this '
                 'method</p>')

    notes = "".join(f'<li class="note">{escape(w)}</li>' for w in record.get("warnings", []))
    if form == "robustness":
        notes = "".join(f"<li>{escape(s)}</li>" for s in record.get("summary", [])) + notes
    return (f'<div class="permq-result"{ident}>{head}'
            f'<p class="sentence">{escape(sentence(record))}</p>{body}'
            + (f"<ul>{notes}</ul>" if notes else "") + "</div>")


def _row(label, *cells) -> str:
    tds = "".join(f'<td class="num">{escape(c)}</td>' if _numeric(c) else f"<td>{escape(c)}</td>"
                  for c in cells)
    return f"<tr><th>{escape(label)}</th>{tds}</tr>"


def _numeric(text: str) -> bool:
    return bool(text) and text.lstrip("-+[").replace(".", "", 1)[:1].isdigit()


def result_table(r: dict) -> str:
    rows = [_row("test", r["family"], r["statistic"]["name"], fmt.num(r["statistic"]["value"]))]
    if r.get("effect"):
        rows.append(_row("effect", r["effect"]))
    for g in r.get("groups") or []:
        sd = f"sd {fmt.num(g['sd'])}" if g.get("sd") is not None else ""
        rows.append(_row("group", g["name"], f"n {g['n']}", f"mean {fmt.num(g['mean'])}",
                         f"median {fmt.num(g['median'])}", sd))
    if r["method"] == "exact":
        how = f"exact: {r['algorithm']}, {fmt.count(r['arrangements'])} arrangements"
    else:
        lo, hi = r["p_interval"] or (None, None)
        how = (f"Monte Carlo: {r['draws']:,} draws, seed {r['seed']}; 99% interval for p "
               f"[{fmt.p(lo)}, {fmt.p(hi)}]")
    rows.append(_row(f"p ({r['alternative']})", "permutation", fmt.p(r["p_value"]), how))
    nt = r.get("normal_theory")
    if nt:
        df = f"df {fmt.df(nt['df'])}" if nt.get("df") is not None else ""
        shown = (f"undefined ({nt['undefined']})" if nt.get("undefined")
                 else f"{fmt.num(nt['statistic'])} {df}".strip())
        rows.append(_row("", "normal theory", "undefined" if nt.get("undefined")
                         else fmt.p(nt["p_value"]), f"{nt['test']}: {shown}"))
    for extra in r.get("normal_theory_also") or []:
        p_shown = f"undefined ({extra['undefined']})" if extra.get("undefined") else \
            fmt.p(extra["p_value"])
        rows.append(_row("", "also", p_shown, extra["test"]))
    est = r.get("estimate")
    if est:
        iv = fmt.interval(_floats(est["interval"])) if est.get("interval") else "none"
        rows.append(_row("estimate", est["name"], fmt.num(est["value"]), iv, est["method"]))
        ni = r.get("normal_interval")
        if ni:
            rows.append(_row("", "normal theory", "", fmt.interval(_floats(ni["interval"])),
                             ni["method"]))
    for s in r.get("effect_sizes") or []:
        iv = fmt.interval(_floats(s["interval"])) if s.get("interval") else "none"
        rows.append(_row("effect size", s["name"], fmt.num(s["value"]), iv, s["method"]))
    for arm in r.get("arm_proportions") or []:
        shares = ", ".join(f"{k} {v:.3f}" for k, v in arm["proportions"].items())
        rows.append(_row("proportions", arm["arm"], f"n {arm['n']}", shares))
    table = r.get("table")
    out = "<table>" + "".join(rows) + "</table>"
    if table:
        out += counts_table(table)
    d = r.get("diagnostics")
    if d:
        from .robustness import diagnostics_line

        line = diagnostics_line(_Extra(d)).replace("diagnostics", "", 1).strip()
        if line:
            out += f'<p class="note">diagnostics: {escape(line)}</p>'
    if r.get("alternative") == "two-sided" and r.get("two_sided_rule"):
        out += f'<p class="note">{escape(r["two_sided_rule"])}</p>'
    return out


class _Extra:
    """Lets the text renderer's diagnostics line read a record's diagnostics."""

    def __init__(self, d):
        self.extra = {"diagnostics": d}


def _floats(iv):
    return [float("inf") if v == "inf" else float("-inf") if v == "-inf" else v for v in iv]


def counts_table(t: dict) -> str:
    head = "".join(f"<th>{escape(str(c))}</th>" for c in t["columns"])
    body = ""
    for name, row, total in zip(t["rows"], t["counts"], t["row_totals"]):
        cells = "".join(f'<td class="num">{v}</td>' for v in row)
        body += f"<tr><th>{escape(str(name))}</th>{cells}<td class=\"num\">{total}</td></tr>"
    totals = "".join(f'<td class="num">{v}</td>' for v in t["column_totals"])
    body += f"<tr><th>total</th>{totals}<td class=\"num\">{t['total']}</td></tr>"
    return (f'<table class="counts"><tr><th></th>{head}<th>total</th></tr>{body}</table>')


def several_table(r: dict) -> str:
    if r["method"] == "exact":
        how = f"exact, {fmt.count(r['arrangements'])} arrangements"
    else:
        how = f"Monte Carlo, {r['draws']:,} joint draws, seed {r['seed']}"
    head = (f"<p>{escape(r['test'])}; adjustment {escape(r['adjustment'])} "
            f"({escape(r['adjustment_rule'])}); {escape(how)}.</p>")
    titles = ["name", "n", "statistic", "estimate", "interval", "p (raw)", "p (adjusted)", "note"]
    rows = "".join(
        "<tr>" + "".join(f"<td>{escape(c)}</td>" for c in [
            row["name"], "/".join(str(c) for c in row["n"]), fmt.num(row["statistic"]),
            fmt.num(row["estimate"]), fmt.interval(row["interval"]) if row["interval"] else "-",
            fmt.p(row["p_value"]), fmt.p(row["p_adjusted"]), row["note"]]) + "</tr>"
        for row in r["rows"])
    return (head + "<table><tr>" + "".join(f"<th>{t}</th>" for t in titles) + "</tr>"
            + rows + "</table>")


def robustness_table(r: dict) -> str:
    a = r["analysis"]
    head = (f"<p>{escape(a['design'])}; {escape(a['statistic'])} against "
            f"{escape(a['normal_test'])}; {r['datasets']:,} data sets each, significance "
            f"{r['significance'] * 100:g}%, seed {r['seed']}.</p>")
    titles = ["law", "normal theory: rate under the null", "permutation: rate under the null",
              "normal theory: power", "permutation: power", "verdict"]
    rows = ""
    for law in r["laws"]:
        nt, pm = law["normal_theory"], law["permutation"]
        cells = [law["name"], f"{nt['rejection_rate']:.3f} ±{nt['se']:.3f}",
                 f"{pm['rejection_rate']:.3f} ±{pm['se']:.3f}",
                 f"{nt['power']:.3f} ±{nt['power_se']:.3f}",
                 f"{pm['power']:.3f} ±{pm['power_se']:.3f}", law["verdict"]]
        rows += "<tr>" + "".join(f"<td>{escape(c)}</td>" for c in cells) + "</tr>"
    return (head + "<table><tr>" + "".join(f"<th>{escape(t)}</th>" for t in titles) + "</tr>"
            + rows + "</table>")
