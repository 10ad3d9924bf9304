"""What the robustness check needs of a family: its `Check`, declared in the family's module
(`Family.robustness`, a function of the bound design that returns one).

The check simulates data sets y = pattern + errors on the design's layout (robustness/problem)
and runs both tests on each. A `Check` says, for the family:

- `form`: the permutation statistic's form on the layout: "linear" (T = sum w_pi(i) a_i,
  within blocks when there are blocks), "signs" (sign flips), "quadratic" (sum_g S_g^2 / n_g),
  "quadform" (S' M S of the group score sums S, M from `matrix`: incomplete blocks),
  "pairs" (Kendall's S against a fixed order), "residual" (the t of the slope on permuted
  residuals of the reduced model);
- `scores(problem, Y)`: each data set's scores (robustness/scoring);
- `counterpart` and `normal_p(problem, Y, A)`: the normal-theory test, its name and its p for
  each data set (robustness/counterparts);
- `reported(problem, a, t)`: the statistic as the result reports it (robustness/reported);
- `effect(design)`: the observed effect and its words (robustness/effects), or None for the
  layout's own;
- `weights(design)`: the fixed weights of a linear or pairs form, or None for the layout's own
  (the group indicator, the dose scores, x);
- `matrix(design)`: the matrix M of a "quadform" statistic;
- `centre`: for one sample, the parameter the errors are centred on ("mean", "median",
  "pseudo-median"), so that it is zero under the null;
- `reversed`: the family's `alternative higher` is the lower tail of its statistic (the
  Ansari-Bradley AB is small when the first group is the more spread out);
- `leaves_out`: laws of the panel the check leaves out, each with the reason (for a test of
  spread, unequal spread is its alternative, not a breach of its null);
- `width(problem, Y, level)`: the normal-theory interval's width for each data set (one of
  robustness/widths), where the scores are the values: the coverage table then gives the mean
  ratio of the exact interval's width to it; `exact_width(problem, A, reference, level)`, the
  exact interval's width for each data set, where the scores are not the values (else the
  generic inversion of robustness/widths);
- `order_widths(problem, Y, level)`: both intervals' widths for each data set where both
  are order statistics of the values (Hodges-Lehmann, the sign interval; robustness/widths);
- `interval(problem, Y, level)`: the normal-theory interval (low, high) of each data set
  where it is not the counterpart test inverted (Fisher's z interval for a correlation, whose
  coverage depends on the true correlation): its coverage is counted at the null data sets,
  where the truth is zero;
- `recompute(problem, A, rows)`: for the form "recomputed" (a statistic that is no sum of
  arranged scores: studentized, or the largest of several), the statistic of each data set
  (rows of A) under each arrangement (rows of group codes), shape (data sets, arrangements).

A family whose check needs a new piece writes it in its own module with the same signature.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Optional, Union


@dataclass(frozen=True)
class Check:
    form: str
    scores: Callable
    counterpart: Union[str, Callable]    # its name, or a function of the problem giving it
    normal_p: Callable
    reported: Callable
    effect: Optional[Callable] = None
    weights: Optional[Callable] = None
    centre: str = "mean"
    test: str = ""                       # the test's name in the problem (e.g. "friedman")
    reversed: bool = False               # 'higher' is the statistic's lower tail
    leaves_out: tuple = ()               # ((law key, reason), ...)
    inverts: bool = False                # the family's exact interval inverts this very test
                                         # (its coverage is read off the simulated tests)
    matrix: Optional[Callable] = None    # "quadform": design -> M (groups x groups)
    recompute: Optional[Callable] = None  # form "recomputed": (problem, A, rows) -> (D, R)
    width: Optional[Callable] = None     # the normal-theory interval's width per data set,
                                         # (problem, Y, level) -> widths (robustness/widths),
                                         # for scores that are the values: the width ratio
    exact_width: Optional[Callable] = None   # (problem, A, reference, level) -> the exact
                                         # interval's widths, where the generic inversion of
                                         # robustness/widths does not fit the scores
    order_widths: Optional[Callable] = None  # (problem, Y, level) -> (exact widths,
                                         # normal-theory widths): intervals at order
                                         # statistics of the values (robustness/widths)
    interval: Optional[Callable] = None  # (problem, Y, level) -> (low, high) per data set: the
                                         # normal-theory interval where it does not invert the
                                         # counterpart test (Fisher's z for a correlation);
                                         # its coverage is counted at the null's truth, zero

    def counterpart_name(self, problem) -> str:
        return self.counterpart(problem) if callable(self.counterpart) else self.counterpart


@dataclass(frozen=True)
class CountCheck:
    """The count check of a family whose data are counts (robustness/tables): the route its
    exact test takes on every simulated table ("rxc", "2x2", "paired", "proportion"; the
    schemes follow the design's form), and for r x c the tables engine's statistic."""

    route: str
    statistic: str = ""
    ordered: bool = False       # said in the design's words ("3 x 4 table, ordered")


@dataclass(frozen=True)
class CensoredCheck:
    """The check of censored times (robustness/censored): event-time laws and censoring
    schemes on the design's layout, both tests on each data set's own risk sets; `weight`
    is the family's (log-rank, gehan, tarone-ware, peto-prentice)."""

    weight: str


def check_for(design):
    """The family's check for this design (a Check, or a CountCheck for counts), or a
    PlanError saying why there is none."""
    from ..errors import PlanError
    from ..families.registry import family_for

    family = family_for(design)
    if family.robustness is None:
        raise PlanError(f"robustness is not available here: {family.no_robustness or 'no check'}")
    return family.robustness(design)
