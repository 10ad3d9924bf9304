"""Coverage of the exact interval and of the normal-theory interval, per law, from the null runs.

The intervals that go with these tests are the sets of effects the test does not reject
(alpha/2 in each tail; alpha in the one tail of a one-sided interval): the exact interval
inverts the permutation test under the shift model (difference in means, Hodges-Lehmann with
the rank-sum test, the sign interval, the slope), the normal-theory interval the counterpart
(Welch t, t, the slope's t). So the interval of a data set y = effect + errors misses the true
effect exactly when the test of the true effect rejects, which is the test applied to the
errors alone, the null data sets the check simulates anyway:

- it lies wholly above the truth when the one-sided test "higher" of the errors has
  p <= alpha/2, wholly below when "lower" has;
- coverage = 1 - the two miss rates, each with its binomial Monte Carlo error.

A normal-theory interval that does not invert the counterpart test (`Check.interval`:
Fisher's z interval for a correlation) is computed on each null data set and counted as
missing when it lies wholly above or below the null's truth, zero; its coverage depends on
the true correlation, so it is the coverage at no association. A design whose analysis has no
exact interval (Pearson's r) shows the normal-theory interval alone.

(Ties at an end of an interval count as covered by the engines and as rejected here: with
continuous errors they have probability zero.) The level is the statement's `confidence`.
Widths: `widths.py` (the mean ratio of the exact to the normal-theory width, where the
family declares its counterpart's width).
"""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from .batch import normal_p, permutation_p

Z = 3.0


def applies(problem, observed) -> str:
    """"" when the design's intervals are the inverted tests (or the family declares its
    normal-theory interval), else why no coverage is shown."""
    if problem.check is not None and problem.check.interval is not None:
        return ""
    return exact_applies(problem, observed)


def exact_applies(problem, observed) -> str:
    """"" when the analysis's exact interval inverts the simulated test, else why not."""
    est = getattr(observed, "estimate", None)
    if est is None or est.interval is None:
        return "the analysis gives no exact interval"
    if problem.kind in ("two-sample", "paired", "one-sample") and problem.form in ("linear",
                                                                                   "signs"):
        return ""
    if problem.check is not None and problem.check.inverts:   # declared by the family
        return ""
    return "its interval is not the inverted test simulated here"


def tails(alternative: str, level: float):
    """(alpha of the 'higher' tail, alpha of the 'lower' tail) for an interval at `level`."""
    a = 1.0 - level
    if alternative == "higher":            # [lo, +inf): misses only when it lies above
        return a, None
    if alternative == "lower":
        return None, a
    return a / 2, a / 2


def misses(problem, E, A, reference, level: float, exact: bool = True) -> list:
    """Counts on the null data sets E (scores A): [exact above, exact below, normal above,
    normal below] (above: the interval lies wholly above the true effect); the exact ones
    zero without an exact interval (`exact`)."""
    up, down = tails(problem.alternative, level)
    out = []
    interval = problem.check.interval if problem.check is not None else None
    for kind in ("permutation", "normal"):
        if kind == "permutation" and not exact:
            out += [0, 0]
            continue
        if kind == "normal" and interval is not None:
            low, high = interval(problem, E, level)
            out += [int(np.count_nonzero(low > 0)), int(np.count_nonzero(high < 0))]
            continue
        for side, a in (("higher", up), ("lower", down)):
            if a is None:
                out.append(0)
                continue
            pb = dataclasses.replace(problem, alternative=side)
            p = (permutation_p(pb, A, reference) if kind == "permutation"
                 else normal_p(pb, E, A))
            out.append(int(np.count_nonzero(p <= a + 1e-12)))
    return out


@dataclass(frozen=True)
class CoverageRow:
    law: str
    name: str
    exact: Optional[float]                   # None: the analysis gives no exact interval
    exact_se: Optional[float]
    exact_above: Optional[float]
    exact_below: Optional[float]
    normal: float
    normal_se: float
    normal_above: float
    normal_below: float
    exact_verdict: str
    normal_verdict: str
    width_ratio: Optional[float] = None      # mean of exact / normal-theory width
    width_ratio_se: Optional[float] = None
    unbounded: float = 0.0                   # share of data sets whose exact interval is unbounded
    width_datasets: int = 0                  # data sets a law the widths were found on

    def to_dict(self) -> dict:
        return {"law": self.law, "name": self.name,
                "exact": None if self.exact is None else {
                    "coverage": self.exact, "se": self.exact_se,
                    "misses_above": self.exact_above, "misses_below": self.exact_below,
                    "verdict": self.exact_verdict},
                "normal_theory": {"coverage": self.normal, "se": self.normal_se,
                                  "misses_above": self.normal_above,
                                  "misses_below": self.normal_below,
                                  "verdict": self.normal_verdict},
                "width_ratio": None if self.width_ratio is None else {
                    "mean": self.width_ratio, "se": self.width_ratio_se,
                    "unbounded": self.unbounded, "datasets": self.width_datasets}}


def verdict(cov: float, level: float, datasets: int, not_exact: str = "") -> str:
    se = max(math.sqrt(cov * (1 - cov) / datasets), math.sqrt(level * (1 - level) / datasets))
    if cov < level - Z * se:
        words = "undercovers"
    elif cov > level + Z * se:
        words = "overcovers (conservative)"
    else:
        words = "keeps its level"
    return f"not exact here, {words}" if not_exact else words


NO_EXACT = "no exact interval"


def rows(rates, level: float, datasets: int, exact: bool = True) -> list:
    """CoverageRow per law from simulate.LawRates (their `misses`); `exact`: the analysis has
    an exact interval (else its columns are None)."""
    out = []
    for r in rates:
        if r.misses is None:
            continue
        ea, eb, na, nb = (m.value for m in r.misses)
        ec, nc = 1 - ea - eb, 1 - na - nb
        ratio, ratio_se, unbounded, seen = None, None, 0.0, 0
        if r.widths is not None:
            ratio, ratio_se, finite, infinite = r.widths
            seen = finite + infinite
            unbounded = infinite / max(seen, 1)
        exact_part = (ec, _se(ec, datasets), ea, eb) if exact else (None,) * 4
        out.append(CoverageRow(r.law.key, r.law.name, *exact_part,
                               nc, _se(nc, datasets), na, nb,
                               verdict(ec, level, datasets, r.not_exact or "") if exact
                               else NO_EXACT,
                               verdict(nc, level, datasets), ratio, ratio_se, unbounded, seen))
    return out


def _se(p: float, m: int) -> float:
    return math.sqrt(max(p * (1 - p), 0.0) / m)


def summary(table: list, level: float, at_null: bool = False) -> list:
    """One sentence on the intervals' coverage across the laws; `at_null`: the normal-theory
    interval is counted at the null's truth only (`Check.interval`)."""
    if not table:
        return []
    pct = f"{level:.0%}"
    low = [r.name for r in table if r.normal_verdict == "undercovers"]
    exact_low = [r.name for r in table if r.exact_verdict.endswith("undercovers")]
    where = " at no association" if at_null else ""
    normal = (f"the normal-theory interval{where} "
              + (f"undercovers under {', '.join(low)}" if low
                 else "keeps its level under every law"))
    if all(r.exact is None for r in table):
        exact = "the analysis gives no exact interval"
    else:
        exact = "the exact interval " + (f"undercovers under {', '.join(exact_low)}" if exact_low
                                         else "keeps its level under every law")
    parts = [f"Intervals at {pct}: {normal}; {exact}."]
    if at_null:
        parts.append("The normal-theory interval's coverage depends on the true value; it is "
                     "checked on the null data sets, where the truth is zero.")
    ratios = [r for r in table if r.width_ratio is not None]
    if ratios:
        lo = min(ratios, key=lambda r: r.width_ratio)
        hi = max(ratios, key=lambda r: r.width_ratio)
        first = ratios[0]
        parts.append(f"The exact interval is on average {first.width_ratio:.3f} times as wide "
                     f"as the normal-theory one under {first.name} errors (from "
                     f"{lo.width_ratio:.3f} under {lo.name} to {hi.width_ratio:.3f} under "
                     f"{hi.name}).")
        if any(r.unbounded > 0 for r in ratios):
            parts.append("Some data sets' exact intervals are unbounded (no arrangement can "
                         "reject there); they are left out of the width ratio.")
    return parts
