"""Every other level against a control (`compare weight by dose against "control"`).

Joins a `ControlDesign` (kind "control") to the many-to-one engine (`engine/control`): all
units permuted together, Westfall-Young max-T (step-down by default), simultaneous intervals
from the single-step critical value; beside it Dunnett's test (means) or the normal
approximation to the pairwise-ranked sums (ranks).
"""
from __future__ import annotations

import math

import numpy as np

from ..plan.planner import make_plan
from ..result_many import ManyResult, ManyRow
from .registry import Family, Kind, Reported, family_for

KINDS = {"control": Kind("compare", "levels against a control",
                         "add 'against \"LEVEL\"' (the control)")}

TESTS = {
    "means": ("Welch-type t of each level against the control (each pair studentized by its "
              "own two variances), all units permuted together",
              "t: (mean of the level - mean of the control) / sqrt(s^2/n of each, summed)"),
    "ranks": ("rank sum of each level with the control alone (re-ranked for each pair, as "
              "Steel 1959), all "
              "units permuted together",
              "z: the pair's Mann-Whitney count (level above control, ties 1/2), centred, over "
              "its no-ties sd"),
}


def _ranked(design) -> bool:
    return family_for(design).extra["ranked"]


def plan(design):
    from ..engine.control import manytoone

    s = design.settings
    sizes = np.bincount(design.groups, minlength=len(design.labels))
    ranked = _ranked(design)
    return make_plan("control", s.family, s,
                     lambda draws: manytoone.candidates(sizes, draws, ranked))


def execute(design, the_plan, progress, statement: str = "") -> ManyResult:
    from ..engine.control import manytoone
    from ..normal import control as normal_control
    from .many import RULES, _adjustment_word

    s = design.settings
    v, g, labels = design.values, design.groups, design.labels
    out = manytoone.run(v, g, _ranked(design), s.alternative, design.adjustment, design.step,
                        the_plan.chosen.algorithm, the_plan.draws, the_plan.seed, s.level,
                        progress)
    normal = (normal_control.dunnett(v, g, s.level, s.alternative) if s.family == "means"
              else normal_control.rank_sums(v, g, s.alternative))
    rows = _rows(design, out, normal)
    test, statistic = TESTS[s.family]
    control = labels[0]
    alpha = 1.0 - s.level
    what = ("difference in means" if s.family == "means" else "Hodges-Lehmann shift")
    warnings = list(design.warnings)
    spread = _spread_note(v, g)
    if spread:
        warnings.append(spread)
    if design.adjustment == "max-t" and design.step == "step-down":
        warnings.append("step-down on one joint permutation of all units takes a level's null "
                        "law not to depend on whether other levels have an effect (subset "
                        "pivotality); 'adjust max-t single-step' needs no such condition")
    return ManyResult(statement, "many-to-one", s.alternative, test, statistic,
                      _adjustment_word(design), RULES[(design.adjustment, design.step)],
                      out.method,
                      out.algorithm, out.arrangements, out.draws, out.seed, rows, labels,
                      f"{what}, each level - {control}", f"{what}, level - {control}",
                      _interval_words(s, out.critical, alpha), s.level, len(rows), 0,
                      len(rows), {}, {}, warnings, "",
                      normal_test=normal["test"] + ("; adjusted p, single-step" if
                                                    s.family == "means" else "; adjusted p"),
                      extra={"control": control, "critical_value": _num(out.critical)})


def _spread_note(v, g) -> str:
    """When the groups' standard deviations differ by the two-sample pointer's ratio or more:
    the joint permutation is then not exact, and the max-T only near its level (the README's
    measured family-wise errors)."""
    from ..robustness.spread import SPREAD_RATIO

    sds = np.array([np.std(v[g == j], ddof=1) if np.count_nonzero(g == j) > 1 else np.nan
                    for j in range(int(g.max()) + 1)])
    sds = sds[np.isfinite(sds)]
    if len(sds) < 2 or sds.min() <= 0 or sds.max() / sds.min() < SPREAD_RATIO:
        return ""
    return (f"the groups' spreads differ (largest to smallest sd {sds.max() / sds.min():.3g}): "
            "all units permuted together is then not exact, and max-T is only near its level, "
            "liberal with small groups (about 7% family-wise error at 5% for 10 units a "
            "group with sds 1, 2, 4, 3); 'robustness' before the statement checks this design")


def _num(v):
    return None if v is None or not np.isfinite(v) else float(v)


def _interval_words(s, c, alpha) -> str:
    scale = ("its Welch standard error" if s.family == "means" else
             "the pair's rank statistic (order statistics of the differences)")
    z = "t" if s.family == "means" else "z"
    side = {"two-sided": f"largest |{z}|", "higher": f"largest {z}", "lower": f"largest -{z}"}
    return (f"simultaneous, from {scale} and c = {c:.4g}, the {100 * (1 - alpha):g}% point of "
            f"the {side[s.alternative]} over the arrangements: 0 lies outside an interval "
            f"exactly when the single-step max-T adjusted p is at most {alpha:g}")


def _rows(design, out, normal) -> list:
    from ..engine.control import intervals

    s = design.settings
    v, g, labels = design.values, design.groups, design.labels
    control = v[g == 0]
    rows = []
    for j in range(1, len(labels)):
        dose = v[g == j]
        if s.family == "means":
            est = float(dose.mean() - control.mean())
            se = math.sqrt(dose.var(ddof=1) / len(dose) + control.var(ddof=1) / len(control))
            iv = intervals.welch_intervals([dose.mean()], control.mean(), [se], out.critical,
                                           s.alternative)[0]
        else:
            est = intervals.hodges_lehmann(dose, control)
            iv = intervals.shift_interval(dose, control, out.critical, s.alternative)
        niv = normal["intervals"][j - 1]
        rows.append(ManyRow(f"{labels[j]} - {labels[0]}", (len(dose), len(control)),
                            float(out.t_obs[j - 1]), float(out.p_raw[j - 1]),
                            float(out.p_adjusted[j - 1]), est, iv,
                            normal_p=_num(normal["p"][j - 1]), normal_interval=niv,
                            extra={"p_single_step": float(out.p_single_step[j - 1])}))
    return rows


def global_test(design, many: ManyResult):
    """The global test the robustness check simulates: does any level differ from the
    control? Its p is the smallest single-step adjusted p (max-T), beside the smallest of the
    counterpart's."""
    from ..engine.core.pvalues import monte_carlo_p
    from ..result import EngineOutcome, NormalTheory, Result

    s = design.settings
    from ..robustness.control import extreme

    t = np.array([r.statistic for r in many.rows])
    p = min(r.extra["p_single_step"] for r in many.rows)
    extra = {}
    if many.method == "monte-carlo":
        b = int(round(p * (many.draws + 1))) - 1
        extra = dict(draws=many.draws, seed=many.seed, p_interval=monte_carlo_p(b, many.draws)[1])
    letter = "t" if s.family == "means" else "z"
    which = {"two-sided": f"largest |{letter}|", "higher": f"largest {letter}",
             "lower": f"smallest {letter}"}[s.alternative]
    outcome = EngineOutcome(f"{which} over the levels (single-step max-T)",
                            float(extreme(t, s.alternative)), p,
                            many.method, many.algorithm, many.arrangements, **extra)
    normal_p = [r.normal_p for r in many.rows if r.normal_p is not None]
    normal = NormalTheory(many.normal_test.rsplit("; adjusted", 1)[0] + ": the smallest adjusted p",
                          math.nan, None, min(normal_p) if normal_p else math.nan)
    return Result(many.statement, "many-to-one", s.alternative, outcome, normal,
                  effect=f"any level against {design.labels[0]}", warnings=list(many.warnings))


def _robustness(design):
    from ..robustness.control import control_check

    return control_check(design)


_HELP = """compare weight by dose against "0"                  every other dose against "0"
compare weight by dose against "0" using ranks      rank sums, re-ranked for each pair
compare weight by dose against "0" adjust max-t single-step   (the default: step-down)
compare weight by dose against "0" alternative higher         one-sided: doses above control"""

FAMILIES = [
    Family("means", ("control",), "many-to-one Welch-type t, all units permuted together "
           "(Westfall-Young max-T)", "levels against a control, studentized per pair",
           plan, execute, "Dunnett's many-to-one t (pooled variance)",
           "difference in means per level, with simultaneous intervals",
           robustness=_robustness, default_in=("control",), help=_HELP,
           extra={"global_test": global_test, "ranked": False, "values_per_level": 2}),
    Family("ranks", ("control",), "many-to-one rank sums (re-ranked per pair), all units "
           "permuted together (Westfall-Young max-T)", "levels against a control, by ranks",
           plan, execute, "normal approximation to the pairwise-ranked sums",
           "Hodges-Lehmann shift per level, with simultaneous intervals",
           robustness=_robustness, help=_HELP, extra={"global_test": global_test,
                                                      "ranked": True}),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(("many-to-one",), "z: the pair's Mann-Whitney", sources=("steel-1959",)),
]
