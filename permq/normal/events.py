"""Textbook counterparts for censored times: the weighted log-rank chi-square with the
hypergeometric variance, the hazard ratio with its approximate interval, Kaplan-Meier medians.

    U = sum_j w_j (d_1j - d_j n_1j / n_j)
    V = sum_j w_j^2 d_j (n_1j / n_j) (1 - n_1j / n_j) (n_j - d_j) / (n_j - 1)

chi-square = U^2 / V on 1 degree of freedom (two-sided), z = U / sqrt(V) for one side
(Mantel 1966; Peto & Peto 1972; the weighted forms as in Tarone & Ware 1977).
"""
from __future__ import annotations

import math

import numpy as np

from ..result import Estimate, NormalTheory
from .tails import normal_isf, p_from_z

NAMES = {"log-rank": "log-rank chi-square (hypergeometric variance)",
         "gehan": "Gehan-Breslow weighted log-rank chi-square",
         "tarone-ware": "Tarone-Ware weighted log-rank chi-square",
         "peto-prentice": "Peto-Prentice weighted log-rank chi-square"}


def score_and_variance(kind: str, time1, event1, time2, event2):
    """(U, V) of the weighted log-rank test, first group against the second."""
    from ..engine.events import float_weights, risk_table

    t = np.concatenate([np.asarray(time1, float), np.asarray(time2, float)])
    d = np.concatenate([np.asarray(event1, int), np.asarray(event2, int)])
    first = np.arange(len(t)) < len(time1)
    t_events, dj, nj = risk_table(t, d)
    w = float_weights(kind, dj, nj)
    d1 = np.array([int(((t == s) & (d == 1) & first).sum()) for s in t_events])
    n1 = np.array([int(((t >= s) & first).sum()) for s in t_events])
    share = n1 / nj
    u = float((w * (d1 - dj * share)).sum())
    with np.errstate(divide="ignore", invalid="ignore"):
        spread = np.where(nj > 1, (nj - dj) / np.maximum(nj - 1, 1), 0.0)
    v = float((w ** 2 * dj * share * (1 - share) * spread).sum())
    return u, v


def chi_square(kind: str, time1, event1, time2, event2, alternative: str, level: float = 0.95,
               labels=None) -> NormalTheory:
    """The weighted log-rank chi-square (two-sided) or z (one side); with `labels`, the
    hazard ratio's normal-theory interval beside it (`hazard_ratio`)."""
    from .degenerate import undefined

    name = NAMES[kind]
    u, v = score_and_variance(kind, time1, event1, time2, event2)
    if not v > 0:
        return undefined(name, "no event time where both groups are at risk")
    z = u / math.sqrt(v)
    interval, how = None, ""
    if labels is not None:
        interval, how = hazard_interval(time1, event1, time2, event2, level, alternative)
    if alternative == "two-sided":
        return NormalTheory(name, z * z, 1.0, p_from_z(z, "two-sided"), interval, how)
    return NormalTheory(name + ", one side as z", z, None, p_from_z(z, alternative), interval,
                        how)


def hazard_ratio(time1, event1, time2, event2, level: float, labels) -> Estimate:
    """Peto's one-step estimate exp(U / V) of the hazard ratio first / second (U, V of the
    log-rank test); its interval is normal theory (`hazard_interval`), none is exact."""
    a, b = labels
    u, v = score_and_variance("log-rank", time1, event1, time2, event2)
    return one_step_estimate(u, v, level,
                             f"hazard ratio {a} / {b} (log-rank one-step, exp(U / V))")


def one_step_estimate(u: float, v: float, level: float, name: str) -> Estimate:
    """exp(U / V) of the log-rank U and V (NaN where V is zero), with no exact interval."""
    value = math.exp(u / v) if v > 0 else float("nan")
    return Estimate(name, value, None, level,
                    "no exact interval: the permutation law tests equal hazards only")


def hazard_interval(time1, event1, time2, event2, level: float, alternative: str):
    """exp(U / V +- z / sqrt(V)) (common practice), one-sided where the test is."""
    u, v = score_and_variance("log-rank", time1, event1, time2, event2)
    return one_step_interval(u, v, level, alternative, "log-rank U and V")


def one_step_interval(u: float, v: float, level: float, alternative: str, of: str):
    """exp(U / V +- z / sqrt(V)) from the log-rank U and V, one-sided where the test is;
    (None, "") when V is zero."""
    if not v > 0:
        return None, ""
    log_hr, se = u / v, 1 / math.sqrt(v)
    if alternative == "two-sided":
        q = normal_isf((1 - level) / 2)
        iv = (math.exp(log_hr - q * se), math.exp(log_hr + q * se))
    else:
        q = normal_isf(1 - level)
        iv = ((math.exp(log_hr - q * se), math.inf) if alternative == "higher"
              else (0.0, math.exp(log_hr + q * se)))
    return iv, f"exp(U / V +- z / sqrt(V)), {of}"


def kaplan_meier(time, event):
    """The Kaplan-Meier curve: (event times, survival just after each)."""
    from ..engine.events import risk_table

    t_events, d, n = risk_table(time, event)
    return t_events, np.cumprod(1 - d / n)


def km_median(time, event):
    """The smallest time where the Kaplan-Meier curve falls to 0.5 or below; where it sits at
    exactly 0.5 over an interval, the middle of that interval (common practice); None when the
    curve never reaches 0.5."""
    t_events, s = kaplan_meier(time, event)
    below = np.flatnonzero(s <= 0.5 + 1e-12)
    if len(below) == 0:
        return None
    i = int(below[0])
    if abs(s[i] - 0.5) < 1e-12 and i + 1 < len(t_events):
        return float((t_events[i] + t_events[i + 1]) / 2)
    return float(t_events[i])
