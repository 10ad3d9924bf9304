"""The null distribution of a result's statistic as plain data (`NullPicture`), for pictures.

Where the engine kept the exact null distribution (`EngineOutcome.null_support` and
`null_probs`) it is binned as it is. Otherwise (Monte Carlo results) the distribution is drawn
afresh from DRAWS random arrangements of the observed data (seeded), for the designs the
robustness simulation covers; for the others there is no picture.
"""
from __future__ import annotations

from typing import Optional

import numpy as np

from ..engine.montecarlo import sampling
from ..errors import PermqError
from ..plan.sizes import words
from .arrangements import sampled_reference
from .batch import residual_t, pair_signs, scores
from .problem import Problem, data_row, problem_for
from .result import NullPicture

BINS = 48
DRAWS = 20_000


def null_picture(design, outcome, seed: Optional[int] = None, bins: int = BINS,
                 draws: int = DRAWS) -> Optional[NullPicture]:
    if outcome.null_support is not None and outcome.null_probs is not None:
        support = np.asarray(outcome.null_support, dtype=float)
        probs = np.asarray(outcome.null_probs, dtype=float)
        size = f", {words(outcome.arrangements)} arrangements" if outcome.arrangements else ""
        source = f"exact null distribution{size}"
    else:
        try:
            problem = problem_for(design)
        except PermqError:
            return None
        seed = sampling.require_seed(seed if seed is not None else outcome.seed)
        support = sampled_statistics(problem, data_row(design), seed, draws)
        probs = np.full(len(support), 1.0 / len(support))
        source = f"Monte Carlo, {draws:,} random arrangements (seed {seed})"
    return binned(outcome.statistic_name, support, probs, float(outcome.statistic), source,
                  design.settings.alternative, bins)


def binned(name: str, support, probs, observed: float, source: str, alternative: str,
           bins: int = BINS) -> NullPicture:
    support = np.asarray(support, dtype=float)
    probs = np.asarray(probs, dtype=float)
    keep = np.isfinite(support)
    support, probs = support[keep], probs[keep]
    values = np.append(support, observed) if np.isfinite(observed) else support
    lo, hi = float(values.min()), float(values.max())
    if hi <= lo:
        lo, hi = lo - 0.5, hi + 0.5
    edges = np.linspace(lo, hi, bins + 1)
    masses, _ = np.histogram(support, edges, weights=probs)
    masses = masses / masses.sum()
    where = int(np.clip(np.searchsorted(edges, observed, side="right") - 1, 0, bins - 1))
    return NullPicture(name, tuple(float(e) for e in edges), tuple(float(m) for m in masses),
                       observed, where, source, alternative)


def sampled_statistics(problem: Problem, y: np.ndarray, seed: int, draws: int) -> np.ndarray:
    """The reported statistic under `draws` random arrangements of the data y."""
    a = scores(problem, y[None, :])[0]
    out = []
    for _, size, rng in sampling.blocks(seed, draws):
        ref = sampled_reference(problem, rng, size)
        out.append(reported(problem, a, internal(problem, a, ref.matrix)))
    return np.concatenate(out)


def internal(problem: Problem, a: np.ndarray, matrix: np.ndarray) -> np.ndarray:
    """The simulation's statistic (group-1 score sum, signed sum, sum S_g^2 / n_g, or
    sum w a) for each arrangement row of `matrix`."""
    if problem.form == "pairs":
        return matrix @ pair_signs(a[None, :])[0]
    if problem.form == "recomputed":     # a statistic without spread stands as +-1e300 there
        t = problem.check.recompute(problem, a[None, :], matrix)[0]
        return np.where(np.abs(t) >= 1e299, np.sign(t) * np.inf, t)
    t = matrix @ a
    if problem.form == "residual":
        cols = problem.basis.shape[1]
        with np.errstate(divide="ignore", invalid="ignore"):
            return residual_t(problem, t.reshape(-1, cols), float(a @ a))
    if problem.form not in ("quadratic", "quadform"):
        return t
    k = len(problem.sizes)
    if problem.form == "quadform":
        s = t.reshape(-1, k)
        return np.einsum("pg,gh,ph->p", s, problem.matrix, s)
    return (t.reshape(-1, k) ** 2 / problem.sizes).sum(axis=1)


def reported(problem: Problem, a: np.ndarray, t: np.ndarray) -> np.ndarray:
    """The statistic as the result reports it, from the simulation's statistic (the family's
    check: robustness/reported)."""
    return problem.check.reported(problem, a, t)


def attach(design, result) -> None:
    """Put the null-distribution picture into `result.extra` (a statement with `picture`)."""
    pic = null_picture(design, result.outcome, design.settings.seed)
    if pic is None:
        result.warnings.append("no picture: the null distribution is not kept for this method")
    else:
        result.extra["null_picture"] = pic.to_dict()
