"""Every dose against the control, all units permuted together (many-to-one comparisons).

The reference set is every assignment of the N units to groups of the observed sizes
(N! / (n_0! ... n_{k-1}!) of them, listed when cheap) or the observed assignment and `draws`
seeded joint draws (`engine/many/arrangements`: the streams of the several-test engine). Each
row gives every dose's statistic (`statistics`), so the adjusted p-values keep the tests'
correlation. Two-sided tests compare |t|, `higher` compares t, `lower` compares -t.

Adjustments (`engine/many/multiplicity`, whole null matrix): Westfall-Young max-T single-step
and step-down (the default), min-P, Holm, Bonferroni, Benjamini-Hochberg, none. Step-down
from the joint permutation of all units rests on subset pivotality (Westfall and Young 1993,
section 2.5): a dose's null distribution does not depend on whether the other doses have an
effect; the single-step test needs no such condition for the complete null.

The simultaneous intervals come from the single-step critical value c: the (K + 1)-th
largest of the R arrangements' max_j T_j, K = floor(alpha R). A dose's single-step adjusted p
is at most alpha exactly when its oriented t exceeds c, so "0 lies outside estimate +- c x
se" agrees with the single-step test (and step-down rejects at least as much).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ...plan.cost import Candidate
from ..core.counting import multinomial
from ..core.progress import NO_PROGRESS, Progress
from ..many import arrangements, multiplicity
from . import statistics

ENUMERATION_MAX = 2_000_000    # arrangements listed at most
WINDOW_ROWS = 1 << 16          # Monte Carlo rows drawn at a time
BIG = 1e300                    # +-inf (a pair without spread) stands as this in comparisons

EXACT_WORDS = "complete enumeration of the joint arrangements"
SAMPLED_WORDS = "Monte Carlo joint draws (one arrangement of all units for every dose)"


@dataclass(frozen=True)
class ControlOutcome:
    t_obs: np.ndarray            # each dose's statistic (its own sign)
    p_raw: np.ndarray
    p_adjusted: np.ndarray
    p_single_step: np.ndarray    # max-T single-step, whatever the adjustment chosen
    critical: float              # single-step critical value on the oriented scale
    method: str                  # "exact" or "monte-carlo"
    algorithm: str
    arrangements: float          # size of the whole reference set
    draws: Optional[int] = None
    seed: Optional[int] = None


def count(sizes) -> int:
    return multinomial(sizes)


def candidates(sizes, draws: int, ranked: bool) -> list:
    sizes = [int(s) for s in sizes]
    N, k = sum(sizes), len(sizes)
    total = float(count(sizes))
    per_row = N * k * (4.0 if ranked else 6.0) + 12.0 * (k - 1)

    def memory(rows, listed):
        held = rows if listed else min(rows, WINDOW_ROWS)
        return held * (N * (25.0 if listed else 1.0) + N * k * 8.0) + rows * (k - 1) * 24.0

    listing = 2.0 * N if k > 2 else 1.0 * N
    feasible = total <= ENUMERATION_MAX
    return [Candidate("enumeration", EXACT_WORDS, True, total * (per_row + listing),
                      memory(total, True), feasible=feasible, arrangements=total,
                      note=f"{total:.3g} arrangements" + ("" if feasible else
                                                         " (more than can be listed)")),
            Candidate("monte-carlo", SAMPLED_WORDS, False, (draws + 1) * 1.5 * (per_row + 3.0 * N),
                      memory(draws + 1, False), arrangements=total, note=f"{draws} draws")]


def oriented(t, alternative: str) -> np.ndarray:
    if alternative == "two-sided":
        out = np.abs(t)
    elif alternative == "lower":
        out = -np.asarray(t, dtype=float)
    else:
        out = np.asarray(t, dtype=float)
    return np.clip(np.nan_to_num(out, nan=0.0, posinf=BIG, neginf=-BIG), -BIG, BIG)


def null_matrix(values, codes, ranked, algorithm, draws, seed, progress=NO_PROGRESS):
    """(statistics of the observed arrangement (m,), of every reference row (R, m), method)."""
    codes = np.asarray(codes, dtype=np.int8)
    sizes = np.bincount(codes, minlength=int(codes.max()) + 1)
    lay = statistics.layout(values, codes, ranked)
    observed = statistics.statistics(codes[None, :], lay)[0, 0]
    if algorithm == "enumeration":
        rows = arrangements.enumerate_codes(sizes, progress)
        null = statistics.statistics(rows, lay)[0]
        progress.step(1.0, "permuting")
        return observed, null, "exact"
    parts, done = [], 0
    for window in arrangements.sampled_windows(codes, seed, draws, WINDOW_ROWS, progress):
        parts.append(statistics.statistics(window, lay)[0])
        done += len(window)
    return observed, np.concatenate(parts), "monte-carlo"


def critical_value(null_oriented, level: float) -> float:
    """The single-step max-T critical value: t > c exactly when the adjusted p <= 1 - level."""
    top = np.sort(null_oriented.max(axis=1))[::-1]
    K = int(math.floor((1.0 - level) * len(top) + 1e-9))
    return float(top[K]) if K < len(top) else -math.inf


def run(values, codes, ranked: bool, alternative: str, adjustment: str, step: str,
        algorithm: str, draws: int, seed: int, level: float,
        progress: Progress = NO_PROGRESS) -> ControlOutcome:
    sizes = np.bincount(np.asarray(codes), minlength=int(np.max(codes)) + 1)
    t, null, how = null_matrix(values, codes, ranked, algorithm, draws, seed, progress)
    t_or, null_or = oriented(t, alternative), oriented(null, alternative)
    raw, adjusted = multiplicity.from_matrix(null_or, t_or, adjustment, step or "step-down")
    single = multiplicity.max_t_matrix(null_or, t_or, multiplicity.tolerances(t_or),
                                       "single-step")
    c = critical_value(null_or, level)
    sampled = how == "monte-carlo"
    return ControlOutcome(t, raw, adjusted, single, c, how,
                          SAMPLED_WORDS if sampled else EXACT_WORDS, float(count(sizes)),
                          draws if sampled else None, seed if sampled else None)
