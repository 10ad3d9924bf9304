"""`power STATEMENT` and `power LAYOUT`: power by simulation, and the n that reaches a target.

    power compare mass by recipe levels "A", "B" n 8 shift 1 sd    the pilot's design at 8 a group
    power groups 6, 6 shift 1 sd using ranks for power 80%         before the data exist

The options that belong to power (n, law, for power, shift, datasets, significance) are taken
off the statement, which is then bound as usual (a layout as an inline comparison, see
`layout.described`), so that the family, the alternative and the level are the analysis's
own. Effects are in standard deviations of the errors: `shift 1 sd`, or `shift 2` in the
data's units (a pilot's sd), or, with a pilot and no shift, the pilot's observed effect.
"""
from __future__ import annotations

import dataclasses
from typing import Callable, Optional

import numpy as np

from ..bind import designs
from ..bind.binder import bind
from ..errors import BindError, PlanError
from ..robustness import laws as L
from ..robustness.batch import normal_test_name
from ..robustness.executor import significance_value
from ..robustness.problem import data_row, problem_for
from ..syntax import nodes as n
from ..bind.common import suggest
from . import counts, layout as lay
from .result import PowerResult
from .simulate import floor_of, power_at, search

OPTIONS = ("datasets", "shift", "significance", "sizes", "law", "target")
DEFAULT_DATASETS = 2000
LAWS = tuple(law.key for law in L.SHAPES) + ("pilot",)


def _options(opts: dict, described: bool):
    datasets = DEFAULT_DATASETS
    if "datasets" in opts:
        datasets = int(opts["datasets"].value)
        if not 100 <= datasets <= 1_000_000:
            raise BindError("'datasets' takes 100 to 1,000,000 data sets", opts["datasets"].span)
    alpha = significance_value(opts["significance"]) if "significance" in opts else 0.05
    law = "normal"
    if "law" in opts:
        law = opts["law"].value
        if law not in LAWS:
            raise BindError(f"no error law '{law}'", opts["law"].span,
                            hint=suggest(law, list(LAWS), "laws"))
        if law == "pilot" and described:
            raise BindError("'law pilot' resamples a pilot's residuals; a described layout "
                            "has none", opts["law"].span, hint="name a law: law normal, law t3")
    target = None
    if "target" in opts:
        v = opts["target"].value
        target = v.value / 100.0 if isinstance(v, n.Percent) else float(v)
        if target >= 1 and not isinstance(v, n.Percent):
            target = target / 100.0
        if not alpha < target < 1:
            raise BindError(f"a target power lies between the level ({alpha:g}) and 100%",
                            opts["target"].span)
    sizes = tuple(opts["sizes"].value) if "sizes" in opts else None
    shift = tuple(opts["shift"].value) if "shift" in opts else None
    return datasets, alpha, law, target, sizes, shift


@dataclasses.dataclass
class Setup:
    """A power statement taken apart: what `run` simulates and `explain` describes."""

    design: object
    base: object                  # the robustness problem at the design's own sizes
    described: bool
    alpha: float
    target: Optional[float]
    sizes: Optional[tuple]
    datasets: int
    law_key: str
    law_words: str
    shift_sd: float
    words: str
    errors: object
    pattern_of: Callable
    ratio: tuple                  # a search's allocation (layout.allocation), () for equal


@dataclasses.dataclass
class CountSetup:
    """A count design's power statement: summed, not simulated (power/counts.py)."""

    alpha: float
    target: Optional[float]
    sizes: Optional[tuple]
    design: object = None         # a pilot's, bound; None for a described one


def prepare(node: n.Power, catalog, defaults, seed: int):
    """The statement's options checked, its analysis bound, its effect and errors set up."""
    inner = node.analysis
    described = isinstance(inner, n.Layout)
    if described and inner.shape in counts.SHAPES:
        _, alpha, _, target, sizes, _ = _options(n.options_of(inner), False)
        return CountSetup(alpha, target, sizes)
    analysis = lay.described(inner) if described else inner
    opts = n.options_of(analysis)
    datasets, alpha, law_key, target, sizes, shift = _options(opts, described)
    if described and shift is None:
        raise BindError("a described layout needs the effect to power: shift 1 sd", inner.span)
    if described and shift is not None and not shift[1]:
        raise BindError("a described layout has no data to give the shift units",
                        opts["shift"].span, hint=f"give it in sd: shift {shift[0]:g} sd")
    design = bind(dataclasses.replace(analysis, options=tuple(
        o for o in analysis.options if o.key not in OPTIONS)), catalog, defaults)
    if counts.is_count(design):
        return CountSetup(alpha, target, sizes, design)
    if not isinstance(design, (designs.TwoSampleDesign, designs.OneSampleDesign,
                               designs.GroupsDesign, designs.AssociationDesign)):
        raise PlanError(f"power is not available for {design.kind} analyses here",
                        hint="it covers two samples, pairs, one sample, groups, slopes, "
                             "two proportions and one proportion")
    if (sizes is not None or target is not None) and lay.can_resize(design):
        raise PlanError(lay.can_resize(design), span=(opts.get("sizes") or opts["target"]).span)
    base = problem_for(design)
    shift_sd, words = _effect(base, shift, described)
    own = base.unit_pattern * shift_sd if shift is not None or described else \
        base.observed_pattern
    per_group = lay.group_pattern(base, own)

    def pattern_of(problem):
        """The effect per unit: the design's own at its own layout (a slope's varies with x),
        else the group's value (constant within groups in the layouts that resize)."""
        if problem.n == base.n and np.array_equal(problem.codes, base.codes):
            return own
        return per_group[problem.codes]

    law, residuals, law_words = None, None, "residuals of the pilot, resampled"
    if law_key == "pilot":
        residuals = _pilot_residuals(design, base)
    else:
        law = L.BY_KEY[law_key]
        law_words = law.words
    errors = lay.Errors(law, base.kind, base.check.centre, datasets, int(seed), residuals)
    ratio = _allocation(design, sizes, described) if target is not None else ()
    return Setup(design, base, described, alpha, target, sizes, datasets, law_key, law_words,
                 shift_sd, words, errors, pattern_of, ratio)


def run(node: n.Power, text: str, catalog, defaults, progress, seed: int) -> PowerResult:
    s = prepare(node, catalog, defaults, seed)
    if isinstance(s, CountSetup):
        return counts.run(node, text, catalog, defaults, progress, s.alpha, s.target, s.sizes,
                          s.design)
    design, base, described, alpha, target, sizes = (s.design, s.base, s.described, s.alpha,
                                                      s.target, s.sizes)
    pattern_of, errors, ratio = s.pattern_of, s.errors, s.ratio
    datasets, law_key, law_words, shift_sd, words = (s.datasets, s.law_key, s.law_words,
                                                     s.shift_sd, s.words)
    warnings = list(design.warnings)
    if target is not None:
        def problem_at(k):
            return problem_for(lay.resized(design, lay.allocated(k, ratio)))
        seen, needed = search(problem_at, pattern_of, errors, alpha, int(seed), target, progress)
        rows = [seen[k] for k in sorted(seen)]
        for which, k in needed.items():
            if k is None:
                warnings.append(f"the {'permutation' if which == 'permutation' else 'normal-theory'} "
                                f"test does not reach {target:.0%} power by {lay.MAX_UNITS} a group")
        design_words = _shape_words(design, per_group_search=True, ratio=ratio)
    else:
        problem = base if sizes is None else problem_for(lay.resized(design, sizes))
        rows = [power_at(problem, pattern_of, errors, alpha, int(seed), progress)]
        needed = {}
        design_words = problem.design_words if not described else _shape_words(
            lay.resized(design, sizes) if sizes else design)
        floor, size = floor_of(problem)
        if floor > alpha * (1 + 1e-9):
            side = "two-sided" if problem.alternative == "two-sided" else "one-sided"
            warnings.append(f"no outcome of this design can be significant at {alpha:g}: its "
                            f"{side} p is at least {floor:.3g} (reference set of {size:,} "
                            "arrangements), so the permutation test has no power here")
    if any(not r.exact for r in rows):
        warnings.append("where a design has more than 20,000 arrangements, each data set is "
                        "tested against 999 random ones (the analysis itself would use more, "
                        "and has a little more power)")
    if base.kind == "paired":
        warnings.append("pairs are simulated as two values from the law: their differences "
                        "are symmetric")
    from ..families import registry

    family = registry.find(design.settings.kind, design.settings.family)
    title = family.title if family is not None else base.family
    return PowerResult(text, title, normal_test_name(base), design_words,
                       "described" if described else "pilot", base.alternative, alpha,
                       law_key, law_words, shift_sd, words, datasets, int(seed), rows, target,
                       needed, warnings, allocation=list(ratio) or None)


def _allocation(design, sizes, described) -> tuple:
    """The search's allocation: `n`'s sizes when it gives several, else a described layout's
    own; a pilot's sizes are what the pilot happened to be, so its search is equal."""
    if sizes is not None and len(sizes) > 1:
        k = len(lay.sizes_of(design))
        if len(sizes) != k:
            raise BindError(f"'n' gives {len(sizes)} sizes for {k} groups; give one (every "
                            f"group) or {k}")
        return lay.allocation(sizes)
    return lay.allocation(lay.sizes_of(design)) if described else ()


def _effect(base, shift, described) -> tuple[float, str]:
    if shift is not None and shift[1]:
        return float(shift[0]), f"{base.effect_words} of {float(shift[0]):g} sd"
    if not np.isfinite(base.per_sd) or base.per_sd <= 0:
        raise PlanError("the pilot has no spread, so its effect cannot be put in standard "
                        "deviations", hint="give it in standard deviations: shift 1 sd")
    if shift is not None:
        sd = float(shift[0]) / base.per_sd
        return sd, (f"{base.effect_words} of {float(shift[0]):g} = {sd:.3g} sd "
                    f"({base.sd_words} {base.sd:.4g})")
    sd = base.effect / base.per_sd
    return sd, (f"the pilot's {base.effect_words}, {base.effect:.4g} = {sd:.3g} sd "
                f"({base.sd_words} {base.sd:.4g})")


def _pilot_residuals(design, base) -> np.ndarray:
    """The pilot's residuals about its group means (its fit), standardised to mean square 1."""
    y = data_row(design)
    if base.kind in ("paired", "one-sample"):
        r = y - y.mean()
    elif base.kind == "slope":
        xc = base.x - base.x.mean()
        r = y - y.mean() - (xc @ y) / (xc @ xc) * xc
    else:
        r = y - (np.bincount(base.codes, weights=y) / np.bincount(base.codes))[base.codes]
    ms = float(np.mean(r * r))
    if not ms > 0:
        raise PlanError("the pilot's residuals are all zero, so they cannot be resampled",
                        hint="name a law: law normal")
    return r / np.sqrt(ms)


def _shape_words(design, per_group_search: bool = False, ratio: tuple = ()) -> str:
    sizes = lay.sizes_of(design)
    if per_group_search:
        if isinstance(design, designs.OneSampleDesign):
            return "pairs" if design.kind == "paired" else "one sample"
        if ratio:
            return f"{len(sizes)} groups of " + " + ".join(
                "n" if r == 1 else f"{r:.3g} n" for r in ratio)
        return f"{len(sizes)} groups of n each"
    if isinstance(design, designs.OneSampleDesign):
        return f"{sizes[0]} pairs" if design.kind == "paired" else f"one sample of {sizes[0]}"
    return f"{len(sizes)} groups of " + " + ".join(str(s) for s in sizes)
