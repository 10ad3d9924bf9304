"""Power of the count forms by summation over every outcome: no simulation, no Monte Carlo error.

    power count proportions 0.2 vs 0.6 n 15            two binomial samples of 15 (or n 10, 20)
    power count proportion 0.7 vs 0.5 for power 80%    one proportion: true 0.7, tested against 0.5
    power count 3 of 10 vs 7 of 10 n 20                the pilot's proportions at other sizes

The analysis is bound as `count` would bind it (`count X of N1 vs X of N2 ...`, or
`count X of N vs P0 ...`), so the family (Boschloo's by default, `using fisher`, `using
barnard`), the alternative and the level are its own. Each test decides every outcome as the
robustness check does (`robustness.tables.events.EventTests` for two proportions,
`robustness.tables.batch.CountTests` for one): the analysis's exact p, decided at the level as
the engine decides it, and the normal-theory counterpart's p (the pooled score z, the z of one
proportion). Power is then the sum over the outcomes (a, b) of
P(a; n1, p1) P(b; n2, p2) [p(a, b) <= level], for both tests alike.

Beside them stands the large-sample formula planners use, on the arcsine scale
(Cohen 1988, Statistical Power Analysis for the Behavioral Sciences, 2nd ed., ch. 6):
h = 2 asin(sqrt p1) - 2 asin(sqrt p2), power = Phi(h sqrt(m) - z) + Phi(-h sqrt(m) - z) with
m = n1 n2 / (n1 + n2) (one proportion: m = n) and z the level's normal quantile (one side only
for a one-sided test).

The smallest n: exact power is not monotone in n (it saw-tooths as the outcomes cross the
level), so sizes are scanned upward from 2 (each group in the ratio of `n`, the first group
counting) until the test reaches the target, and SETTLE sizes further to see whether it dips
below again.
"""
from __future__ import annotations

import dataclasses
import math

import numpy as np

from ..bind import designs
from ..bind.binder import bind
from ..errors import BindError
from ..lazy import stats
from ..robustness.simulate import Rate
from ..syntax import nodes as n
from .result import PowerResult
from .simulate import AtN

MAX_UNITS = 400          # a group, in a scan
SETTLE = 10              # sizes scanned past the first that reaches the target
NOT_FOR_COUNTS = ("datasets", "law", "shift")
SHAPES = ("proportions", "proportion")


def is_two(design) -> bool:
    return isinstance(design, designs.TwoProportionsDesign)


def is_count(design) -> bool:
    return isinstance(design, designs.TwoProportionsDesign) or (
        isinstance(design, designs.TableDesign) and design.form == "proportion")


def _proportion(value: float, span, what: str) -> float:
    if not 0 < value < 1:
        raise BindError(f"{what} {value:g} is not a proportion: give one between 0 and 1",
                        span, hint="e.g. count proportions 0.2 vs 0.6")
    return float(value)


def described_node(layout: n.Layout) -> tuple[n.Count, tuple]:
    """The `count` statement a described count layout stands for (at its first sizes), and its
    proportions: (p1, p2) for two samples, (p, p0) for one."""
    p, q = (_proportion(v, layout.span, w) for v, w in zip(layout.values, ("proportion", "the second proportion")))
    sizes = n.options_of(layout).get("sizes")
    first = sizes.value if sizes is not None else (10,)
    return count_node(layout.span, layout.shape, first, q, layout.options), (p, q)


def count_node(span, shape, sizes, null_value, options) -> n.Count:
    if shape == "proportions":
        n1, n2 = (sizes[0], sizes[0]) if len(sizes) == 1 else sizes[:2]
        subject = n.CountTwoProportions(span, (n1 // 2, n1), (n2 // 2, n2))
    else:
        subject = n.CountProportion(span, sizes[0] // 2, sizes[0], null_value)
    return n.Count(span, subject, tuple(o for o in options if o.key not in POWER_KEYS))


POWER_KEYS = ("datasets", "shift", "significance", "sizes", "law", "target", "seed")


def run(node: n.Power, text, catalog, defaults, progress, alpha, target, sizes,
        design=None) -> PowerResult:
    """Power of a count design by summation (`design`: a pilot's, already bound)."""
    inner = node.analysis
    opts = n.options_of(inner)
    for key in NOT_FOR_COUNTS:
        if key in opts:
            raise BindError(f"'{opts[key].key}' does not apply to counts: their power is summed "
                            "over every outcome, at the proportions given", opts[key].span,
                            hint="drop it; give the proportions: count proportions 0.2 vs 0.6")
    if design is None:
        if sizes is None and target is None:
            raise BindError("a described count design needs its size or a target: n 20, "
                            "or for power 80%", inner.span)
        analysis, props = described_node(inner)
        shape, source = inner.shape, "described"
    else:
        analysis = dataclasses.replace(inner, options=tuple(
            o for o in inner.options if o.key not in POWER_KEYS))
        shape, source = ("proportions" if isinstance(design, designs.TwoProportionsDesign)
                         else "proportion"), "pilot"
        props = pilot_proportions(design)
        if sizes is None and target is None:
            sizes = pilot_sizes(design)
    want = 2 if shape == "proportions" else 1
    if sizes is not None and len(sizes) > want:
        raise BindError(f"'n' gives {len(sizes)} sizes for {want} "
                        f"{'samples' if want > 1 else 'sample'}", opts["sizes"].span)
    if sizes is not None and min(sizes) < 1:
        raise BindError("each sample needs at least 1 trial", opts["sizes"].span)
    ratio = sizes[1] / sizes[0] if sizes is not None and len(sizes) == 2 else 1.0
    null = props[1] if shape == "proportion" else None

    def at(ns: tuple):
        d = bind(count_node(inner.span, shape, ns, null, analysis.options), catalog, defaults)
        return summed(d, shape, props, alpha)

    warnings = []
    if target is None:
        ns = tuple(sizes) * (want // len(sizes)) if len(sizes) < want else tuple(sizes)
        rows = [at(ns)]
        needed = {}
        if rows[0].smallest_p > alpha * (1 + 1e-9):
            warnings.append(f"no outcome of this design can be significant at {alpha:g}: its "
                            f"smallest p is {rows[0].smallest_p:.3g}, so the exact test has no "
                            "power here")
    else:
        rows, needed, dips = scan(at, want, ratio, target, progress)
        for which, k in needed.items():
            words = "exact test" if which == "permutation" else "normal-theory test"
            if k is None:
                warnings.append(f"the {words} does not reach {target:.0%} power by "
                                f"{MAX_UNITS} a group")
            elif dips.get(which):
                warnings.append(f"the {words}'s power dips below {target:.0%} again at n = "
                                f"{dips[which]} (exact power saw-tooths with n)")
    d0 = bind(count_node(inner.span, shape, rows[0].sizes, null, analysis.options),
              catalog, defaults)
    test, normal_test = test_words(d0)
    return PowerResult(text, test, normal_test, _design_words(shape, rows, target, ratio),
                       source, d0.settings.alternative, alpha, "binomial",
                       "binomial outcomes, every one summed", 0.0, _effect_words(shape, props),
                       0, 0, rows, target, needed, warnings, method="summation",
                       formula_words="arcsine normal approximation (Cohen 1988, ch. 6)",
                       allocation=[1.0, ratio] if target is not None and ratio != 1 else None)


def summed(design, shape, props, alpha) -> AtN:
    """Both tests' exact power at the design's sizes, and the formula's."""
    from ..robustness.tables import events
    from ..robustness.tables.batch import CountTests

    if shape == "proportions":
        x1, n1, x2, n2 = design.counts
        a = np.repeat(np.arange(n1 + 1), n2 + 1)
        b = np.tile(np.arange(n2 + 1), n1 + 1)
        tables = np.stack([np.stack([a, n1 - a], 1), np.stack([b, n2 - b], 1)], 1)
        tests = events.tests_for(events.view(design), (alpha,))
        prob = stats.binom.pmf(a, n1, props[0]) * stats.binom.pmf(b, n2, props[1])
        sizes = (int(n1), int(n2))
    else:
        trials = int(design.table.sum())
        a = np.arange(trials + 1)
        tables = np.stack([a, trials - a], 1)[:, None, :]
        tests = CountTests(design)
        prob = stats.binom.pmf(a, trials, props[0])
        sizes = (trials,)
    exact_p = tests.exact_p(tables)
    normal_p = np.nan_to_num(tests.normal_p(tables), nan=1.0)
    cut = alpha * (1 + 1e-9)
    power = float(np.sum(prob[exact_p <= cut]))
    normal = float(np.sum(prob[normal_p <= cut]))
    return AtN(sizes, Rate(min(power, 1.0), 0.0), Rate(min(normal, 1.0), 0.0), True,
               int(len(tables)), float(exact_p.min()),
               formula=formula_power(props, sizes, alpha, design.settings.alternative))


def formula_power(props, sizes, alpha, alternative) -> float:
    """The arcsine normal approximation's power (Cohen 1988, ch. 6)."""
    h = 2 * math.asin(math.sqrt(props[0])) - 2 * math.asin(math.sqrt(props[1]))
    m = sizes[0] * sizes[1] / (sizes[0] + sizes[1]) if len(sizes) == 2 else sizes[0]
    shift = h * math.sqrt(m)
    norm = stats.norm
    if alternative == "two-sided":
        z = norm.isf(alpha / 2)
        return float(norm.sf(z - shift) + norm.cdf(-z - shift))
    z = norm.isf(alpha)
    return float(norm.sf(z - shift) if alternative == "higher" else norm.cdf(-z - shift))


def scan(at, want, ratio, target, progress):
    """Sizes 2, 3, ... (the second group in `ratio`) until both tests reach the target and
    SETTLE sizes more have been seen (or MAX_UNITS): (rows, needed, dips)."""
    rows, needed, dips = [], {"permutation": None, "normal": None}, {}
    k, past = 2, 0
    while k <= MAX_UNITS:
        ns = (k,) if want == 1 else (k, max(1, int(round(k * ratio))))
        progress.step(min(0.95, k / MAX_UNITS), f"power: summing n = {' + '.join(map(str, ns))}")
        r = at(ns)
        rows.append(r)
        for which in needed:
            value = getattr(r, which).value
            if needed[which] is None and value >= target:
                needed[which] = k
            elif needed[which] is not None and value < target and which not in dips:
                dips[which] = k
        if all(v is not None for v in needed.values()):
            past += 1
            if past > SETTLE:
                break
        k += 1
    progress.step(1.0, "power: done")
    return _thin(rows, needed), needed, dips


def _thin(rows, needed):
    """Every size near the answers, and a few on the way there."""
    keep = {0, len(rows) - 1}
    firsts = [r.sizes[0] for r in rows]
    for k in needed.values():
        if k is not None:
            i = firsts.index(k)
            keep.update(range(max(0, i - 2), min(len(rows), i + 3)))
    step = max(1, len(rows) // 8)
    keep.update(range(0, len(rows), step))
    return [rows[i] for i in sorted(keep)]


def pilot_proportions(design) -> tuple:
    if isinstance(design, designs.TwoProportionsDesign):
        x1, n1, x2, n2 = design.counts
        return (x1 / n1, x2 / n2)
    t = design.table
    return (float(t[0, 0]) / float(t.sum()), float(design.reference))


def pilot_sizes(design) -> tuple:
    if isinstance(design, designs.TwoProportionsDesign):
        return (design.counts[1], design.counts[3])
    return (int(design.table.sum()),)


def test_words(design) -> tuple:
    from ..families import registry

    family = registry.find(design.settings.kind, design.settings.family)
    title = family.title if family is not None else design.settings.family
    if isinstance(design, designs.TwoProportionsDesign):
        return title, "score z (pooled) for p1 - p2"
    return title, "normal approximation z for one proportion"


def _design_words(shape, rows, target, ratio) -> str:
    if shape == "proportion":
        return "one sample of n trials" if target is not None else f"one sample of {rows[0].sizes[0]} trials"
    if target is not None:
        return ("2 samples of n trials each" if ratio == 1 else
                f"2 samples of n and {ratio:g} n trials")
    return "2 samples of " + " + ".join(str(s) for s in rows[0].sizes) + " trials"


def _effect_words(shape, props) -> str:
    if shape == "proportion":
        return f"a true proportion of {props[0]:.4g}, tested against {props[1]:.4g}"
    return f"proportions {props[0]:.4g} and {props[1]:.4g} (difference {props[0] - props[1]:+.4g})"

