"""Incomplete blocks: three or more levels within blocks when some block lacks a level (a lost
plot, a dropout, a balanced incomplete design). Levels are permuted within each block among
the levels it holds (engine/incomplete): the permutation F within blocks (means), Skillings-
Mack (ranks) and Durbin (ranks, balanced incomplete blocks), exact by counting over each half
of the blocks, or Monte Carlo; normal theory beside them (normal/incomplete)."""
from __future__ import annotations

import numpy as np

from ..engine.core.pvalues import TWO_SIDED_QUADRATIC
from ..lazy import module
from ..plan.planner import make_plan
from ..result import Result
from .registry import Family, Kind, Reported, effect_pieces

incomplete = module("permq.engine.incomplete")
normal_incomplete = module("permq.normal.incomplete")
normal_k = module("permq.normal.ksample")

KIND = "incomplete-blocked"
KINDS = {KIND: Kind("compare", "incomplete blocks",
                    "add 'within BLOCK' where some block lacks one of three or more levels")}
TESTS = {"means": "within-block-f", "ranks": "skillings-mack", "durbin": "durbin"}


def _test(design) -> str:
    return TESTS[design.settings.family]


def _args(design):
    return design.values, design.groups, design.blocks


def plan(design):
    test = _test(design)
    return make_plan("incomplete-blocks", test, design.settings,
                     lambda draws: incomplete.candidates(test, *_args(design), draws,
                                                         n_groups=len(design.labels)))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s, test, k = design.settings, _test(design), len(design.labels)
    out = incomplete.run(test, *_args(design), the_plan.chosen.algorithm, the_plan.draws,
                         the_plan.seed, progress, n_groups=k)
    also = []
    if test == "within-block-f":
        normal = normal_incomplete.adjusted_f(*_args(design))
    elif test == "skillings-mack":
        normal = normal_incomplete.skillings_mack_chi_square(*_args(design), k)
    else:
        normal = normal_incomplete.durbin_chi_square(*_args(design), k)
        also.append(normal_incomplete.durbin_f(*_args(design), k))
    notes = []
    if s.alternative != "two-sided":
        notes.append(f"the {out.statistic_name} is already two-sided; alternative "
                     f"'{s.alternative}' was read as its upper tail")
    where = f"{len(design.block_labels)} incomplete blocks"
    return Result(statement, design.kind, s.alternative, out, normal, None,
                  effect=f"differences among {', '.join(design.labels)} within {where}",
                  groups=normal_k.group_summaries(design.values, design.groups, design.labels),
                  two_sided_rule=TWO_SIDED_QUADRATIC, warnings=list(design.warnings) + notes,
                  also_normal=also)


# ---------------------------------------------------------------- the robustness check
# The statistic S' M S of the treatment sums of within-block scores: form "quadform", M fixed
# by the design (no ties under the continuous laws of the panel).

def _block_sizes(problem) -> np.ndarray:
    _, inverse, counts = np.unique(problem.strata, return_inverse=True, return_counts=True)
    return counts[inverse].astype(float)


def centred_values(problem, Y):
    from ..robustness.counterparts import centred_within

    return centred_within(problem, Y)


def weighted_ranks(problem, Y):
    """Skillings-Mack scores: sqrt(12 / (k_i + 1)) (r_ij - (k_i + 1) / 2)."""
    from ..robustness.scoring import ranks_within

    k = _block_sizes(problem)
    return np.sqrt(12.0 / (k + 1)) * (ranks_within(problem, Y) - (k + 1) / 2)


def centred_ranks(problem, Y):
    from ..robustness.scoring import ranks_within

    k = _block_sizes(problem)
    return ranks_within(problem, Y) - (k + 1) / 2


def _matrix(test):
    def matrix(design):     # distinct values: the design's matrix without ties
        values = np.arange(len(design.values), dtype=float)
        return incomplete.prepare(test, values, design.groups, design.blocks,
                                  len(design.labels)).M
    return matrix


def _quadform(problem, A):
    from ..robustness.batch import observed_statistic

    return observed_statistic(problem, A)


def _f_parts(problem, A):
    multi = _block_sizes(problem) > 1
    blocks = len(np.unique(problem.strata[multi]))
    df1 = len(problem.sizes) - 1
    return df1, int(multi.sum()) - blocks - df1


def f_reported(problem, a, t):
    df1, df2 = _f_parts(problem, a[None, :])
    resid = np.maximum(float((a * a).sum()) - t, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (t / df1) / (resid / df2)


def adjusted_f_p(problem, Y, A):
    from scipy import stats

    df1, df2 = _f_parts(problem, A)
    ss = _quadform(problem, A)
    f = (ss / df1) / (np.maximum((A * A).sum(axis=1) - ss, 1e-300) / df2)
    return stats.f.sf(f, df1, df2)


def chi_square_p(problem, Y, A):
    from scipy import stats

    return stats.chi2.sf(_quadform(problem, A), len(problem.sizes) - 1)


def _check(scores, counterpart, normal_p, reported):
    def check(design):
        from ..robustness import reported as rep
        from ..robustness.spec import Check

        return Check("quadform", scores, counterpart, normal_p,
                     reported if callable(reported) else getattr(rep, reported),
                     test=_test(design), matrix=_matrix(_test(design)))
    return check


_HELP = ("  three or more levels within blocks, some block lacking a level (a lost plot):\n"
         "  compare yield by variety within block           the F within blocks (means)\n"
         "  compare yield by variety within block using ranks     Skillings-Mack\n"
         "  compare score by wine within taster using durbin      balanced incomplete blocks\n"
         "  levels are permuted within each block among the levels it holds")

FAMILIES = [
    Family("means", (KIND,), "permutation F within incomplete blocks (treatments adjusted for "
           "blocks)", "", plan, execute,
           "F for treatments adjusted for blocks, additive two-way model fitted to the cells "
           "there are (least squares)",
           robustness=_check(centred_values, "F for treatments adjusted for blocks (least "
                             "squares, cells there are)", adjusted_f_p, f_reported),
           default_in=(KIND,), help=_HELP,
           effect_sizes=effect_pieces("incomplete_partial_eta_squared")),
    Family("ranks", (KIND,), "Skillings-Mack test (mid-ranks within blocks)", "", plan,
           execute, "chi-square approximation to the Skillings-Mack statistic",
           robustness=_check(weighted_ranks, "chi-square approximation to the Skillings-Mack "
                             "statistic", chi_square_p, "as_is"), help=_HELP,
           effect_sizes=effect_pieces()),
    Family("durbin", (KIND,), "Durbin's test for balanced incomplete blocks (mid-ranks)",
           "Durbin's test (balanced incomplete blocks)", plan, execute,
           "chi-square approximation to Durbin's statistic (and its F form)",
           robustness=_check(centred_ranks, "chi-square approximation to Durbin's statistic",
                             chi_square_p, "as_is"), help=_HELP,
           effect_sizes=effect_pieces()),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(("blocked",), "Skillings-Mack", "Skillings-Mack test (mid-ranks within blocks)",
             ("skillings-mack-1981",)),
    Reported(("blocked",), "Durbin", "Durbin's test for incomplete blocks (mid-ranks)",
             ("durbin-1951",)),
]
# Standard citations, given from memory
BIBLIOGRAPHY = {
    "skillings-mack-1981": "Skillings, J. H. and Mack, G. A. (1981). On the use of a "
                           "Friedman-type statistic in balanced and unbalanced block designs. "
                           "Technometrics 23, 171-177.",
    "durbin-1951": "Durbin, J. (1951). Incomplete blocks in ranking experiments. British "
                   "Journal of Psychology (Statistical Section) 4, 85-90.",
}
