"""The interval-end rule, written once for every interval that inverts a test.

- A value is left out of the interval when the test of that value rejects on its side: its
  one-sided p-value is at or below alpha_side, where alpha_side = (1 - level) / 2 for a
  two-sided interval and 1 - level for a one-sided one. A value whose p-value equals
  alpha_side exactly is left out (the test at level alpha_side rejects it).
- alpha_side is taken from the level as the decimal written: 90% gives alpha_side = 1/20
  exactly, not the floating-point 0.0499999...; a p-value that is a count of arrangements is
  compared with it exactly, in integers (count > alpha_side * total).
- At a jump of the step-function p-value, an arrangement whose statistic ties with the
  observed one counts as at least as extreme (the p-value rule, with its tie tolerance), so
  the value at the jump takes the larger p-value: finite ends are closed, and they are the
  jumps themselves.
- Order-statistic intervals (Hodges-Lehmann, the sign test's median) follow the same rule:
  C is the largest count whose null probability P(U <= C) is at or below alpha_side, and the
  interval runs from the (C + 1)-th smallest to the (C + 1)-th largest value.
"""
from __future__ import annotations

from fractions import Fraction
from math import floor

import numpy as np

from .limits import EXACT_COUNT_LIMIT


def alpha_side(level: float, alternative: str) -> Fraction:
    """alpha / 2 (two-sided) or alpha (one-sided), from the level as the decimal written."""
    alpha = 1 - Fraction(repr(float(level)))
    return alpha / 2 if alternative == "two-sided" else alpha


def rejected_up_to(side: Fraction, total) -> int:
    """The largest count c with c / total <= side (counts at most this are rejected)."""
    total = int(round(float(total))) if not isinstance(total, int) else total
    return floor(side * total)


def first_kept(cumulative, total, side: Fraction) -> int:
    """Index of the first entry of a non-decreasing count array with count / total > side
    (len(cumulative) when there is none). Exact while the counts are integers below 2^53
    (counts rescaled by a power of two, past 2^960, are compared in floating point)."""
    cum = np.asarray(cumulative, dtype=float)
    if float(total) < EXACT_COUNT_LIMIT and float(total).is_integer() and \
            bool(np.all(cum == np.floor(cum))):
        return int(np.searchsorted(cum, rejected_up_to(side, total) + 1, side="left"))
    return int(np.searchsorted(cum, float(side) * float(total), side="right"))


def last_rejected(cumulative, total, side: Fraction) -> int:
    """Index of the last entry of a non-decreasing count array with count / total <= side
    (-1 when there is none): the C of an order-statistic interval."""
    return first_kept(cumulative, total, side) - 1
