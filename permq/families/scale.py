"""Two groups, a difference in spread: the Ansari-Bradley test (Ansari & Bradley 1960, Annals of
Mathematical Statistics 31:1174).

The pooled values are ranked, and the value in position i of N gets the score min(i, N + 1 - i):
small at both ends, large in the middle. AB is the first group's score sum, so a first group
more spread out than the second has a small AB. Tied values share the mean of the scores of the
positions they occupy (mid-scores), and the exact law is conditional on the tie pattern, as for
every rank test here. The test assumes the two groups have the same centre (location): it
compares spread about a common centre.

Everything else is the two-sample engine's: exact counting of AB over all C(N, n1) splits (its
scores are integers, or halves where an even number of values tie), complete enumeration, Monte
Carlo; the normal-theory counterpart is the normal approximation to AB with its permutation
variance (which carries the tie correction).

`alternative higher` means the first group is more spread out than the second (its scale is
larger), that is, AB is small.
"""
from __future__ import annotations

import numpy as np

from ..engine import twosample
from ..engine.core.pvalues import TWO_SIDED_LINEAR
from ..plan.planner import make_plan
from ..result import Estimate, NormalTheory, Result
from .registry import Family, Reported, effect_pieces
from ..engine.core.scores import median


def ab_scores(pooled) -> np.ndarray:
    """Ansari-Bradley mid-scores of the pooled values (in their given order)."""
    a = np.asarray(pooled, dtype=float)
    N = len(a)
    order = np.argsort(a, kind="stable")
    position = np.arange(1, N + 1, dtype=float)
    raw = np.minimum(position, N + 1 - position)
    sorted_values = a[order]
    _, start, counts = np.unique(sorted_values, return_index=True, return_counts=True)
    sums = np.add.reduceat(raw, start)
    mid = np.repeat(sums / counts, counts)        # each tied run shares its mean score
    out = np.empty(N)
    out[order] = mid
    return out


RULE = twosample.ScoreRule("ansari-bradley", "Ansari-Bradley AB of the first group (mid-scores)",
                           ab_scores)

# AB is small when the first group is the more spread out: the engine's direction is reversed
_ENGINE_SIDE = {"higher": "lower", "lower": "higher", "two-sided": "two-sided"}


def plan(design):
    s = design.settings
    return make_plan("two-sample", "ansari-bradley", s,
                     lambda draws: twosample.candidates(RULE, design.x, design.y, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    outcome, _ = twosample.run(RULE, design.x, design.y, _ENGINE_SIDE[s.alternative],
                               the_plan.chosen.algorithm, s.level, draws=the_plan.draws,
                               seed=the_plan.seed, progress=progress)
    a, b = design.labels
    groups = [_summary(a, design.x), _summary(b, design.y)]
    warnings = list(design.warnings)
    centres = abs(median(design.x) - median(design.y))
    spread = max(_iqr(design.x), _iqr(design.y))
    if spread > 0 and centres > spread:
        warnings.append("the group medians differ by more than the larger interquartile range: "
                        "the Ansari-Bradley test compares spread about a common centre")
    return Result(statement, "two-sample", s.alternative, outcome,
                  normal_ab(design.x, design.y, s.alternative), _estimate(design),
                  effect=f"spread of {a} against {b} (higher: {a} more spread out)",
                  groups=groups, two_sided_rule=TWO_SIDED_LINEAR, warnings=warnings)


def normal_ab(x, y, alternative) -> NormalTheory:
    """z = (AB - E0 AB) / sd0 with the permutation variance of the mid-scores; `higher` (the
    first group more spread) is the lower tail of AB."""
    from ..normal.degenerate import ALL_TIED, undefined
    from ..normal.tails import p_from_z

    a = ab_scores(np.concatenate([x, y]))
    n1, N = len(x), len(a)
    var = n1 * (N - n1) / (N * (N - 1)) * float(((a - a.mean()) ** 2).sum())
    name = "normal approximation to the Ansari-Bradley statistic (tie-corrected)"
    if var <= 0:
        return undefined(name, ALL_TIED)
    z = (n1 * a.mean() - a[:n1].sum()) / np.sqrt(var)     # positive: first group more spread
    return NormalTheory(name, float(z), None, p_from_z(z, alternative))


def _iqr(v) -> float:
    q1, q3 = np.percentile(v, [25, 75])
    return float(q3 - q1)


def _estimate(design) -> Estimate:
    a, b = design.labels
    bottom = _iqr(design.y)
    ratio = _iqr(design.x) / bottom if bottom > 0 else float("nan")
    return Estimate(f"ratio of interquartile ranges {a} / {b}", ratio, None,
                    design.settings.level, "sample quartiles; no exact interval for this family")


def _summary(name, v):
    return {"name": name, "n": int(len(v)), "mean": float(np.mean(v)),
            "median": float(median(v)), "sd": float(np.std(v, ddof=1)) if len(v) > 1 else None}


# ---------------------------------------------------------------- the robustness check

def _scores_of_data_sets(problem, Y):
    return np.apply_along_axis(ab_scores, 1, Y)


def _no_location_effect(design):
    return 0.0, "location shift (none: a test of spread is checked under the null)"


def _check(design):
    from ..robustness import counterparts, reported
    from ..robustness.spec import Check

    return Check("linear", _scores_of_data_sets,
                 "normal approximation to the Ansari-Bradley statistic",
                 counterparts.score_sum_z, reported.as_is, effect=_no_location_effect,
                 reversed=True, leaves_out=(("unequal-spread", _SPREAD_IS_THE_EFFECT),))


_SPREAD_IS_THE_EFFECT = ("unequal spread is left out of the panel: for a test of spread it is "
                         "the effect the test looks for, not a breach of its null")


FAMILIES = [
    Family("ansari-bradley", ("two-sample",), "Ansari-Bradley test of equal spread (mid-scores)",
           "Ansari-Bradley test of spread", plan, execute,
           "normal approximation to the Ansari-Bradley statistic (tie-corrected)",
           "ratio of interquartile ranges (no exact interval)", robustness=_check,
           effect_sizes=effect_pieces(),
           help="  a difference in spread between two groups with the same centre:\n"
                "  compare mass by recipe levels \"A\", \"B\" using ansari-bradley\n"
                "  'alternative higher': the first group is the more spread out"),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(("two-sample",), "Ansari-Bradley", "Ansari-Bradley test of equal spread (mid-scores)",
             ("ansari-bradley-1960",)),
]
# Standard citations, given from memory
BIBLIOGRAPHY = {
    "ansari-bradley-1960": "Ansari, A. R. and Bradley, R. A. (1960). Rank-sum tests for "
                           "dispersions. Annals of Mathematical Statistics 31, 1174-1189.",
}
