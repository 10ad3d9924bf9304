"""The power statement in text and in one sentence (renderers never compute)."""
from __future__ import annotations

from . import numbers as fmt


def _n(sizes) -> str:
    return " + ".join(str(s) for s in sizes)


def _rate(r) -> str:
    return f"{r.value:.3f} ± {r.se:.3f}"


def text_block(pr) -> str:
    if pr.method == "summation":
        return _summed_block(pr)
    lines = [fmt.heading(pr.statement)]
    lines.append(f"power · {pr.test} · {pr.design}")
    lines.append(f"  {'effect':<15}{pr.shift_words}")
    lines.append(f"  {'errors':<15}{pr.law_words}; {pr.datasets:,} data sets at each n "
                 f"(seed {pr.seed})")
    side = "two-sided" if pr.alternative == "two-sided" else f"one-sided ({pr.alternative})"
    lines.append(f"  {'level':<15}{pr.alpha:g}, {side}")
    head = f"  {'n':<15}{'permutation':<22}{'normal theory':<22}smallest p"
    lines.append(head)
    for r in pr.rows:
        floor = fmt.p(r.smallest_p) if r.smallest_p is not None else "-"
        how = "" if r.exact else "  (tested against 999 random arrangements)"
        lines.append(f"  {_n(r.sizes):<15}{_rate(r.permutation):<22}{_rate(r.normal):<22}"
                     f"{floor}{how}")
    lines.append(f"  {'':<15}normal theory: {pr.normal_test}; ± one Monte Carlo standard error")
    if pr.target is not None:
        for which, words in (("permutation", "permutation test"), ("normal", "normal theory")):
            k = pr.needed.get(which)
            got = f"{k} a group" if k is not None else "not reached"
            if k is not None and pr.allocation:
                row = next((r for r in pr.rows if r.sizes[0] == k), None)
                got = f"n = {_n(row.sizes)}" if row is not None else f"{k} in the first group"
            if k is not None and pr.design in ("pairs", "one sample"):
                got = f"{k} {'pairs' if pr.design == 'pairs' else 'units'}"
            lines.append(f"  {'n for ' + format(pr.target, '.0%'):<15}{words}: {got}")
    for w in pr.warnings:
        lines.append(f"  {'note':<15}{w}")
    return "\n".join(lines) + "\n"


def _summed_block(pr) -> str:
    """Counts: exact power of both tests, summed over every outcome, and the formula's."""
    lines = [fmt.heading(pr.statement), f"power · {pr.test} · {pr.design}",
             f"  {'effect':<15}{pr.shift_words}"]
    side = "two-sided" if pr.alternative == "two-sided" else f"one-sided ({pr.alternative})"
    lines.append(f"  {'level':<15}{pr.alpha:g}, {side}")
    lines.append(f"  {'n':<15}{'exact test':<14}{'normal theory':<16}{'formula':<10}"
                 f"{'outcomes':<10}smallest p")
    for r in pr.rows:
        lines.append(f"  {_n(r.sizes):<15}{r.permutation.value:<14.4f}{r.normal.value:<16.4f}"
                     f"{r.formula:<10.4f}{r.arrangements:<10,}{fmt.p(r.smallest_p)}")
    lines.append(f"  {'':<15}exact power: the sum over every outcome of its probability where "
                 "the test rejects (no simulation)")
    lines.append(f"  {'':<15}normal theory: {pr.normal_test}; formula: {pr.formula_words}")
    if pr.target is not None:
        for which, words in (("permutation", "exact test"), ("normal", "normal theory")):
            k = pr.needed.get(which)
            row = next((r for r in pr.rows if r.sizes[0] == k), None)
            got = f"n = {_n(row.sizes)}" if row is not None else "not reached"
            lines.append(f"  {'n for ' + format(pr.target, '.0%'):<15}{words}: {got}")
    for w in pr.warnings:
        lines.append(f"  {'note':<15}{w}")
    return "\n".join(lines) + "\n"


def _summed_sentence(r: dict) -> str:
    side = "two-sided" if r["alternative"] == "two-sided" else f"one-sided ({r['alternative']})"
    head = (f"Exact power, summed over every binomial outcome, of {r['test']} for {r['design']}, "
            f"{r['shift']}, {side} at {r['level']:g}")
    if r.get("target") is not None:
        need = r["needed"] or {}
        by_first = {row["n"][0]: row["n"] for row in r["rows"]}

        def got(k):
            return (f"n = {' + '.join(str(s) for s in by_first[k])}" if k in by_first
                    else "not reached")
        return (f"{head}: {r['target']:.0%} power needs {got(need.get('permutation'))} for the "
                f"exact test and {got(need.get('normal'))} for the {r['normal_test']}.")
    row = r["rows"][0]
    return (f"{head}: power {row['power']:.3f} at n = {' + '.join(str(s) for s in row['n'])}, "
            f"against {row['normal_power']:.3f} for the {r['normal_test']} and "
            f"{row['normal_formula_power']:.3f} by the {r['formula']}.")


def sentence(r: dict) -> str:
    if r.get("method") == "summation":
        return _summed_sentence(r)
    side = "two-sided" if r["alternative"] == "two-sided" else f"one-sided ({r['alternative']})"
    head = (f"Power by simulation of the {r['test']} for {r['design']}, {r['shift']}, "
            f"{r['law_words']}, {side} at {r['level']:g}, {r['datasets']:,} data sets a size")
    if r.get("target") is not None:
        need = r["needed"] or {}

        unit = {"pairs": " pairs", "one sample": " units"}.get(r["design"], " a group")
        by_first = {row["n"][0]: row["n"] for row in r["rows"]}

        def got(k):
            if k is not None and r.get("allocation") and k in by_first:
                return f"n = {' + '.join(str(s) for s in by_first[k])}"
            return f"n = {k}{unit}" if k is not None else "not reached"
        return (f"{head}: {r['target']:.0%} power needs {got(need.get('permutation'))} "
                f"for the permutation test and {got(need.get('normal'))} for "
                f"{r['normal_test']}.")
    row = r["rows"][0]
    return (f"{head}: power {row['power']:.3f} (± {row['power_se']:.3f}) at n = "
            f"{' + '.join(str(s) for s in row['n'])}, against {row['normal_power']:.3f} "
            f"(± {row['normal_power_se']:.3f}) for {r['normal_test']}.")


def csv_rows(d: dict, columns: list) -> list:
    """One CSV line a size: the permutation test's power as the statistic, normal theory's
    beside it."""
    out = []
    for r in d["rows"]:
        row = {k: "" for k in columns}
        row.update(statement=d["statement"], family="power",
                   statistic_name=f"power at n = {' + '.join(str(s) for s in r['n'])}",
                   statistic=r["power"], alternative=d["alternative"], level=d["level"],
                   method="exact" if r["exact"] else "monte-carlo",
                   arrangements=r["arrangements"] if r["exact"] else "",
                   draws="" if r["exact"] else r["arrangements"], seed=d["seed"],
                   normal_test=d["normal_test"], normal_statistic=r["normal_power"],
                   warnings="; ".join(d["warnings"]))
        out.append(row)
    return out


def markdown_section(d: dict) -> str:
    lines = [f"`{d['statement']}`: {d['test']}, {d['design']}; {d['shift']}; {d['law_words']}; "
             f"{d['datasets']:,} data sets a size, level {d['level']:g}", "",
             "| n | power (permutation) | power (normal theory) | smallest p |",
             "|---|---|---|---|"]
    for r in d["rows"]:
        floor = fmt.p(r["smallest_p"]) if r["smallest_p"] is not None else "-"
        lines.append(f"| {' + '.join(str(s) for s in r['n'])} | {r['power']:.3f} ± "
                     f"{r['power_se']:.3f} | {r['normal_power']:.3f} ± {r['normal_power_se']:.3f}"
                     f" | {floor} |")
    return "\n".join(lines) + "\n\n" + sentence(d) + "\n"


def html_table(d: dict) -> str:
    from html import escape

    rows = "".join(
        f"<tr><td>{' + '.join(str(s) for s in r['n'])}</td><td>{r['power']:.3f} ± "
        f"{r['power_se']:.3f}</td><td>{r['normal_power']:.3f} ± {r['normal_power_se']:.3f}</td>"
        f"<td>{fmt.p(r['smallest_p']) if r['smallest_p'] is not None else '-'}</td></tr>"
        for r in d["rows"])
    return (f"<p>{escape(sentence(d))}</p><table><tr><th>n</th><th>permutation</th>"
            f"<th>normal theory</th><th>smallest p</th></tr>{rows}</table>")
