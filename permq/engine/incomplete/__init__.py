"""Incomplete blocks: the permutation F within blocks, Skillings-Mack and Durbin, with some
treatments missing from some blocks. `layout` puts each statistic in one quadratic form of
the treatment totals; `split` counts exactly (a dynamic programme on each half of the blocks,
joined in the middle) or samples.

Entry points take the engine's arrays: `values`, `groups` (codes 0..t-1 in level order),
`blocks` (codes), and `n_groups` (t).
"""
from __future__ import annotations

from typing import Optional

from ...errors import PlanError
from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core.limits import DEFAULT_DRAWS
from ..core.progress import NO_PROGRESS, Progress
from ..montecarlo.sampling import fresh_seed
from . import split
from .layout import STATISTIC_NAMES, TESTS, Layout, prepare


EXACT_WORDS = ("dynamic programming over each half of the blocks, joined in the middle "
               "(every within-block arrangement counted)")
MONTE_CARLO_WORDS = "Monte Carlo sampling of within-block arrangements"


def candidates(test, values, groups, blocks, draws: int = DEFAULT_DRAWS,
               n_groups: Optional[int] = None) -> list[Candidate]:
    layout = prepare(test, values, groups, blocks, n_groups)
    total = layout.arrangements
    ops, memory, ok, note = split.cost(layout)
    plots = sum(len(b.present) for b in layout.blocks)
    return [Candidate("dp-split", EXACT_WORDS, True, ops, memory, ok, note=note,
                      arrangements=total),
            Candidate("monte-carlo", MONTE_CARLO_WORDS, False,
                      float(draws) * plots * (layout.dim + 12.0), 8192.0 * layout.dim * 8 * 4,
                      note=f"{draws} draws", arrangements=total)]


def run(test, values, groups, blocks, algorithm: str, draws: Optional[int] = None,
        seed: Optional[int] = None, progress: Progress = NO_PROGRESS,
        n_groups: Optional[int] = None) -> EngineOutcome:
    """The permutation p-value of `test` (every statistic here is two-sided: large for any
    difference among treatments)."""
    layout = prepare(test, values, groups, blocks, n_groups)
    if layout.warnings:          # no variation within any block: every arrangement is alike
        return _all_alike(layout)
    if algorithm == "dp-split":
        ops, _, ok, note = split.cost(layout)
        if not ok:
            raise PlanError(f"exact counting does not apply here ({note}); use Monte Carlo")
        parts = split.exact(layout, progress)
        method = "exact"
    elif algorithm == "monte-carlo":
        draws = int(draws) if draws is not None else DEFAULT_DRAWS
        seed = int(seed) if seed is not None else fresh_seed()
        parts = split.monte_carlo(layout, draws, seed, progress)
        method = "monte-carlo"
    else:
        raise PlanError(f"algorithm {algorithm!r} does not apply to incomplete blocks",
                        hint="use dp-split or monte-carlo")
    return EngineOutcome(STATISTIC_NAMES[test], layout.t_obs, method=method,
                         warnings=layout.warnings, **parts)


def _all_alike(layout: Layout) -> EngineOutcome:
    return EngineOutcome(STATISTIC_NAMES[layout.test], float("nan"), 1.0, "exact",
                         "none needed: every arrangement gives the same data",
                         arrangements=layout.arrangements, warnings=layout.warnings)


__all__ = ["TESTS", "STATISTIC_NAMES", "candidates", "run", "prepare"]
