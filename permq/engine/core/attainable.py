"""The smallest p-value a design can give, one-sided and two-sided.

An exact test can reject at level alpha only if some outcome has p <= alpha. With three
units a group, the two-sample reference set has 20 arrangements, so no outcome gives a
one-sided p below 1/20 = 0.05, nor a two-sided p below 2/20 = 0.1.

- From the engine's exact null law (support, probabilities): the one-sided smallest p in each
  direction is the probability of the extreme atom (with the `pvalues` tolerance); the
  two-sided one follows the result's own two-sided rule (`rule_of`): P(|T - E0 T| >= max) for
  linear statistics, the upper atom for statistics that are already two-sided, the sum of the
  least probable atoms for the probability ordering, twice the smaller tail for the doubling
  rule. Ties in the data are accounted for: they only raise the smallest p.
- From the size N of a uniform reference set alone (plans, and results whose engine keeps no
  law): at least 1 / N; with a symmetric layout (sign flips, two equal groups of a linear
  statistic) the two extremes mirror each other, so the two-sided p is at least 2 / N.
- Monte Carlo: p = (b + 1) / (m + 1) is at least 1 / (m + 1).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np

from .pvalues import PROBABILITY_RTOL, RTOL, clip



@dataclass(frozen=True)
class Attainable:
    higher: float            # smallest p of the one-sided test "higher"
    lower: float             # ... of "lower"
    two_sided: Optional[float]
    basis: str               # how it was had, in words
    lower_bound: bool = False    # a bound (ties in the data could only raise it)

    @property
    def one_sided(self) -> float:
        return min(self.higher, self.lower)

    def for_alternative(self, alternative: str) -> Optional[float]:
        if alternative == "higher":
            return self.higher
        if alternative == "lower":
            return self.lower
        return self.two_sided

    def to_dict(self, alternative: str, alpha: float) -> dict:
        this = self.for_alternative(alternative)
        return {"one_sided": self.one_sided, "two_sided": self.two_sided,
                "this_test": this, "level": alpha, "basis": self.basis,
                "lower_bound": self.lower_bound,
                "above_level": bool(this is not None and this > alpha * (1 + 1e-9))}


def rule_of(two_sided_rule: str) -> str:
    """The kind of a result's two-sided rule: linear, upper, probability, doubling, or ""."""
    text = two_sided_rule or ""
    if "|T - E0 T|" in text:
        return "linear"
    if "already two-sided" in text or "two-sided by nature" in text:
        return "upper"
    if "no more probable" in text:
        return "probability"
    if "twice the smaller" in text:
        return "doubling"
    return ""


def from_law(support, probs, rule: str) -> Attainable:
    s = np.asarray(support, dtype=float)
    w = np.asarray(probs, dtype=float)
    keep = w > 0
    s, w = s[keep], w[keep] / w[keep].sum()
    scale = float(np.max(np.abs(s), initial=1.0))
    tol = RTOL * max(scale, 1e-300)
    top, bottom = s.max(), s.min()
    higher = clip(w[s >= top - tol].sum())
    lower = clip(w[s <= bottom + tol].sum())
    two = None
    if rule == "linear":
        centre = float((s * w).sum())
        dev = np.abs(s - centre)
        two = clip(w[dev >= dev.max() - RTOL * max(dev.max(), 1e-300)].sum())
    elif rule == "upper":
        two = higher
    elif rule == "probability":
        two = clip(w[w <= w.min() * (1 + PROBABILITY_RTOL)].sum())
    elif rule == "doubling":
        two = clip(2 * min(higher, lower))
    return Attainable(higher, lower, two, "exact null distribution of these data")


def from_count(arrangements: float, symmetric: bool, rule: str) -> Attainable:
    """A uniform reference set of `arrangements`: at least 1 / N (2 / N two-sided when the
    layout mirrors its extremes)."""
    from fractions import Fraction

    def share(k):             # k / N, also for counts past the float range (exact integers)
        return float(Fraction(int(k), int(arrangements))) if isinstance(arrangements, int) \
            else k / float(arrangements)

    one = clip(share(1))
    two = None
    if rule in ("linear", "doubling"):
        two = clip(share(2 if symmetric else 1))
    elif rule == "upper":
        two = one
    mirrored = symmetric and rule in ("linear", "doubling")
    return Attainable(one, one, two, f"reference set of {_count(arrangements)} arrangements"
                      + ("; two-sided 2 / N, as the layout mirrors its extremes" if mirrored
                         else ""), lower_bound=True)


def from_draws(draws: int) -> Attainable:
    p = 1.0 / (draws + 1)
    return Attainable(p, p, p, f"Monte Carlo: 1 / ({draws:,} + 1)", lower_bound=True)


def warning(att: Attainable, alternative: str, alpha: float) -> str:
    """The sentence when no outcome can reach the level; "" otherwise."""
    this = att.for_alternative(alternative)
    if this is None or this <= alpha * (1 + 1e-9):
        return ""
    side = "two-sided" if alternative == "two-sided" else f"one-sided ({alternative})"
    at_least = "at least " if att.lower_bound else ""
    return (f"no outcome of this design can be significant at {alpha:g}: its smallest "
            f"{side} p-value is {at_least}{this:.3g}; more units are needed")


def _count(v) -> str:
    from ...plan.sizes import words

    if isinstance(v, int) and v >= 10 ** 15:
        return words(v)                    # past the float range too
    v = float(v)
    return f"{int(v):,}" if v < 1e15 else f"{v:.3g}"
