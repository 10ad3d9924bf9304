"""Many tests permuted together: one reference set of arrangements for every test of a family.

A family is either several responses compared across the same groups (two groups: a difference
in mean scores; k groups: F on values or Kruskal-Wallis on mid-ranks), or every pair of levels
of one response after a k-sample test (`pairwise`). The same arrangement of the units is applied
to every test, so the adjusted p-values keep the tests' correlation:

- exact: every assignment of the units to groups of the observed sizes, C(N, n1) for two
  groups (924 for 6 + 6), listed once and shared by all tests;
- Monte Carlo: the observed assignment and `draws` random ones from the seeded blocks; a
  p-value is (b + 1) / (draws + 1), the observed arrangement counting once.

Each test's statistic is put on a scale of its own that is fixed over the arrangements (see
`many_kernels`), which leaves its permutation p-value as it is and makes max-T comparable across
tests. The adjustments are those of `multiplicity`; max-T and min-P come from the joint
permutation distribution of the same reference set. Missing values: a response's statistic uses
the units where it is observed, and the permutation moves whole units (a response without
missing values gets the very p-value of its own two-sample or k-sample test).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from ...plan.cost import Candidate
from ...plan.sizes import big, words as count_words
from . import arrangements, kernels as kernels, multiplicity
from ..core.counting import multinomial
from ..core.limits import DEFAULT_DRAWS
from ..core.progress import NO_PROGRESS, Progress
from ..core.scores import midranks
from .workers import LocalPool

MIN_DRAWS = 10_000               # big families never get fewer default draws than this
TILE = 256                       # tests per tile in the streaming pass
TILE_ELEMENTS = 4_000_000        # arrangements x tests held at once by min-P
WINDOW_ROWS = 1 << 18            # Monte Carlo arrangements held at once by the streaming pass
TASKS = 16                       # the streaming pass cuts the arrangements into this many tasks
MIN_ROWS_PER_TASK = 256
OPS_PER_CELL = 0.05              # estimated elementary ops per (arrangement, test, unit added)


@dataclass(frozen=True)
class FamilyOutcome:
    t_obs: np.ndarray            # each test's statistic on its fixed scale (input order)
    p_raw: np.ndarray
    p_adjusted: np.ndarray
    method: str                  # "exact" or "monte-carlo"
    algorithm: str
    arrangements: float          # size of the reference set (exact) / of the whole set (MC)
    draws: Optional[int] = None
    seed: Optional[int] = None
    overall: dict = field(default_factory=dict)     # pairwise: the k-sample test
    pairs: tuple = ()                               # pairwise: (a, b) level codes per test


def default_draws(tests: int) -> int:
    """The default number of draws (100,000), fewer for big families (draws x tests <= 2e8),
    never under MIN_DRAWS."""
    return int(max(MIN_DRAWS, min(DEFAULT_DRAWS, (2e8 // max(1, tests)) // 1000 * 1000)))


def candidates(sizes, tests: int, draws: int, method: str, pairwise: bool = False) -> list:
    sizes = [int(s) for s in sizes]
    N = sum(sizes)
    summed = N - max(sizes)
    count = multinomial(sizes)
    total = big(count)
    passes = 3.0 if method == "min-p" else 1.0

    def ops(rows):
        if pairwise:
            return rows * (N * len(sizes) + 6 * tests) * 4
        return rows * (tests * (summed + 8) * passes * OPS_PER_CELL + N * 5)

    def memory(rows, listed):
        per_row = N + 4 * summed + (24 * N if listed else 0)   # codes, members, listing
        data = tests * N * 8 * 4
        if pairwise:
            return rows * (per_row + 8 * (3 * tests + len(sizes) + 1)) + data
        if method == "min-p":
            width = max(1, min(TILE, TILE_ELEMENTS // max(1, rows)))
            return rows * per_row + rows * width * 8 * 3 + (tests / width) * rows * 8 + data
        held = rows if listed else min(rows, WINDOW_ROWS)
        return held * per_row + data

    out = [Candidate("enumeration", "complete enumeration, shared by every test", True,
                     ops(total), memory(total, True), note=f"{count_words(count)} arrangements",
                     arrangements=count),
           Candidate("monte-carlo", "Monte Carlo joint draws (one arrangement for every test)",
                     False, ops(draws + 1), memory(draws + 1, False), arrangements=total,
                     note=f"{draws:,} draws")]
    return out


# ---------------------------------------------------------------- scores

def standardised_scores(values, ranked: bool):
    """(N, m) scores (mid-ranks of each column when `ranked`, else the values) centred on their
    observed mean over their sd, 0 where missing; observed."""
    observed = ~np.isnan(values)
    if ranked:
        scores = midranks(values, axis=0, nan_policy="omit")
    else:           # centred on a middle value first, so no offset drowns the differences
        scores = np.array(values, dtype=float)
        if observed.any(axis=0).all():
            scores = scores - np.nanmedian(scores, axis=0)
    counts = observed.sum(axis=0)
    filled = np.where(observed, scores, 0.0)
    mean = filled.sum(axis=0) / np.maximum(counts, 1)
    centred = np.where(observed, scores - mean, 0.0)
    var = (centred ** 2).sum(axis=0) / np.maximum(counts - 1, 1)
    sd = np.where(var > 0, np.sqrt(var), 1.0)
    return np.ascontiguousarray(centred / sd), observed.astype(float)


def _kernel_coordinates(sizes):
    """Group relabelling that puts the largest group last (it is had from the total)."""
    k = len(sizes)
    last = int(np.argmax(np.asarray(sizes)[::-1]))
    last = k - 1 - last                         # the largest, the later one on a tie
    order = [g for g in range(k) if g != last] + [last]
    lut = np.empty(k, dtype=np.int8)
    lut[order] = np.arange(k)
    return lut, np.asarray(sizes, dtype=float)[order]


def build_family(y, observed, codes, sizes, alternative, thr=None, tile=TILE):
    """The kernel's view of the tests (in the order given)."""
    N, m = y.shape
    k = len(sizes)
    lut, ksizes = _kernel_coordinates(sizes)
    if k == 2:
        counts = np.stack([observed[codes == g].sum(axis=0) for g in range(2)])
        inv_se = 1.0 / np.sqrt(1.0 / counts[0] + 1.0 / counts[1])
        sign = 1.0 if lut[0] == 0 else -1.0      # summed group is the first level, or not
        if alternative == "lower":
            sign = -sign
        mode = kernels.TWO_SIDED if alternative == "two-sided" else kernels.ONE_SIDED
    else:
        inv_se, sign, mode = np.ones(m), 1.0, kernels.QUADRATIC
    edges = np.append(np.arange(0, m, tile), m).astype(np.int64)
    missing = (observed == 0).any(axis=0)
    masked = np.logical_or.reduceat(missing, edges[:-1]) if m else np.zeros(0, bool)
    obs = np.ascontiguousarray(observed) if missing.any() else np.ones((N, 1))
    return kernels.Family(np.ascontiguousarray(y), obs, observed.sum(axis=0).astype(float),
                          ksizes, np.ascontiguousarray(inv_se, dtype=float),
                          np.zeros(m) if thr is None else np.ascontiguousarray(thr),
                          edges, np.asarray(masked, dtype=bool), mode, float(sign)), lut


def _reorder(y, observed, order):
    return np.ascontiguousarray(y[:, order]), np.ascontiguousarray(observed[:, order])


def observed_statistics(fam: kernels.Family, codes_k) -> np.ndarray:
    row = kernels.members_of(codes_k, fam.sizes)
    parts = [kernels.tile_statistics(row, fam, int(a), int(b))[0]
             for a, b in zip(fam.edges[:-1], fam.edges[1:])]
    return np.concatenate(parts) if parts else np.zeros(0)


# ---------------------------------------------------------------- reference set

EXACT_WORDS = "complete enumeration, shared by every test"
SAMPLED_WORDS = "Monte Carlo joint draws (one arrangement for every test)"


def reference_set(codes, sizes, algorithm, draws, seed, progress):
    """The whole reference set at once (pairwise, min-P): (R, N) codes, method, words."""
    if algorithm == "enumeration":
        return arrangements.enumerate_codes(sizes, progress), "exact", EXACT_WORDS
    return arrangements.sampled_codes(codes, seed, draws, progress), "monte-carlo", SAMPLED_WORDS


def reference_windows(codes, sizes, algorithm, draws, seed, progress):
    """The reference set a window of rows at a time (memory bounded for any number of draws)."""
    if algorithm == "enumeration":
        return iter([arrangements.enumerate_codes(sizes, progress)])
    return arrangements.sampled_windows(codes, seed, draws, WINDOW_ROWS, progress)


# ---------------------------------------------------------------- responses

def run_family(values, codes, ranked: bool, alternative: str, method: str, step: str,
               algorithm: str, draws: int, seed: int, progress: Progress = NO_PROGRESS,
               pool=None) -> FamilyOutcome:
    """All responses (columns of values, NaN where missing) across the groups of `codes`."""
    pool = pool or LocalPool()
    codes = np.asarray(codes, dtype=np.int8)
    k = int(codes.max()) + 1
    sizes = np.bincount(codes, minlength=k)
    y, observed = standardised_scores(np.asarray(values, dtype=float), ranked)
    fam, lut = build_family(y, observed, codes, sizes, alternative)
    t_obs = observed_statistics(fam, lut[codes])
    tol = multiplicity.tolerances(t_obs)
    order = np.argsort(-t_obs, kind="stable")
    ys, obs = _reorder(y, observed, order)
    fam_sorted, _ = build_family(ys, obs, codes, sizes, alternative, thr=(t_obs - tol)[order])
    step_down = method == "max-t" and step == "step-down"
    if method == "min-p":           # min-P needs every arrangement of a test at once
        ref, how, words = reference_set(codes, sizes, algorithm, draws, seed, progress)
        whole = kernels.members_of(lut[ref], fam.sizes)
        windows = iter([whole])
    else:
        how, words = (("exact", EXACT_WORDS) if algorithm == "enumeration"
                      else ("monte-carlo", SAMPLED_WORDS))
        windows = (kernels.members_of(lut[w], fam.sizes) for w in
                   reference_windows(codes, sizes, algorithm, draws, seed, progress))
    R, marg_sorted, sd_counts, ss_counts = _row_passes(windows, fam_sorted, step_down, pool,
                                                       progress)
    marg = np.empty_like(marg_sorted)
    marg[order] = marg_sorted
    raw = marg / R
    if method == "max-t":
        counts = multiplicity.enforce_step_down(sd_counts) if step_down else ss_counts
        adjusted = np.empty(len(raw))
        adjusted[order] = counts / R
    elif method == "min-p":
        adjusted = _min_p(y, observed, codes, sizes, alternative, whole, t_obs, tol, marg, step,
                          pool, progress)
    else:
        adjusted = multiplicity.from_raw(raw, method, step)
    return FamilyOutcome(t_obs, raw, adjusted, how, words, big(multinomial(sizes)),
                         draws if how == "monte-carlo" else None,
                         seed if how == "monte-carlo" else None)


def _row_passes(windows, fam, step_down, pool, progress):
    """Sum the tasks' counts over every window of arrangements (members): R and the counts."""
    m = fam.y.shape[1]
    R, marg, sd, ss = 0, np.zeros(m, np.int64), np.zeros(m, np.int64), np.zeros(m, np.int64)
    for members in windows:
        rows = members.shape[0]
        chunk = max(MIN_ROWS_PER_TASK, -(-rows // TASKS))
        tasks = [(lo, min(rows, lo + chunk), step_down) for lo in range(0, rows, chunk)]
        for part in pool.map(kernels.row_task, kernels.Job(members, fam), tasks, progress,
                             "permuting"):
            marg += part[0]
            sd += part[1]
            ss += part[2]
        R += rows
    return R, marg, sd, ss


def _min_p(y, observed, codes, sizes, alternative, ref_k, t_obs, tol, marg, step, pool,
           progress):
    """Min-P: tests in order of increasing raw p; per tile, each arrangement's own p-value."""
    R = ref_k.shape[0]
    order = np.lexsort((-t_obs, marg))
    width = max(1, min(TILE, TILE_ELEMENTS // R))
    ys, obs = _reorder(y, observed, order)
    fam, _ = build_family(ys, obs, codes, sizes, alternative, tile=width)
    job = kernels.Job(ref_k, fam)
    cobs, tol_s = marg[order], tol[order]
    tiles = list(zip(fam.edges[:-1].tolist(), fam.edges[1:].tolist()))
    mins = pool.map(kernels.min_p_tile_task, job,
                    [(a, b, tol_s[a:b], None, None) for a, b in tiles], progress, "min-P")
    carries = [None] * len(tiles)
    carry = np.full(R, R + 1, dtype=np.int64)
    for t in range(len(tiles) - 1, -1, -1):
        carries[t] = carry
        carry = np.minimum(carry, mins[t])
    adj_sorted = np.empty(len(order))
    if step == "single-step":
        ascending = np.sort(carry)
        adj_sorted[:] = np.searchsorted(ascending, cobs, side="right") / R
    else:
        counts = pool.map(kernels.min_p_tile_task, job,
                          [(a, b, tol_s[a:b], carries[t], cobs[a:b])
                           for t, (a, b) in enumerate(tiles)], progress, "min-P step-down")
        adj_sorted[:] = multiplicity.enforce_step_down(np.concatenate(counts)) / R
    adjusted = np.empty(len(order))
    adjusted[order] = adj_sorted
    return adjusted


# ---------------------------------------------------------------- pairs of levels

def pair_list(k: int) -> tuple:
    return tuple((a, b) for a in range(k) for b in range(a + 1, k))


def _pair_statistics(ref, y, sizes, pairs, chunk: int = 65536):
    """(overall T, |z| per pair) for every arrangement (rows of ref, original codes)."""
    k = len(sizes)
    R = ref.shape[0]
    overall = np.empty(R)
    z = np.empty((R, len(pairs)))
    n = np.asarray(sizes, dtype=float)
    for lo in range(0, R, chunk):
        block = ref[lo:lo + chunk]
        sums = np.stack([(block == g).astype(float) @ y for g in range(k)], axis=1)
        overall[lo:lo + chunk] = (sums ** 2 / n[None, :]).sum(axis=1)
        for i, (a, b) in enumerate(pairs):
            diff = sums[:, a] / n[a] - sums[:, b] / n[b]
            z[lo:lo + chunk, i] = np.abs(diff / np.sqrt(1.0 / n[a] + 1.0 / n[b]))
    return overall, z


def run_pairwise(values, codes, ranked: bool, method: str, step: str, algorithm: str,
                 draws: int, seed: int, progress: Progress = NO_PROGRESS) -> FamilyOutcome:
    """Every pair of levels of one response (no missing values), and the k-sample test."""
    codes = np.asarray(codes, dtype=np.int8)
    k = int(codes.max()) + 1
    sizes = np.bincount(codes, minlength=k)
    y, _ = standardised_scores(np.asarray(values, dtype=float)[:, None], ranked)
    y = y[:, 0]
    pairs = pair_list(k)
    ref, how, words = reference_set(codes, sizes, algorithm, draws, seed, progress)
    R = ref.shape[0]
    overall_obs, z_obs = _pair_statistics(codes[None, :], y, sizes, pairs)
    overall, z = _pair_statistics(ref, y, sizes, pairs)
    progress.step(1.0, "pairs")
    raw, adjusted = multiplicity.from_matrix(z, z_obs[0], method, step)
    t = overall_obs[0]
    p_overall = np.count_nonzero(overall >= t - multiplicity.tolerances([t])[0]) / R
    return FamilyOutcome(z_obs[0], raw, adjusted, how, words, big(multinomial(sizes)),
                         draws if how == "monte-carlo" else None,
                         seed if how == "monte-carlo" else None,
                         overall={"statistic": float(t), "p_value": float(p_overall)},
                         pairs=pairs)
