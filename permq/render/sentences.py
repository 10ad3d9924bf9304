"""One reporting sentence per result, with the method named and the numbers in it.

    difference in means A - B 1.60 (95% exact interval 0.70 to 2.55); permutation test of the
    difference in means (Pitman): exact two-sided p = 0.0065 over 924 arrangements; Welch t
    (unequal variances) gives p = 0.0037; standardised difference d = 2.21 (95% interval 0.97
    to 3.52).

`sentence(record)` reads a result's JSON object (so a pipeline can make sentences from
`--format json` output as well); `render(outputs)` is `--format sentences`: one line per
statement that gives a result. Nothing here computes but the wording and the rounding.
"""
from __future__ import annotations

import math
from typing import Optional

from ..syntax.parser import one_line
from . import numbers as fmt
from ..contract.forms import form_of
from .methods import method_of, reference_words

ROWS_NAMED = 5            # rows of a several-tests result named in its sentence
SHORT_NAMES = {"d": "standardised difference d", "dz": "standardised mean difference d_z",
               "superiority": "probability of superiority",
               "rank_biserial": "rank-biserial correlation",
               "positive_share": "share of positive differences",
               "eta_squared": "eta-squared", "epsilon_squared": "epsilon-squared",
               "concordance": "share of concordant pairs", "kendall_w": "Kendall's W",
               "partial_eta_squared": "partial eta-squared",
               "standardised_slope": "standardised slope", "cramer_v": "Cramer's V",
               "cohen_h": "Cohen's h"}


def render(outputs) -> str:
    from .jsonout import records

    lines = [sentence(r) for r in records(outputs)]
    return "".join(line + "\n" for line in lines if line)


def sentence(record: dict) -> str:
    """The sentence for one record (a result, a several-tests result, a robustness check or a
    failure); "" for a plan."""
    form = form_of(record)
    if form == "failure":
        return f"'{one_line(record['statement'])}' did not run: {record['error']['message']}"
    if form == "plan":
        return ""
    if form == "several":
        return _several(record)
    if form == "factorial":
        from .factorial import sentence as factorial_sentence

        return factorial_sentence(record)
    if form == "robustness":
        return _robustness(record)
    if form == "power":
        from .power import sentence as power_sentence

        return power_sentence(record)
    return _single(record)


# ---------------------------------------------------------------- numbers

def decimals_for(v) -> int:
    """Decimals that give three significant figures to v (none past the units above 100)."""
    if v is None or not isinstance(v, (int, float)) or not math.isfinite(v) or v == 0:
        return 2
    return max(0, 2 - int(math.floor(math.log10(abs(v)))))


def number(v, decimals: int) -> str:
    if v is None:
        return "-"
    if isinstance(v, str):          # "inf" / "-inf" in JSON
        return "+inf" if v == "inf" else "-inf"
    if not math.isfinite(v):
        return "+inf" if v > 0 else "-inf"
    if abs(v) >= 1e6 or (v != 0 and abs(v) < 1e-4):
        return f"{v:.3g}"
    text = f"{v:.{decimals}f}"
    return "0" if float(text) == 0 else text


def _infinite(v) -> bool:
    return isinstance(v, str) or (isinstance(v, float) and math.isinf(v))


def interval_words(iv, level, decimals: int, kind: str = "") -> str:
    """"95% exact interval 0.70 to 2.55"; one-sided: "95% exact lower bound 0.60"."""
    pct = f"{level * 100:g}%"
    kind = f"{kind} " if kind else ""
    lo, hi = iv
    if _infinite(lo) and _infinite(hi):
        return f"no finite {pct} {kind}interval: too few arrangements"
    if _infinite(hi) and not _infinite(lo):
        return f"{pct} {kind}lower bound {number(lo, decimals)}"
    if _infinite(lo) and not _infinite(hi):
        return f"{pct} {kind}upper bound {number(hi, decimals)}"
    return f"{pct} {kind}interval {number(lo, decimals)} to {number(hi, decimals)}"


def _interval_kind(method: str) -> str:
    m = method.lower()
    if "sampled" in m or "monte carlo" in m:
        return "permutation"
    if m.startswith(("inverting", "exact")) or "clopper-pearson" in m or "exact " in m:
        return "exact"
    if "binomial quantiles" in m:
        return "exact"
    return ""


# ---------------------------------------------------------------- one result

def _single(r: dict) -> str:
    parts = []
    est = r.get("estimate")
    if est is not None:
        parts.append(_estimate_clause(est, r.get("effect", ""), r.get("normal_interval")))
    parts.append(_test_clause(r, lead=est is None))
    nt = r.get("normal_theory")
    if nt and nt.get("undefined"):
        parts.append(f"{nt['test']} is undefined here ({nt['undefined']})")
    elif nt:
        parts.append(f"{nt['test']} gives p = {fmt.p(nt['p_value'])}")
    effects = _effects_clause(r)
    if effects:
        parts.append(effects)
    if r.get("equivalence"):
        e = r["equivalence"]
        parts.append(f"{e['verdict']} (two one-sided exact tests, p = "
                     f"{fmt.p(e['exact']['p_value'])}; {e['t_based']['test']} p = "
                     f"{fmt.p(e['t_based']['p_value'])})")
    floor = _floor_clause(r)
    if floor:
        parts.append(floor)
    return "; ".join(parts) + "."


def _floor_clause(r: dict) -> str:
    """When no outcome of an exact design reaches the level (`smallest_p`)."""
    sp = r.get("smallest_p")
    if r.get("method") != "exact" or not sp or not sp.get("above_level"):
        return ""
    side = "two-sided" if r["alternative"] == "two-sided" else "one-sided"
    return (f"no outcome of this design can reach p <= {sp['level']:g} (smallest {side} p "
            f"{'at least ' if sp.get('lower_bound') else ''}{fmt.p(sp['this_test'])})")


def _estimate_clause(est: dict, effect: str = "", normal: Optional[dict] = None) -> str:
    """The estimate with its interval; where it has no interval of its own, the
    normal-theory interval for the same estimate when the record has one."""
    d = decimals_for(est["value"])
    base = est["name"].split(" (")[0]
    # the effect's words say more where they begin alike ("odds ratio of 'yes' in 'A' ...")
    name = effect if effect.startswith(base + " ") and effect != est["name"] else est["name"]
    text = f"{name} {number(est['value'], d)}"
    if est.get("interval") is not None:
        return text + f" ({interval_words(est['interval'], est['level'], d, _interval_kind(est.get('method', '')))})"
    if normal and normal.get("interval") is not None:
        words = interval_words(normal["interval"], normal.get("level", est["level"]), d,
                               "normal-theory")
        return text + f" ({words}; no exact interval)"
    return text + " (no interval for this estimate)"


def _test_clause(r: dict, lead: bool) -> str:
    m = method_of(r)
    stat = r["statistic"]
    head = m.name
    if lead:
        head += f" of {r['effect']}" if r.get("effect") else ""
        head += (f" ({stat['name'].split(' (')[0]} = "
                 f"{number(stat['value'], decimals_for(stat['value']))})")
    return f"{head}: {_p_words(r)}"


def _p_words(r: dict) -> str:
    side = "two-sided" if r["alternative"] == "two-sided" else f"one-sided ({r['alternative']})"
    if r["method"] == "exact":
        return f"exact {side} p = {fmt.p(r['p_value'])} {reference_words(r)}"
    lo, hi = r.get("p_interval") or (None, None)
    return (f"Monte Carlo {side} p = {fmt.p(r['p_value'])} from {r['draws']:,} random "
            f"arrangements (seed {r['seed']}; 99% interval for p {fmt.p(lo)} to {fmt.p(hi)})")


def _effects_clause(r: dict) -> str:
    out = []
    for s in r.get("effect_sizes") or []:
        if s.get("value") is None:
            continue
        name = SHORT_NAMES.get(s["key"], s["name"])
        d = 2 if abs(s["value"]) < 10 else decimals_for(s["value"])
        text = f"{name} = {number(s['value'], d)}"
        if s.get("interval") is not None:
            text += f" ({interval_words(s['interval'], s['level'], d)})"
        out.append(text)
    arms = r.get("arm_proportions")
    if arms and all(len(a["proportions"]) == 2 for a in arms):
        outcome = next(iter(arms[0]["proportions"]))
        out.insert(0, f"proportion '{outcome}': " + ", ".join(
            f"'{a['arm']}' {a['proportions'][outcome]:.2f}" for a in arms))
    return "; ".join(out)


# ---------------------------------------------------------------- several tests at once

def _several(r: dict) -> str:
    unit = {"pairwise": "pairs", "for each": "features", "many-to-one": "comparisons",
            "lowest effective dose": "steps"}.get(r["family"], "responses")
    if r["method"] == "exact":
        how = f"exact over {fmt.count(r['arrangements'])} arrangements"
    else:
        how = f"Monte Carlo, {r['draws']:,} joint draws, seed {r['seed']}"
    head = (f"{r['test']}, {r['tested']:,} {unit} tested, {r['adjustment']} adjustment "
            f"({how})")
    if r.get("overall"):
        o = r["overall"]
        head += f"; overall {o['test']} p = {fmt.p(o['p_value'])}"
    rows = r["rows"][:ROWS_NAMED]
    named = []
    for row in rows:
        if row["p_value"] is None:
            named.append(f"{row['name']} not tested ({row['note']})")
            continue
        est = ""
        if row.get("estimate") is not None:
            est = f", estimate {number(row['estimate'], decimals_for(row['estimate']))}"
        named.append(f"{row['name']} p = {fmt.p(row['p_value'])} (adjusted "
                     f"{fmt.p(row['p_adjusted'])}{est})")
    more = len(r["rows"]) - len(rows)
    tail = f"; and {more:,} more" if more > 0 else ""
    if r.get("conclusion"):
        tail += f"; {r['conclusion']}"
    return f"{head}: " + "; ".join(named) + tail + "."


# ---------------------------------------------------------------- robustness

def _robustness(r: dict) -> str:
    a = r["analysis"]
    laws = r["laws"]
    word = "scheme" if a.get("counts") else "law"
    name = method_of(r).name.replace("robustness check of the ", "")
    name = name if name[:1].isupper() else "the " + name
    head = (f"Robustness of {name} for {a['design']}, {r['datasets']:,} data sets a {word} at "
            f"{r['significance'] * 100:g}% (seed {r['seed']})")
    normal = _grouped(laws, "normal_theory")
    perm = _grouped(laws, "permutation")
    test = "the exact test" if a.get("counts") else "the permutation test"
    return f"{head}: {a['normal_test']}: {normal}; {test}: {perm}."


def _grouped(laws, side: str) -> str:
    """"holds its level under all 6" or "holds its level under normal, t3; too liberal under
    lognormal": the laws grouped by their verdict, in the panel's order."""
    groups: dict = {}
    for law in laws:
        groups.setdefault(law[side]["verdict"], []).append(law["name"])
    if len(groups) == 1:
        return f"{next(iter(groups))} under all {len(laws)}"
    return "; ".join(f"{verdict} under {', '.join(names)}" for verdict, names in groups.items())
