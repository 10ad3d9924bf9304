"""The slope adjusted for covariates: residual permutation (Freedman and Lane)."""
from __future__ import annotations

from dataclasses import dataclass
from math import factorial

import numpy as np

from ...errors import DataError
from ...result import EngineOutcome
from ..core import pvalues
from ..core.grid import negligible
from ..montecarlo.sampling import blocks
from .pairings import DESCRIPTIONS, Shuffler, _big

# ---------------------------------------------------------------- adjusted slope (Freedman-Lane)

@dataclass(frozen=True)
class Reduced:
    """The reduced model y ~ 1 + Z and what the full model's t for x needs.

    With Q an orthonormal basis of [1, Z], xt = x - QQ'x and permuted residuals e*:
    coefficient = xt'e* / xt'xt, RSS = e*'e* - |Q'e*|^2 - (xt'e*)^2 / xt'xt, since
    Q'yhat = Q'y and xt is orthogonal to the fitted values."""

    basis: np.ndarray          # n x (rank + 1): Q, then xt
    resid: np.ndarray
    ee: float
    sxx: float
    df: int


def reduced_model(y, x, covariates) -> Reduced:
    n = len(y)
    design = np.column_stack([np.ones(n), covariates])
    u, s, _ = np.linalg.svd(design, full_matrices=False)
    q = u[:, s > 1e-10 * s[0]]
    resid = y - q @ (q.T @ y)
    xt = x - q @ (q.T @ x)
    sxx = float(xt @ xt)
    if negligible(sxx, float(((x - x.mean()) ** 2).sum())):
        raise DataError("the predictor is a linear combination of the covariates")
    df = n - q.shape[1] - 1
    if df < 1:
        raise DataError(f"too few pairs ({n}) for {q.shape[1]} fitted terms and the predictor")
    return Reduced(np.column_stack([q, xt]), resid, float(resid @ resid), sxx, df)


def adjusted_t(rm: Reduced, e: np.ndarray) -> np.ndarray:
    """t of x's coefficient in the full model fitted to fitted + e (rows of e)."""
    proj = np.atleast_2d(e) @ rm.basis
    c = proj[:, -1]
    rss = np.maximum(rm.ee - (proj[:, :-1] ** 2).sum(axis=1) - c * c / rm.sxx, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (c / rm.sxx) / np.sqrt(rss / rm.df / rm.sxx)


def _run_freedman_lane(y, x, covariates, alternative, draws, seed, progress) -> EngineOutcome:
    rm = reduced_model(y, x, covariates)
    t_obs = float(adjusted_t(rm, rm.resid)[0])
    if not np.isfinite(t_obs):
        raise DataError("the full model fits the data exactly, so its t is undefined")
    b, done = 0, 0
    shuffler = Shuffler(rm.resid)
    for _, size, rng in blocks(seed, draws):
        for blk in shuffler.draws(rng, size):
            b += pvalues.exceedances(adjusted_t(rm, blk), t_obs, alternative, 0.0, abs(t_obs))
        done += size
        progress.step(done / draws, "sampling")
    p, p_int = pvalues.monte_carlo_p(b, draws)
    return EngineOutcome("t of the slope of y on x, adjusted for covariates", t_obs, p,
                         "monte-carlo", DESCRIPTIONS["residual-permutation"],
                         arrangements=_big(factorial(len(y))), draws=draws, p_interval=p_int,
                         seed=seed, warnings=("permuting residuals of the reduced model gives "
                                              "an approximate test, not an exact one",))


def adjusted_coefficient(y, x, covariates) -> float:
    rm = reduced_model(y, x, covariates)
    return float(rm.basis[:, -1] @ rm.resid / rm.sxx)
