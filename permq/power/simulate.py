"""Power of the analysis's test and of its normal-theory counterpart at n, and the search for n.

At each n the design is rebuilt (`layout.resized`), its data sets are
y = pattern + errors with the errors of `layout.Errors` (the same data sets, grown, at
every n), and both tests run on all of them at once with the robustness check's vectorised
pieces (`robustness.batch`): the permutation test against every arrangement when there are
at most `arrangements.EXACT_LIMIT` of them (exact, as the analysis itself), else against
PERMUTATIONS random arrangements drawn afresh for each block of data sets.

Power is the share of data sets with p <= alpha; its standard error is binomial (the larger
of that and the spread of the block rates when blocks share random arrangements).

The search for the smallest n reaching a target doubles n from the start until both tests
reach it (or MAX_UNITS a group), then bisects each test's bracket; every n simulated is kept.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Optional

import numpy as np

from ..engine.core import attainable as at
from ..engine.core.progress import NO_PROGRESS
from ..robustness.arrangements import exact_reference, reference_size, sampled_reference
from ..robustness.batch import normal_p, permutation_p, scores
from ..robustness.simulate import PERMUTATIONS as ROBUSTNESS_PERMUTATIONS, Rate, rates_from_counts
from .layout import MAX_UNITS

PERMUTATIONS = ROBUSTNESS_PERMUTATIONS      # random arrangements a block, past 20,000
BLOCK = 100


@dataclass(frozen=True)
class AtN:
    sizes: tuple
    permutation: Rate
    normal: Rate
    exact: bool                   # every arrangement listed
    arrangements: int             # listed, or drawn a block
    smallest_p: Optional[float]   # of the permutation test's side: at least 1 (or 2) / N
    seconds: float = field(default=0.0, compare=False)
    formula: Optional[float] = None   # a closed-form approximation's power, where one is given


def power_at(problem, pattern_of: Callable, errors, alpha: float, seed: int,
             progress=NO_PROGRESS, done: float = 0.0, share: float = 1.0) -> AtN:
    """Both tests' power on the design `problem` (pattern_of(problem) -> pattern per unit)."""
    import time

    started = time.perf_counter()
    E = errors.matrix(problem.codes)
    pattern = pattern_of(problem)
    exact = exact_reference(problem)
    rng = np.random.default_rng([seed, problem.n, 7])
    m = E.shape[0]
    rows = []
    for start in range(0, m, BLOCK):
        progress.step(done + share * start / m, f"power: simulating {_sizes(problem)}")
        y = E[start:start + BLOCK] + pattern
        ref = exact if exact is not None else sampled_reference(problem, rng, PERMUTATIONS)
        a = scores(problem, y)
        rows.append([int(np.count_nonzero(permutation_p(problem, a, ref) <= alpha + 1e-12)),
                     int(np.count_nonzero(normal_p(problem, y, a) <= alpha + 1e-12)),
                     len(y)])
    c = np.array(rows)
    clustered = exact is None
    floor = _floor(problem, exact.count if exact is not None else reference_size(problem))
    return AtN(tuple(int(s) for s in problem.sizes) if problem.kind not in ("paired", "one-sample")
               else (problem.n,),
               rates_from_counts(c[:, 0], c[:, 2], clustered),
               rates_from_counts(c[:, 1], c[:, 2], clustered),
               exact is not None, exact.count if exact is not None else PERMUTATIONS, floor,
               time.perf_counter() - started)


def _floor(problem, count: int) -> float:
    symmetric = problem.form == "signs" or (
        problem.kind == "two-sample" and len(set(np.bincount(problem.codes))) == 1)
    att = at.from_count(count, symmetric, "upper" if problem.form == "quadratic" else "linear")
    return att.for_alternative(problem.alternative)


def floor_of(problem) -> tuple[float, int]:
    """(smallest p of the test's side as a bound from the reference set, its size)."""
    size = reference_size(problem)
    return _floor(problem, size), size


def _sizes(problem) -> str:
    if problem.kind in ("paired", "one-sample"):
        return f"n = {problem.n}"
    return "n = " + " + ".join(str(int(s)) for s in problem.sizes)


def search(problem_at: Callable, pattern_of: Callable, errors, alpha: float, seed: int,
           target: float, progress=NO_PROGRESS) -> tuple[dict, dict]:
    """({n: AtN} simulated, {"permutation": n or None, "normal": n or None}): n doubles from 2
    until both tests reach the target (or MAX_UNITS), then each test's bracket is bisected
    (power is taken as rising with n; with common errors it does, up to Monte Carlo noise)."""
    seen: dict = {}

    def at_n(k: int) -> AtN:
        if k not in seen:
            seen[k] = power_at(problem_at(k), pattern_of, errors, alpha, seed, progress,
                               done=min(0.9, 0.07 * len(seen)), share=0.07)
        return seen[k]

    lo = {"permutation": 1, "normal": 1}           # largest n known to fall short
    hi = {"permutation": None, "normal": None}     # smallest n known to reach
    k = 2
    while True:
        r = at_n(k)
        for which in hi:
            if hi[which] is None:
                if getattr(r, which).value >= target:
                    hi[which] = k
                else:
                    lo[which] = k
        if all(v is not None for v in hi.values()) or k >= MAX_UNITS:
            break
        k = min(MAX_UNITS, 2 * k)
    for which in hi:
        if hi[which] is None:
            continue
        a, b = lo[which], hi[which]
        while b - a > 1:
            mid = (a + b) // 2
            if getattr(at_n(mid), which).value >= target:
                b = mid
            else:
                a = mid
        hi[which] = b
    progress.step(1.0, "power: done")
    return seen, hi
