"""Paired binary outcomes: McNemar's exact test and the discordant-pair odds ratio.

The table is [[both at level 1, first at level 1 / second at level 2], [first at level 2 /
second at level 1, both at level 2]]: rows are the first outcome, columns the second, the two
levels in the same order (the binder's order; the family names them). Only the discordant pairs
b = n12 and c = n21 carry information; given m = b + c, b is binomial(m, 1/2) under the null.

- "higher": the first is at level 1 more often than the second (b > c): p = P(B >= b).
- "lower": p = P(B <= b).
- "two-sided": twice the smaller tail, capped at 1 (common practice for this test).

The estimate is the discordant-pair odds ratio b / c; its exact interval maps the
Clopper-Pearson interval (lo, hi) of b / m through pi / (1 - pi).
"""
from __future__ import annotations

import numpy as np
from ...lazy import stats

from ...plan.cost import Candidate
from ...result import Estimate, EngineOutcome
from ..core.pvalues import clip
from ..core.progress import NO_PROGRESS, Progress
from .proportion import clopper_pearson

ALGORITHM = "binomial distribution of the discordant pairs"
STATISTIC_NAME = "discordant pairs first at level 1 / second at level 2 (b)"
TWO_SIDED_RULE = "two-sided p = twice the smaller one-sided tail, capped at 1"
ESTIMATE_NAME = "discordant-pair odds ratio b / c"
INTERVAL_WORDS = "exact: Clopper-Pearson interval of b / (b + c), mapped to b / c"


def discordant(table) -> tuple[int, int]:
    t = np.asarray(table)
    if t.shape != (2, 2) or np.any(t < 0) or np.any(t != np.round(t)):
        raise ValueError("paired binary outcomes need a 2 x 2 table of non-negative whole counts")
    return int(t[0, 1]), int(t[1, 0])


def candidates(table, statistic: str = "mcnemar") -> list[Candidate]:
    b, c = discordant(table)
    return [Candidate("binomial", ALGORITHM, True, 20.0 * (b + c + 1), 16.0 * (b + c + 1),
                      arrangements=float(b + c + 1), reference="outcomes")]


def run(table, statistic: str = "mcnemar", alternative: str = "two-sided",
        algorithm: str = "binomial", draws=None, seed=None,
        progress: Progress = NO_PROGRESS) -> EngineOutcome:
    """McNemar's exact test on the discordant pairs."""
    if statistic != "mcnemar":
        raise ValueError(f"paired binary outcomes are tested with mcnemar, not {statistic!r}")
    b, c = discordant(table)
    m = b + c
    ks = np.arange(m + 1)
    probs = stats.binom.pmf(ks, m, 0.5)
    upper, lower = stats.binom.sf(b - 1, m, 0.5), stats.binom.cdf(b, m, 0.5)
    if alternative == "higher":
        p = upper
    elif alternative == "lower":
        p = lower
    elif alternative == "two-sided":
        p = min(1.0, 2.0 * min(upper, lower))
    else:
        raise ValueError(f"unknown alternative {alternative!r}")
    warnings = ("no discordant pairs: the data say nothing about a difference",) if m == 0 else ()
    progress.step(1.0, "McNemar")
    return EngineOutcome(STATISTIC_NAME, float(b), clip(p), "exact", ALGORITHM,
                         arrangements=float(m + 1), null_support=ks.astype(float),
                         null_probs=probs, warnings=warnings)


def _odds(pi: float) -> float:
    return float("inf") if pi >= 1.0 else pi / (1.0 - pi)


def odds_ratio(table, level: float = 0.95, alternative: str = "two-sided") -> Estimate:
    """b / c with the exact interval from Clopper-Pearson on b / (b + c)."""
    b, c = discordant(table)
    if b + c == 0:
        return Estimate(ESTIMATE_NAME, float("nan"), (0.0, float("inf")), level,
                        INTERVAL_WORDS + "; no discordant pairs")
    lo, hi = clopper_pearson(b, b + c, level, alternative)
    value = float("inf") if c == 0 else b / c
    return Estimate(ESTIMATE_NAME, value, (_odds(lo), _odds(hi)), level, INTERVAL_WORDS)
