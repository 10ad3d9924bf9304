"""The lowest effective dose (`compare weight by dose ordered against "0"`).

Joins a `ControlDesign` of kind "dose-finding" to the step-down trend (`engine/control/
stepdown`): one row per step, from all doses down to the control and the lowest dose, each
with its raw p and its closed-testing adjusted p; the conclusion names the lowest effective
dose. Beside it: Williams' test (means) or the normal approximation to the rank trend (ranks),
stepped down by the same rule.
"""
from __future__ import annotations

import math

import numpy as np

from ..plan.planner import make_plan
from ..result_many import ManyResult, ManyRow
from .registry import Family, Kind, Reported, family_for

KINDS = {"dose-finding": Kind("compare", "doses in order against a control",
                              "add 'ordered against \"0\"' (the control, lowest dose first)")}

RULE = ("step m tests 'no effect up to dose m' with the trend over the control "
        "and doses up to m alone; its adjusted p is the largest raw p from the top step down to "
        "m (Tukey, Ciminera and Heyse 1985)")


def _ranked(design) -> bool:
    return family_for(design).extra["ranked"]


def plan(design):
    from ..engine.control import stepdown

    s = design.settings
    ranked = _ranked(design)
    return make_plan("dose-finding", s.family, s,
                     lambda draws: stepdown.candidates(design.values, design.groups,
                                                       design.scores, ranked, draws))


def execute(design, the_plan, progress, statement: str = "") -> ManyResult:
    from ..engine.control import stepdown

    s = design.settings
    v, g, labels = design.values, design.groups, design.labels
    steps = stepdown.run(v, g, design.scores, _ranked(design), s.alternative,
                         the_plan.chosen.algorithm, the_plan.draws, the_plan.seed, progress)
    alpha = 1.0 - s.level
    normal = _normal(design, the_plan.seed)
    rows = [_row(design, st, normal_p) for st, normal_p in zip(steps, normal["adjusted"])]
    lowest = stepdown.lowest_effective(steps, alpha + 1e-12)
    normal_lowest = _lowest(normal["adjusted"], steps, alpha + 1e-12)
    exact = the_plan.chosen.exact
    top = steps[0]
    what = "values" if s.family == "means" else "mid-ranks (re-ranked at each step)"
    return ManyResult(
        statement, "lowest effective dose", s.alternative,
        f"step-down linear trend in dose scores on the {what}, each step permuting its own "
        "units", "z: the step's trend T = sum of dose score x group total, centred, over its "
        "permutation sd", "closed testing", RULE, "exact" if exact else "monte-carlo",
        the_plan.chosen.description, top.arrangements,
        None if exact else the_plan.draws, None if exact else the_plan.seed, rows, labels,
        f"a {'rise' if s.alternative != 'lower' else 'fall'} along "
        f"{' < '.join(labels)}" + (" (either way)" if s.alternative == "two-sided" else ""),
        _estimate_name(design), "none (the steps find a dose; no interval)", s.level,
        len(rows), 0, len(rows), {}, {}, list(design.warnings), "",
        normal_test=normal["test"] + "; stepped down by the same rule",
        conclusion=_conclusion(labels, lowest, normal_lowest, alpha, normal["short"]),
        extra={"control": labels[0], "lowest_effective_dose":
               None if lowest is None else labels[lowest],
               "normal_lowest_effective_dose":
               None if normal_lowest is None else labels[normal_lowest],
               "dose_scores": [float(d) for d in design.scores]})


def _estimate_name(design) -> str:
    c = design.labels[0]
    return (f"difference in means, top dose of the step - {c}" if design.settings.family ==
            "means" else f"Hodges-Lehmann shift, top dose of the step - {c}")


def _row(design, st, normal_p) -> ManyRow:
    from ..engine.control.intervals import hodges_lehmann

    v, g, labels = design.values, design.groups, design.labels
    top, control = v[g == st.top], v[g == 0]
    est = (float(top.mean() - control.mean()) if design.settings.family == "means"
           else hodges_lehmann(top, control))
    extra = {"top": labels[st.top], "trend": st.trend}
    if st.p_interval is not None:
        extra["p_interval"] = [float(st.p_interval[0]), float(st.p_interval[1])]
    return ManyRow(" < ".join(labels[:st.top + 1]), st.sizes, st.z, st.p_value, st.p_adjusted,
                   est, None, normal_p=None if normal_p is None or normal_p != normal_p
                   else float(normal_p), extra=extra)


def _normal(design, seed) -> dict:
    """Williams' test (means) or the normal approximation of each step's rank trend."""
    from ..engine.control.stepdown import scores_of, trend_parts
    from ..normal import control as normal_control
    from ..normal.tails import p_from_z

    s = design.settings
    v, g = design.values, design.groups
    if s.family == "means":
        w = normal_control.williams(v, g, s.alternative, seed)
        raw = w["p"]
        test, short = w["test"], "Williams"
    else:
        raw = []
        for top in range(len(design.labels) - 1, 0, -1):
            keep = g <= top
            T, centre, sd = trend_parts(scores_of(v[keep], True), g[keep],
                                        np.asarray(design.scores[:top + 1], float))
            raw.append(p_from_z((T - centre) / sd if sd > 0 else 0.0, s.alternative))
        test, short = "normal approximation to each step's rank trend", "normal approximation"
    adjusted = list(np.maximum.accumulate([p if p == p else 1.0 for p in raw]))
    return {"test": test, "short": short, "raw": raw, "adjusted": adjusted}


def _lowest(adjusted, steps, alpha):
    found = None
    for p, st in zip(adjusted, steps):
        if p <= alpha:
            found = st.top
        else:
            break
    return found


def _conclusion(labels, lowest, normal_lowest, alpha, short) -> str:
    at = f"{100 * alpha:g}%"
    if lowest is None:
        text = f"no dose shows an effect at the {at} level (the trend over all doses is not " \
               "significant)"
    else:
        text = f"lowest effective dose {labels[lowest]} at the {at} level"
        if lowest > 1:
            text += f" (the step up to {labels[lowest - 1]} is not significant)"
    other = "none" if normal_lowest is None else labels[normal_lowest]
    return text + f"; {short}: {other}"


def global_test(design, many: ManyResult):
    """The first step, the trend over every dose: the step-down rejects anything only when it
    does, so the robustness check simulates it (its rate under the null is the family-wise
    error of the whole step-down)."""
    from ..engine.core.pvalues import monte_carlo_p
    from ..result import EngineOutcome, NormalTheory, Result

    s = design.settings
    top = many.rows[0]
    extra = {}
    if many.method == "monte-carlo":
        b = int(round(top.p_value * (many.draws + 1))) - 1
        extra = dict(draws=many.draws, seed=many.seed, p_interval=monte_carlo_p(b, many.draws)[1])
    outcome = EngineOutcome("z of the trend over every dose", float(top.statistic),
                            float(top.p_value), many.method, many.algorithm, many.arrangements,
                            **extra)
    normal = NormalTheory(many.normal_test.rsplit("; stepped", 1)[0], math.nan, None,
                          math.nan if top.normal_p is None else float(top.normal_p))
    return Result(many.statement, "lowest effective dose", s.alternative, outcome, normal,
                  effect=f"a trend over {' < '.join(design.labels)}",
                  warnings=list(many.warnings))


def _robustness(design):
    from ..robustness.control import dose_check

    return dose_check(design)


_HELP = """compare weight by dose ordered against "0"              the lowest effective dose
compare weight by dose ordered against "0" alternative higher   a rise with dose
compare weight by dose ordered "0" < "low" < "high" against "0" using ranks"""

FAMILIES = [
    Family("means", ("dose-finding",), "step-down trend test for the lowest effective dose "
           "(Tukey-Ciminera-Heyse, by permutation)", "the lowest effective dose, by values",
           plan, execute, "Williams' test (isotonic means), stepped down",
           "difference in means, top dose of each step - control",
           robustness=_robustness, default_in=("dose-finding",), help=_HELP,
           extra={"global_test": global_test, "ranked": False}),
    Family("ranks", ("dose-finding",), "step-down trend test on mid-ranks for the lowest "
           "effective dose (re-ranked at each step)", "the lowest effective dose, by ranks",
           plan, execute, "normal approximation to each step's rank trend, stepped down",
           "Hodges-Lehmann shift, top dose of each step - control",
           robustness=_robustness, help=_HELP, extra={"global_test": global_test,
                                                      "ranked": True}),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(("lowest effective dose",), "", "step-down trend test",
             ("tukey-ciminera-heyse-1985",)),
]
