"""Lines the count forms add to a text block: further exact tests and estimates beside the main
ones, the strata's counts, the rates. They read `Result.extra` (plain data); nothing is
computed here."""
from __future__ import annotations

from . import numbers as fmt


def _value(v):
    return None if v is None else float(v)


def count_lines(r) -> list:
    extra = r.extra
    out = []
    for t in extra.get("tests_also") or []:
        exact = t.get("method") == "exact"
        label = "also exact" if exact else "also sampled"
        draws = "" if exact else f" ({t.get('draws'):,} Monte Carlo draws)"
        out.append(f"  {label:<15}p {fmt.p(_value(t['p_value']))} from {t['test']}{draws}")
    for e in extra.get("estimates_also") or []:
        out.append(f"  {'estimate':<15}{e['name']} = {fmt.num(_value(e['value']))}")
        lvl = f"{e['level'] * 100:g}% interval"
        iv = e.get("interval")
        exact = fmt.interval([_value(v) for v in iv]) if iv else "none"
        ni = e.get("normal_interval")
        normal = (fmt.interval([_value(v) for v in ni["interval"]]) + f" {ni['method']}"
                  if ni else "-")
        out.append(f"  {lvl:<15}{exact:<28}{normal}")
        if e.get("method"):
            out.append(f"  {'':<15}{e['method']}")
    return out


def data_lines(r) -> list:
    """The strata (events of n in each group, and each stratum's odds ratio), the censored
    times' groups (events, censored, Kaplan-Meier median) and the rates."""
    out = []
    for i, row in enumerate(r.extra.get("strata") or []):
        label = "strata" if i == 0 else ""
        groups = ", ".join(f"{g['group']} {g['events']}/{g['n']}" for g in row["groups"])
        odds = (f"  (odds ratio {fmt.num(_value(row['odds_ratio']))})"
                if row.get("odds_ratio") is not None else "")
        out.append(f"  {label:<15}{row['stratum']}: {groups}{odds}")
    for i, g in enumerate(r.extra.get("survival") or []):
        label = "groups" if i == 0 else ""
        median = "not reached" if g["median"] is None else fmt.num(g["median"])
        expected = (f" (expected {fmt.num(g['expected'])})" if g.get("expected") is not None
                    else "")
        out.append(f"  {label:<15}{g['name']}: n {g['n']}, {g['events']} events{expected}, "
                   f"{g['censored']} censored; Kaplan-Meier median {median}")
    for i, g in enumerate(r.extra.get("rates") or []):
        label = "rates" if i == 0 else ""
        out.append(f"  {label:<15}{g['name']}: {fmt.num(g['rate'])} events per unit")
    return out
