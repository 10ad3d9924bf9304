"""The interaction by residual permutation (Freedman and Lane 1983; Anderson and ter Braak
2003, J. Stat. Comput. Simul. 73:85).

The reduced model holds both main effects and no interaction. Its residuals e are permuted
over all rows and added back to its fitted values, y* = fitted + e*, and the interaction's F
is computed on y*. The interaction's columns are orthogonal to the fitted values, and so is
the error space, so F(y*) is F computed on e* alone (W'C'e* and e'e - sum s_c^2 / n_c of
its cell sums). The residuals are only nearly exchangeable, so the test is approximate: its
level is close to the nominal one, not guaranteed; there is no exact reference set, and the
method is Monte Carlo.
"""
from __future__ import annotations

from math import factorial, prod

import numpy as np

from ...plan.cost import Candidate
from ...result import EngineOutcome
from ..core import pvalues
from ..core.progress import NO_PROGRESS, Progress
from ..montecarlo.sampling import blocks
from .layout import F_FLOOR, Layout, additive_residuals, cell_sums, f_of

DESCRIPTION = "Monte Carlo residual permutation (Freedman-Lane)"
APPROXIMATE = ("the interaction is tested by permuting residuals of the additive model: an "
               "approximate test, not an exact one")


def residual_arrangements(lay: Layout) -> float:
    """The distinct ways to share the residuals among the cells, N! / prod n_c!."""
    return float(factorial(lay.n) // prod(factorial(int(c)) for c in lay.sizes))


def candidates(lay: Layout, draws: int) -> list[Candidate]:
    total = residual_arrangements(lay)
    df = lay.terms["interaction"].df
    return [
        Candidate("listing", "complete listing", True, float("inf"), float("inf"),
                  feasible=False, arrangements=total,
                  note="residual permutation is approximate; there is no exact reference set"),
        Candidate("residual-permutation", DESCRIPTION, False,
                  draws * (lay.n * (8.0 + np.log2(max(lay.n, 2))) + lay.n_cells * (df + 3)),
                  min(draws, 8192) * lay.n * 8 * 3, arrangements=total, note=f"{draws} draws"),
    ]


def run(lay: Layout, draws: int, seed: int, progress: Progress = NO_PROGRESS) -> EngineOutcome:
    e = additive_residuals(lay)
    ee = float(e @ e)
    f_obs = float(f_of(lay, "interaction", cell_sums(lay, e[None, :]), ee)[0])
    if not np.isfinite(f_obs):
        from ...errors import DataError

        raise DataError("the values are equal within every combination of the factors, so F "
                        "is undefined")
    b, done = 0, 0
    for _, size, rng in blocks(seed, draws):
        order = np.argsort(rng.random((size, lay.n)), axis=1, kind="stable")
        f = f_of(lay, "interaction", cell_sums(lay, e[order]), ee)
        b += pvalues.exceedances(f, f_obs, "higher", 0.0, F_FLOOR)
        done += size
        progress.step(done / draws, "sampling")
    p, p_int = pvalues.monte_carlo_p(b, draws)
    return EngineOutcome("F", f_obs, p, "monte-carlo", DESCRIPTION,
                         arrangements=residual_arrangements(lay), draws=draws, p_interval=p_int,
                         seed=seed, warnings=(APPROXIMATE,))
