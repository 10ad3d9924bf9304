"""Two crossed factors: each main effect and the interaction, each by its own permutation test
of the two-way ANOVA F (type II sums of squares).

    layout      the cells, each term's basis, F from cell sums (layout.py)
    restricted  main effects: the values permuted within the levels of the other factor;
                exact by listing the product of the strata's arrangements, or Monte Carlo
    residual    the interaction: Freedman-Lane residual permutation (Monte Carlo; approximate)

`candidates(lay, key, draws)` lists a term's algorithms for the planner; `run(lay, key, ...)`
gives its `EngineOutcome`.
"""
from __future__ import annotations

from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core.progress import NO_PROGRESS, Progress
from . import residual, restricted
from .layout import TERMS, Layout, layout, sums_of_squares

__all__ = ["TERMS", "Layout", "layout", "sums_of_squares", "candidates", "run"]


def candidates(lay: Layout, key: str, draws: int) -> list[Candidate]:
    if key == "interaction":
        return residual.candidates(lay, draws)
    return restricted.candidates(lay, key, draws)


def run(lay: Layout, key: str, algorithm: str, draws=None, seed=None,
        progress: Progress = NO_PROGRESS) -> EngineOutcome:
    if key == "interaction":
        if algorithm != "residual-permutation":
            raise ValueError("the interaction is tested by residual permutation only")
        return residual.run(lay, int(draws), int(seed), progress)
    return restricted.run(lay, key, algorithm, draws, seed, progress)
