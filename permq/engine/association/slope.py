"""The least-squares slope by permutation and its exact interval from the arrangements' jumps."""
from __future__ import annotations

from dataclasses import dataclass
from math import factorial
from typing import Optional

import numpy as np

from ...result import EngineOutcome, Estimate
from ..core import pvalues
from ..core.counting import multinomial
from ..core.confidence import alpha_side, first_kept
from ..core.progress import NO_PROGRESS
from ..montecarlo.sampling import blocks
from .pairings import (DESCRIPTIONS, Problem, Shuffler, _big, _tally, arrangement_chunks,
                       distinct_pairs, problem)

# ---------------------------------------------------------------- the slope and its interval

@dataclass(frozen=True)
class SlopePass:
    """For each arrangement pi of the (x, y) pairs: T = sum xc_i y_pi(i) and
    den = (1/2) sum (x_i - x_pi(i))^2 = Sxx - sum xc_i xc_pi(i) (zero when pi leaves x as is)."""

    pb: Problem
    t: np.ndarray
    den: np.ndarray
    total: float               # reference-set size (exact) or draws + 1 (Monte Carlo)
    exact: bool
    draws: Optional[int] = None
    seed: Optional[int] = None


def slope_pass(y, x, algorithm: str, draws=None, seed=None, progress=NO_PROGRESS) -> SlopePass:
    if algorithm not in ("enumeration", "monte-carlo"):
        raise ValueError(f"the slope is tested by enumeration or monte-carlo, not {algorithm!r}")
    pb = problem("slope", y, x)
    y = pb.moving           # centred as the problem's T is (the same constant off every T)
    ts, dens = [], []
    if algorithm == "enumeration":
        xr, yr, counts = distinct_pairs(y, x)
        total = multinomial(counts)
        done = 0
        for labels in arrangement_chunks(counts):
            _slope_rows(pb, x, xr[labels], yr[labels], ts, dens)
            done += len(labels)
            progress.step(done / total, "enumerating")
        return SlopePass(pb, np.concatenate(ts), np.concatenate(dens), float(total), True)
    shuffler = Shuffler(np.arange(len(x)))
    done = 0
    for _, size, rng in blocks(seed, draws):
        for idx in shuffler.draws(rng, size):
            _slope_rows(pb, x, x[idx], y[idx], ts, dens)
        done += size
        progress.step(done / draws, "sampling")
    return SlopePass(pb, np.concatenate(ts), np.concatenate(dens), float(draws + 1), False,
                     draws, seed)


def _slope_rows(pb, x, xp, yp, ts, dens):
    ts.append(yp @ pb.fixed)
    dens.append(0.5 * ((xp - x) ** 2).sum(axis=1))


def slope_outcome(sp: SlopePass, alternative: str) -> EngineOutcome:
    pb = sp.pb
    b = pvalues.exceedances(sp.t, pb.t_obs, alternative, 0.0, pb.scale)
    coef = float(pb.coefficient(pb.t_obs))
    if sp.exact:
        support, counts = _tally(sp.t, pb.scale)
        what = DESCRIPTIONS["enumeration"] + (" of distinct arrangements (ties)" if pb.ties else "")
        return EngineOutcome(pb.name, coef, pvalues.clip(b / sp.total), "exact", what,
                             arrangements=sp.total, null_support=pb.coefficient(support),
                             null_probs=counts / sp.total)
    p, p_int = pvalues.monte_carlo_p(b, sp.draws)
    return EngineOutcome(pb.name, coef, p, "monte-carlo", DESCRIPTIONS["monte-carlo"],
                         arrangements=_big(factorial(len(pb.fixed))), draws=sp.draws,
                         p_interval=p_int, seed=sp.seed)


def slope_jumps(sp: SlopePass, side: str):
    """(jumps, identity): arrangement pi counts as extreme for 'higher' exactly when
    beta >= jump_pi (for 'lower' when beta <= jump_pi); `identity` always count. The jumps
    carry the tie tolerance of the p-value rule (relative 1e-9 on the T scale), so that an
    arrangement tying with the observed one at beta counts there."""
    moved = sp.den > 0
    tol = pvalues.RTOL * sp.pb.scale
    num = sp.pb.t_obs - sp.t[moved]
    jumps = (num - tol if side == "higher" else num + tol) / sp.den[moved]
    identity = float(np.count_nonzero(~moved)) + (0.0 if sp.exact else 1.0)
    return jumps, identity


def p_at(sp: SlopePass, beta: float, side: str) -> float:
    """One-sided p-value of 'slope = beta' from the jumps ('higher' or 'lower')."""
    jumps, identity = slope_jumps(sp, side)
    k = np.count_nonzero(jumps <= beta) if side == "higher" else np.count_nonzero(jumps >= beta)
    return (identity + k) / sp.total


def interval_from_jumps(jumps_higher, jumps_lower, identity: float, total: float, level: float,
                        alternative: str) -> tuple:
    """{beta: p_higher(beta) > a and p_lower(beta) > a}, a = 1 - level (one-sided) or half
    of it (two-sided, equal tails), by the interval-end rule of `core.confidence`; closed at
    finite ends."""
    side = alpha_side(level, alternative)
    cum = identity + np.arange(len(jumps_higher) + 1, dtype=float)
    need = first_kept(cum, total, side)                 # jumps needed to stop rejecting
    need = None if need == cum.size else need
    lo, hi = -np.inf, np.inf
    if alternative in ("two-sided", "higher"):
        c = np.sort(np.asarray(jumps_higher, dtype=float))
        lo = np.inf if need is None else (-np.inf if need == 0 else float(c[need - 1]))
    if alternative in ("two-sided", "lower"):
        c = np.sort(np.asarray(jumps_lower, dtype=float))
        hi = -np.inf if need is None else (np.inf if need == 0 else float(c[c.size - need]))
    return lo, hi


def slope_estimate(sp: SlopePass, level: float, alternative: str) -> Estimate:
    up, identity = slope_jumps(sp, "higher")
    down, _ = slope_jumps(sp, "lower")
    lo, hi = interval_from_jumps(up, down, identity, sp.total, level, alternative)
    tails = "equal-tailed, " if alternative == "two-sided" else ""
    if sp.exact:
        how = f"all {int(sp.total):,} arrangements (exact)"
    else:
        how = f"the same {sp.draws:,} Monte Carlo arrangements for every slope (seed {sp.seed})"
    method = (f"inverting the permutation test of y - beta x against x ({tails}"
              f"read off exactly at the jumps), over {how}")
    return Estimate("slope of y on x", float(sp.pb.coefficient(sp.pb.t_obs)), (lo, hi),
                    level, method)
