"""Conditional inference in a one-parameter exponential family on a discrete support.

Every exact conditional method of this package ends in the same place: a sufficient statistic
T whose null law, given the other sufficient statistics, is P0(T = t) proportional to c(t) on
a finite support, and whose law under the parameter b is P_b(T = t) proportional to
c(t) e^{b t} (b is the log odds ratio of stratified 2 x 2 tables, the logistic slope of a
binary response, ...). `Law` holds the support and log c(t); from it:

- `tail`: the exact p-value at b = 0 (one-sided tails, or two-sided by the probability rule,
  sum of P0(t) over values no more probable than the observed, relative tolerance 1e-7, or by
  the linear rule P0(|T - E0 T| >= |t - E0 T|), relative tolerance 1e-9);
- `cmle`: the conditional maximum-likelihood estimate, where E_b T = t (Birch 1964); none
  when t is an end of the support;
- `median_unbiased`: where P_b(T >= t) = 1/2 and P_b(T <= t) = 1/2, averaged; at an end of
  the support only the one that exists (Hirji, Tsiatis & Mehta 1989), which is finite under
  complete separation;
- `interval`: the exact interval, inverting the two one-sided tests, alpha / 2 each (one
  bound at alpha for a one-sided alternative): the lower bound solves P_b(T >= t) = alpha/2,
  the upper P_b(T <= t) = alpha/2 (Cox 1970; Mehta, Patel & Gray 1985).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..core.pvalues import PROBABILITY_RTOL, RTOL as LINEAR_RTOL
RULE_PROBABILITY = ("p = sum of the probabilities of values of the statistic no more probable "
                    "than the observed one (relative tolerance 1e-7)")
RULE_LINEAR = "two-sided p = P(|T - E0 T| >= |t - E0 T|) under the null"


@dataclass(frozen=True)
class Law:
    """The null law of T: support values (increasing) and log c(t), with the observed t."""

    support: np.ndarray
    log_counts: np.ndarray
    observed: float

    def __post_init__(self):
        s = np.asarray(self.support, dtype=float)
        if s.ndim != 1 or s.size == 0 or np.any(np.diff(s) <= 0):
            raise ValueError("a conditional law needs an increasing support")
        if len(self.log_counts) != s.size:
            raise ValueError("one log count is needed for each support value")

    @property
    def scale(self) -> float:
        s = self.support
        return float(max(abs(s[0]), abs(s[-1]), s[-1] - s[0], 1.0))

    def at_low_end(self) -> bool:
        return self.observed <= self.support[0] + LINEAR_RTOL * self.scale

    def at_high_end(self) -> bool:
        return self.observed >= self.support[-1] - LINEAR_RTOL * self.scale

    def probabilities(self, b: float = 0.0) -> np.ndarray:
        w = np.asarray(self.log_counts, dtype=float) + b * (self.support - self.observed)
        w = w - w.max()
        p = np.exp(w)
        return p / p.sum()

    def upper(self, b: float = 0.0) -> float:
        """P_b(T >= t)."""
        return float(self.probabilities(b)[self.support >= self.observed - self._tol()].sum())

    def lower(self, b: float = 0.0) -> float:
        """P_b(T <= t)."""
        return float(self.probabilities(b)[self.support <= self.observed + self._tol()].sum())

    def mean(self, b: float = 0.0) -> float:
        return float(np.dot(self.support, self.probabilities(b)))

    def _tol(self) -> float:
        return LINEAR_RTOL * self.scale


def tail(law: Law, alternative: str, rule: str = "probability") -> float:
    """The exact p-value at b = 0."""
    if alternative == "higher":
        return _clip(law.upper())
    if alternative == "lower":
        return _clip(law.lower())
    if alternative != "two-sided":
        raise ValueError(f"unknown alternative {alternative!r}")
    p = law.probabilities()
    if rule == "probability":
        observed = p[int(np.argmin(np.abs(law.support - law.observed)))]
        return _clip(p[p <= observed * (1.0 + PROBABILITY_RTOL)].sum())
    if rule == "linear":
        centre = float(np.dot(law.support, p))
        dev = np.abs(law.support - centre)
        return _clip(p[dev >= abs(law.observed - centre) - law._tol()].sum())
    raise ValueError(f"unknown two-sided rule {rule!r}")


def _solve(f, target: float, start: float = 0.0) -> float:
    """b where the increasing function f(b) equals target (bracket grown from start)."""
    from scipy.optimize import brentq

    lo, hi, step = start - 1.0, start + 1.0, 1.0
    for _ in range(200):
        if f(lo) <= target:
            break
        step *= 2.0
        lo = start - step
    else:
        return -math.inf
    step = 1.0
    for _ in range(200):
        if f(hi) >= target:
            break
        step *= 2.0
        hi = start + step
    else:
        return math.inf
    return float(brentq(lambda z: f(z) - target, lo, hi, xtol=1e-12, rtol=1e-13, maxiter=500))


def _unit(law: Law) -> float:
    """A scale for b: 1 / the spread of T, so that brackets start near the answer."""
    return 1.0 / max(law.support[-1] - law.support[0], 1e-300)


def cmle(law: Law) -> float:
    """The conditional MLE of b; -inf / +inf when t is the lowest / highest support value."""
    if law.support.size == 1:
        return math.nan
    if law.at_low_end():
        return -math.inf
    if law.at_high_end():
        return math.inf
    u = _unit(law)
    return _solve(lambda z: law.mean(z * u), law.observed) * u


def median_unbiased(law: Law) -> float:
    """The median unbiased estimate: finite at the ends of the support too."""
    if law.support.size == 1:
        return math.nan
    u = _unit(law)
    up = None if law.at_low_end() else _solve(lambda z: law.upper(z * u), 0.5) * u
    down = None if law.at_high_end() else _solve(lambda z: -law.lower(z * u), -0.5) * u
    if up is None:
        return down
    if down is None:
        return up
    return 0.5 * (up + down)


def interval(law: Law, level: float, alternative: str = "two-sided") -> tuple:
    """The exact interval for b (alpha / 2 in each tail when two-sided)."""
    if law.support.size == 1:
        return (-math.inf, math.inf)
    alpha = (1.0 - level) / (2.0 if alternative == "two-sided" else 1.0)
    u = _unit(law)
    lo, hi = -math.inf, math.inf
    if alternative in ("two-sided", "higher") and not law.at_low_end():
        lo = _solve(lambda z: law.upper(z * u), alpha) * u
    if alternative in ("two-sided", "lower") and not law.at_high_end():
        hi = _solve(lambda z: -law.lower(z * u), -alpha) * u
    return (lo, hi)


def _clip(p: float) -> float:
    return float(min(1.0, max(0.0, p)))
