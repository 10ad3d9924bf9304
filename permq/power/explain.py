"""`explain power ...`: what a power statement would do and what it would cost, nothing run.

It says which tests are simulated (or, for counts, summed), under which errors, how many data
sets at each n, the reference set at that n (every arrangement, or 999 random ones a data set),
the smallest p the design can give, and the time: one block of PILOT data sets is simulated at
the n that matters (the given n, or the n the normal approximation predicts for a search) and
scaled to the data sets and to the sizes a search visits (doubling from 2 to past the
predicted n, then bisection). A count design's time is one summation timed and scaled by the
outcomes of the sizes its scan visits (from 2 to the arcsine formula's n, and SETTLE more).
The figures are estimates: a search's real n decides how many sizes it simulates.
"""
from __future__ import annotations

import copy
import math
import time

from ..lazy import stats
from ..result import Note
from ..robustness.arrangements import EXACT_LIMIT, reference_size
from ..robustness.batch import normal_test_name
from ..robustness.problem import problem_for
from . import counts, layout as lay
from .executor import CountSetup, prepare
from .simulate import PERMUTATIONS, floor_of, power_at

PILOT = 100              # data sets simulated to time a size


def explain(node, text: str, catalog, defaults, seed: int) -> Note:
    s = prepare(node, catalog, defaults, seed)
    if isinstance(s, CountSetup):
        return _counts(node, text, catalog, defaults, s)
    from ..families import registry

    design, base = s.design, s.base
    family = registry.find(design.settings.kind, design.settings.family)
    title = family.title if family is not None else base.family
    lines = [f"power: {title}, beside {normal_test_name(base)}",
             f"  errors: {s.law_words}; effect: {s.words}",
             f"  data sets: {s.datasets:,} at each n (seed {seed}); level {s.alpha:g}, "
             f"{base.alternative}"]
    predicted, least = None, None
    if s.target is None:
        problem = base if s.sizes is None else problem_for(lay.resized(design, s.sizes))
        visits, cost, at = 1, 1.0, problem
        lines.append(f"  n: {_sizes(problem)} (one size)")
    else:
        predicted = _predicted_n(s, base)
        visits = _search_visits(predicted)
        cost = _search_cost(predicted)
        at = problem_for(lay.resized(design, lay.allocated(min(predicted, lay.MAX_UNITS),
                                                              s.ratio)))
        lines.append(f"  search for {s.target:.0%} power: n doubles from 2 until both tests "
                     f"reach it (at most {lay.MAX_UNITS} a group), then bisection; the normal "
                     f"approximation puts n near {_sizes(at)}, so about {visits} sizes")
        least = _least_significant(design, s)
        if least is not None and least > 2:
            lines.append(f"  below n = {least} (first group) no outcome can reach p <= "
                         f"{s.alpha:g}: the permutation test has no power there")
    size = reference_size(at)
    lines.append("  reference set at " + _sizes(at) + ": " + (
        f"all {size:,} arrangements (exact)" if size <= EXACT_LIMIT else
        f"{PERMUTATIONS:,} random arrangements a block of data sets (of {_big(size)})"))
    floor, _ = floor_of(at)
    side = "two-sided" if at.alternative == "two-sided" else "one-sided"
    lines.append(f"  smallest p at {_sizes(at)}: {side} {floor:.3g}" + (
        f" (above {s.alpha:g}: no power)" if floor > s.alpha * (1 + 1e-9) else ""))
    took, m = _pilot_seconds(at, s, seed)
    seconds = took * s.datasets / m * cost
    lines.append(f"  time: about {seconds:.2g} s (timed on a pilot of {m} data "
                 f"sets at {_sizes(at)}" + (f", scaled to the {visits} sizes of the search)"
                                            if visits > 1 else ")"))
    shown = "\n".join(lines)
    return Note(text, shown, {"plan": shown, "method": "simulation",
                              "estimated_seconds": seconds, "sizes_simulated": visits,
                              "datasets": s.datasets, "reference_size": size,
                              "smallest_p": floor, "predicted_n": predicted,
                              "least_significant_n": least})


def _pilot_seconds(problem, s, seed) -> tuple:
    """(seconds, data sets) of the pilot: the faster of two runs, so that a first statement's
    one-time costs (imports, first calls) are not scaled up with it."""
    best, m = math.inf, min(PILOT, s.datasets)
    for _ in range(2):
        pilot = copy.copy(s.errors)
        pilot.datasets, pilot._columns = m, {}
        started = time.perf_counter()
        power_at(problem, s.pattern_of, pilot, s.alpha, int(seed))
        best = min(best, time.perf_counter() - started)
    return best, m


def _sizes(problem) -> str:
    if problem.kind in ("paired", "one-sample"):
        return f"n = {problem.n}"
    return "n = " + " + ".join(str(int(v)) for v in problem.sizes)


def _big(size: int) -> str:
    from ..plan.sizes import words

    return words(size)


def _z(alpha: float, alternative: str) -> float:
    return float(stats.norm.isf(alpha / 2 if alternative == "two-sided" else alpha))


def _predicted_n(s, base) -> int:
    """The first group's n by the normal approximation (two groups: (z_a + z_b)^2 (1 + 1/r)
    / d^2; pairs and one sample: (z_a + z_b)^2 / d^2; more groups: the two-group figure for
    the range of their means, a rough guide)."""
    d = abs(s.shift_sd)
    if d == 0:
        return lay.MAX_UNITS
    z = _z(s.alpha, base.alternative) + float(stats.norm.isf(1 - s.target))
    if base.kind in ("paired", "one-sample"):
        n = z * z / (d * d)
    else:
        r = s.ratio[1] if s.ratio else 1.0
        n = z * z * (1 + 1 / r) / (d * d)
    return max(2, min(lay.MAX_UNITS, math.ceil(n)))


def _search_visits(predicted: int) -> int:
    """Sizes a search simulates: the doublings 2, 4, ... to past `predicted`, then bisection."""
    doublings = max(1, math.ceil(math.log2(max(predicted, 2) / 2)) + 1)
    bisection = max(0, math.ceil(math.log2(max(predicted / 2, 1))))
    return doublings + bisection


def _search_cost(predicted: int) -> float:
    """A search's cost in units of one size at `predicted` (cost taken as growing with n):
    the doublings' sizes summed over `predicted`, plus the bisection's steps near it."""
    top = 2 ** max(1, math.ceil(math.log2(max(predicted, 2))))
    doubled = sum(2 ** i for i in range(1, int(math.log2(top)) + 1))
    return doubled / max(predicted, 1) + max(0, math.ceil(math.log2(max(predicted / 2, 1))))


def _least_significant(design, s):
    """The smallest first-group n whose reference set can give p <= alpha (None: not by 64)."""
    for k in range(2, 65):
        problem = problem_for(lay.resized(design, lay.allocated(k, s.ratio)))
        if floor_of(problem)[0] <= s.alpha * (1 + 1e-9):
            return k
    return None


def _counts(node, text, catalog, defaults, s: CountSetup) -> Note:
    """Count designs: every outcome summed; the time of one summation, scaled."""
    from ..bind.binder import bind

    inner = node.analysis
    if s.design is None:
        count_node, props = counts.described_node(inner)
        shape = inner.shape
        design = bind(count_node, catalog, defaults)
        sizes = s.sizes
    else:
        design = s.design
        shape = "proportions" if counts.is_two(design) else "proportion"
        props = counts.pilot_proportions(design)
        sizes = s.sizes or counts.pilot_sizes(design)
    want = 2 if shape == "proportions" else 1
    ratio = sizes[1] / sizes[0] if sizes is not None and len(sizes) == 2 else 1.0
    null = props[1] if shape == "proportion" else None

    options = tuple(o for o in inner.options if o.key not in counts.POWER_KEYS)

    def at(ns):
        d = bind(counts.count_node(inner.span, shape, ns, null, options), catalog, defaults)
        started = time.perf_counter()
        row = counts.summed(d, shape, props, s.alpha)
        return row, time.perf_counter() - started

    def outcomes(k):
        return (k + 1) * (max(1, round(k * ratio)) + 1) if want == 2 else k + 1

    if s.target is None:
        ns = tuple(sizes) * (want // len(sizes)) if len(sizes) < want else tuple(sizes)
        k, visits = ns[0], [ns[0]]
        what = f"n = {' + '.join(map(str, ns))} (one size)"
    else:
        k = next((m for m in range(2, counts.MAX_UNITS + 1)
                  if counts.formula_power(props, _two(m, ratio, want), s.alpha,
                                          design.settings.alternative) >= s.target),
                 counts.MAX_UNITS)
        visits = list(range(2, min(counts.MAX_UNITS, k + counts.SETTLE) + 1))
        ns = _two(k, ratio, want)
        what = (f"scan n = 2, 3, ... up to {counts.SETTLE} sizes past the first reaching "
                f"{s.target:.0%} (the arcsine formula puts it near n = {k}), about "
                f"{len(visits)} sizes")
    row, took = at(ns)
    seconds = took * sum(outcomes(v) for v in visits) / outcomes(k)
    test, normal_test = counts.test_words(design)
    lines = [f"power: {test}, beside {normal_test}; summed over every binomial outcome (no "
             "simulation, no Monte Carlo error)",
             f"  {what}",
             f"  outcomes at n = {' + '.join(map(str, ns))}: {outcomes(k):,}; smallest p "
             f"{row.smallest_p:.3g}" + (f" (above {s.alpha:g}: no power)"
                                        if row.smallest_p > s.alpha * (1 + 1e-9) else ""),
             f"  time: about {seconds:.2g} s (one summation timed, scaled by the outcomes "
             "of every size)"]
    shown = "\n".join(lines)
    return Note(text, shown, {"plan": shown, "method": "summation",
                              "estimated_seconds": seconds, "sizes_simulated": len(visits),
                              "smallest_p": row.smallest_p, "outcomes": outcomes(k),
                              "predicted_n": k if s.target is not None else None})


def _two(k, ratio, want):
    return (k,) if want == 1 else (k, max(1, int(round(k * ratio))))

