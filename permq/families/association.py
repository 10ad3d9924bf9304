"""Association and slopes: permutation tests of correlation and regression slopes."""
from __future__ import annotations

from ..engine import association
from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..normal.association import normal_theory
from ..plan.planner import make_plan
from ..result import Estimate, Result

WORDS = {"pearson": "Pearson correlation", "spearman": "Spearman correlation (mid-ranks)",
         "kendall": "Kendall's tau", "slope": "slope"}


def plan(design):
    s = design.settings
    return make_plan("association", s.family, s,
                     lambda draws: association.candidates(s.family, design.y, design.x, draws,
                                                          covariates=design.covariates))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    y_name, x_name = design.names
    out, est = association.run_with_estimate(
        s.family, design.y, design.x, s.alternative, the_plan.chosen.algorithm, s.level,
        the_plan.draws, the_plan.seed, progress, design.covariates)
    normals = normal_theory(s.family, design.y, design.x, s.alternative, s.level,
                            design.covariates)
    adjusted = f", adjusted for {', '.join(design.covariate_names)}" if design.covariate_names else ""
    effect = f"{WORDS[s.family]} of {y_name} with {x_name}{adjusted}"
    if s.family == "slope":
        effect = f"slope of {y_name} on {x_name}{adjusted}"
    if est is not None:
        est = Estimate(effect, est.value, est.interval, est.level, est.method)
    groups = [{"name": y_name, "n": int(len(design.y)), "mean": float(design.y.mean()),
               "median": float(_median(design.y)), "sd": float(design.y.std(ddof=1))},
              {"name": x_name, "n": int(len(design.x)), "mean": float(design.x.mean()),
               "median": float(_median(design.x)), "sd": float(design.x.std(ddof=1))}]
    return Result(statement, "association", s.alternative, out, normals[0], est, effect=effect,
                  groups=groups, two_sided_rule=TWO_SIDED_LINEAR, warnings=list(design.warnings),
                  also_normal=list(normals[1:]))


def _median(v):
    import numpy as np

    return np.median(v)
