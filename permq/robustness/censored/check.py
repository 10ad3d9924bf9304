"""`robustness compare T by G event E ...`: the censored-times design under its schemes.

The statement's own analysis has run; here its layout (group sizes, strata, the share
censored) is kept and data sets are drawn under each scheme of `schemes.panel` (scheme j
uses seeds from 1000 * seed + j with `sampling.blocks`, so one seed reproduces the panel),
each block twice: under the null and at the effect, a hazard ratio for the first group (the
observed one-step estimate, or `shift 2` for a ratio of 2). Each data set gets its own risk
sets and scores; the permutation test runs on the robustness check's reference matrix
(every arrangement within strata up to 20,000, else Monte Carlo; robustness/arrangements.py)
through `batch.permutation_p`, the counterpart through `schemes.normal_p`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

import numpy as np

from ...engine.montecarlo import sampling
from ...errors import BindError
from .. import report
from ..arrangements import exact_reference, sampled_reference
from ..batch import permutation_p
from ..problem import Problem
from ..result import RobustnessResult
from ..simulate import PERMUTATIONS, LawRates, Simulation, Tracker, rates_from_counts, run_parallel
from . import schemes as S

BLOCK = 50
EFFECT_STREAM = 300
MC_STREAM = 600


@dataclass(frozen=True)
class Layout:
    times: np.ndarray
    events: np.ndarray
    codes: np.ndarray                  # 0 = the first group
    strata: Optional[np.ndarray]
    kind: str                          # the weight: log-rank, gehan, ...
    alternative: str
    words: str


def layout_of(design) -> Layout:
    s = design.settings
    if hasattr(design, "time1"):
        t = np.concatenate([design.time1, design.time2])
        e = np.concatenate([design.event1, design.event2])
        codes = np.repeat([0, 1], [len(design.time1), len(design.time2)])
        strata = None
    else:
        t, e, codes = design.time, design.event, np.asarray(design.groups)
        strata = getattr(design, "strata", None)
    sizes = np.bincount(codes)
    censored = 1 - float(np.mean(e))
    words = (f"{len(sizes)} groups of " + ", ".join(str(int(v)) for v in sizes)
             + (f" in {len(np.unique(strata))} strata" if strata is not None else "")
             + f", {int(np.sum(e))} events ({censored:.0%} censored)")
    return Layout(np.asarray(t, float), np.asarray(e, int), codes.astype(np.int64),
                  None if strata is None else np.asarray(strata, np.int64), s.family,
                  s.alternative if len(sizes) == 2 else "two-sided", words)


def problem_of(lay: Layout) -> Problem:
    """The layout as the check's Problem: a linear statistic (the first group's score sum,
    within strata) for two groups, the quadratic one for more."""
    k = int(lay.codes.max()) + 1
    zero = np.zeros(len(lay.codes))
    two = k == 2
    return Problem("two-sample" if two else "k-sample", lay.kind, lay.alternative,
                   "linear" if two else "quadratic", lay.codes,
                   (lay.codes == 0).astype(float) if two else None, None, math.nan, "",
                   math.nan, "", zero, zero, lay.words, math.nan, strata=lay.strata)


def hazard_ratio(design, observed, shift) -> tuple:
    """(ratio, words, is no effect) for the first group against the others."""
    if shift is not None:
        if shift[1]:
            raise BindError("censored times have no standard-deviation unit: a shift in sd "
                            "does not apply", hint="give a hazard ratio: shift 2")
        ratio = float(shift[0])
        if not (math.isfinite(ratio) and ratio > 0):
            raise BindError(f"shift {ratio:g}: a hazard ratio must be above 0",
                            hint="give a hazard ratio: shift 2")
        return ratio, f"a hazard ratio of {ratio:.4g} (first group against the others)", \
            ratio == 1.0
    est = observed.estimate
    if est is not None and math.isfinite(est.value) and est.value > 0:
        ratio = float(est.value)
        return ratio, f"the observed hazard ratio {ratio:.4g} (one-step, exp(U / V))", \
            ratio == 1.0
    from ...normal.events import score_and_variance

    lay = layout_of(design)
    first = lay.codes == 0
    u, v = score_and_variance("log-rank", lay.times[first], lay.events[first],
                              lay.times[~first], lay.events[~first])
    ratio = math.exp(u / v) if v > 0 else 1.0
    return ratio, (f"the observed hazard ratio {ratio:.4g} of the first group against the "
                   "others (one-step, exp(U / V))"), ratio == 1.0


def simulate(lay: Layout, panel, ratio: float, datasets: int, alpha: float, seed: int,
             progress) -> Simulation:
    problem = problem_of(lay)
    ref = exact_reference(problem)
    first = lay.codes == 0
    tracker = Tracker(len(panel) * datasets * 2)

    def task(j):
        scheme = panel[j]
        draw = S.drawer(scheme, first, lay.strata, 1000 * seed + j)
        rows = []
        for (_, size, rng), (_, _, erng), (_, _, mrng) in zip(
                sampling.blocks(1000 * seed + j, datasets, BLOCK),
                sampling.blocks(1000 * seed + EFFECT_STREAM + j, datasets, BLOCK),
                sampling.blocks(1000 * seed + MC_STREAM + j, datasets, BLOCK)):
            tracker.check()
            row = []
            reference = ref if ref is not None else sampled_reference(problem, mrng,
                                                                      PERMUTATIONS)
            for t, e in (draw.draw(rng, size), draw.draw(erng, size, ratio)):
                rs = S.risk_sets(lay.kind, t, e, lay.strata)
                a = S.scores(rs)
                row.append(int(np.count_nonzero(S.normal_p(rs, a, lay.codes, lay.alternative)
                                                <= alpha + 1e-12)))
                row.append(int(np.count_nonzero(permutation_p(problem, a, reference)
                                                <= alpha + 1e-12)))
            rows.append(row + [size])
            tracker.add(2 * size)
        return np.array(rows)

    counts = run_parallel(task, len(panel), 1, tracker, progress)
    out = []
    for scheme, c in zip(panel, counts):
        rates = [rates_from_counts(c[:, i], c[:, 4], ref is None) for i in range(4)]
        out.append(LawRates(scheme, *rates, not_exact=scheme.not_exact))
    return Simulation(tuple(out), datasets, alpha, ref is not None,
                      ref.count if ref is not None else PERMUTATIONS, seed)


def check_events(text, design, observed, check, seed, progress, picture, warnings):
    lay = layout_of(design)
    ratio, words, null_effect = hazard_ratio(design, observed, check.shift)
    panel = S.panel(1 - float(np.mean(lay.events)))
    sim = simulate(lay, panel, ratio, check.datasets, check.alpha, seed, progress)
    table = report.rows(sim)
    normal_test = observed.normal.test if observed.normal is not None else "normal theory"
    lines = summary(table, sim.alpha, normal_test, words, null_effect)
    lines += report.precision_lines(sim, "scheme")
    reference = (f"all {sim.arrangements:,} arrangements of the labels"
                 + (" within strata" if lay.strata is not None else "") + " (exact)"
                 if sim.exact else f"{PERMUTATIONS:,} Monte Carlo arrangements a block of "
                 f"{BLOCK} data sets")
    warnings = list(warnings)
    if lay.strata is not None:
        warnings.append("strata are simulated with baseline hazards doubling from stratum to "
                        "stratum, each with the same share censored")
    return RobustnessResult(
        text, observed.family, lay.words, observed.outcome.statistic_name, normal_test,
        lay.alternative, sim.alpha, sim.datasets, reference, sim.exact, sim.arrangements,
        sim.seed, ratio, math.nan, words, math.nan,
        "censored times have no standard-deviation unit: the effect is a hazard ratio, and "
        "sd fields are empty", table, lines, observed, picture, warnings, counts=True)


def _pct(alpha: float) -> str:
    return f"{alpha:.0%}" if alpha * 100 == round(alpha * 100) else f"{alpha:g}"


def summary(table, alpha, normal_test, shift_words, null_effect) -> list:
    pct = _pct(alpha)
    listing = report.listing
    off = [r for r in table if r.normal_verdict != "holds its level"]
    if off:
        first = (f"Normal theory, {normal_test}, a large-sample approximation, at {pct}: "
                 + "; ".join(f"{r.normal_verdict} under {r.name} ({r.normal_rate:.3f})"
                             for r in off) + ".")
    else:
        first = (f"Normal theory, {normal_test}, holds its {pct} level under every scheme of "
                 "the panel at this design.")
    lines = [first]
    exact = [r for r in table if not r.not_exact]
    if exact:
        worst = max(exact, key=lambda r: r.permutation_rate)
        lines.append(f"The permutation test keeps its level under {listing(r.name for r in exact)}"
                     ": where the censoring does not depend on the group, the labels are "
                     "exchangeable under the null given the times and censoring; its highest "
                     f"rate is {worst.permutation_rate:.3f}.")
    for r in table:
        if r.not_exact:
            lines.append(f"Under {r.name} it is not exact ({r.not_exact}): its rate is "
                         f"{r.permutation_rate:.3f} ± {r.permutation_se:.3f}, "
                         f"{r.permutation_verdict.split(', ', 1)[-1]}.")
    return lines + report.power_lines(table[0], table, normal_test, shift_words, null_effect,
                                      "permutation test")
