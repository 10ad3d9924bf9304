"""`robustness STATEMENT`: the statement's own analysis, then its design under the panel.

The options that belong to the check (datasets, shift, significance) are taken off the inner
statement, which is then bound as usual, so that its design (group sizes, blocks, values of
x) and its family are the user's own. `picture "file"` (any analysis takes it) asks for the
panel as a picture file; the session writes it.
"""
from __future__ import annotations

import dataclasses
import time
from typing import Optional

from ..bind import designs
from ..bind.binder import bind
from ..errors import BindError
from ..families.registry import family_for
from ..result import Note
from ..syntax import nodes as n
from . import coverage, laws, report
from .tables import check as table_check
from .tables import events as event_check
from .tables import several_paired
from .arrangements import EXACT_LIMIT, reference_size
from .diagnostics import attach as attach_diagnostics
from .pictures import null_picture
from .problem import pattern_for, problem_for
from .simulate import BLOCK, PERMUTATIONS, simulate
from .spec import CensoredCheck

OPTIONS = ("datasets", "shift", "significance")
DEFAULT_DATASETS = 2000
DEFAULT_SIGNIFICANCE = 0.05


@dataclasses.dataclass(frozen=True)
class Check:
    datasets: int = DEFAULT_DATASETS
    alpha: float = DEFAULT_SIGNIFICANCE
    shift: Optional[tuple] = None          # (size, in_sd) or None for the observed effect
    picture: Optional[str] = None


def significance_value(opt: n.Option) -> float:
    value = opt.value
    if isinstance(value, n.Percent):
        alpha = value.value / 100.0
    else:
        alpha = float(value)
        if alpha >= 1:
            raise BindError(f"significance {alpha:g} is not a level", opt.span,
                            hint=f"write {alpha:g}% or {alpha / 100:g}")
    if not 0 < alpha < 0.5:
        raise BindError("the significance level must lie between 0% and 50%", opt.span)
    return alpha


def check_settings(opts: dict) -> Check:
    datasets = DEFAULT_DATASETS
    if "datasets" in opts:
        datasets = int(opts["datasets"].value)
        if not 100 <= datasets <= 1_000_000:
            raise BindError("'datasets' takes 100 to 1,000,000 data sets a law",
                            opts["datasets"].span)
    alpha = significance_value(opts["significance"]) if "significance" in opts else \
        DEFAULT_SIGNIFICANCE
    shift = tuple(opts["shift"].value) if "shift" in opts else None
    picture = opts["picture"].value if "picture" in opts else None
    return Check(datasets, alpha, shift, picture)


def without_check_options(node):
    return dataclasses.replace(node, options=tuple(o for o in node.options
                                                   if o.key not in OPTIONS))


def run(node: n.Robustness, text: str, catalog, defaults, progress, seed: int):
    """`seed` is the statement's, decided by the pipeline (`pipeline.seed_for`)."""
    inner = node.analysis
    check = check_settings(n.options_of(inner))
    design = bind(without_check_options(inner), catalog, defaults)
    design = dataclasses.replace(design, settings=dataclasses.replace(design.settings,
                                                                      seed=int(seed)))
    if isinstance(_declared_check(design), CensoredCheck):
        from .censored.check import check_events

        observed = _observed(design, text, progress, check)
        return check_events(text, design, observed, check, int(seed), progress,
                            null_picture(design, observed.outcome, int(seed)),
                            list(design.warnings))
    several = several_paired.view(design)   # several yes/no outcomes, units x columns
    counts = several if several is not None else event_check.view(design)  # event forms too
    if counts is not None or isinstance(design, designs.TableDesign):
        target = design if counts is None else counts
        effect = _table_effect(target, check, inner)    # before the analysis runs
        observed = _observed(design, text, progress, check)
        tests = (None if counts is None else several_paired.tests_for(counts)
                 if several is not None else event_check.tests_for(counts, (check.alpha,)))
        return table_check.check_table(text, target, observed, check, int(seed), progress,
                                       null_picture(design, observed.outcome, int(seed)),
                                       list(design.warnings), effect, tests)
    problem = problem_for(design)
    pattern, shift, shift_sd = pattern_for(problem, check.shift)
    observed = _observed(design, text, progress, check)
    no_cover = coverage.applies(problem, observed)
    level = design.settings.level
    sim = simulate(problem, pattern, check.datasets, check.alpha, int(seed), progress,
                   cover_level=None if no_cover else level,
                   cover_exact=not coverage.exact_applies(problem, observed))
    picture = null_picture(design, observed.outcome, int(seed))
    warnings = list(design.warnings) + [why for _, why in problem.check.leaves_out]
    from .control import spread_note
    from .spread import unequal_spread_test

    warnings += [note for note in (spread_note(problem, sim, unequal_spread_test(design)),)
                 if note]
    if problem.kind == "paired":
        warnings.append("pairs are simulated as two values from the law, so their differences "
                        "are symmetric under the null, as random order within a pair makes them")
    if problem.kind == "one-sample":
        warnings.append("one sample: errors are centred so that the family's parameter (mean, "
                        "pseudo-median or median) is zero under the null")
    return report.build(text, problem, observed, sim, shift, shift_sd,
                        _shift_words(problem, check.shift, shift, shift_sd), picture, warnings,
                        cover=(level, no_cover))


def explain(node: n.Robustness, text: str, catalog, defaults, seed: int) -> Note:
    """`explain robustness STATEMENT`: the analysis's plan and what the check would do, with
    its time estimated from a pilot of one block of data sets under one law (continuous
    responses; for counts the time depends on how many sets of margins the schemes give)."""
    inner = node.analysis
    check = check_settings(n.options_of(inner))
    design = bind(without_check_options(inner), catalog, defaults)
    design = dataclasses.replace(design, settings=dataclasses.replace(design.settings, seed=seed))
    the_plan = family_for(design).plan(design)
    seconds = None
    several = several_paired.view(design)
    counts = several if several is not None else event_check.view(design)
    if isinstance(_declared_check(design), CensoredCheck):
        what = (f"the check: {check.datasets:,} simulated data sets a scheme of event times "
                "and censoring, under the null and at a hazard ratio, each given both tests on "
                "its own risk sets; not estimated")
    elif counts is not None or isinstance(design, designs.TableDesign):
        _table_effect(design if counts is None else counts, check, inner)
        what = (f"the check: {check.datasets:,} simulated tables a sampling scheme, under the "
                "null and at the effect, each given the exact test; its time depends on how "
                "many sets of margins the schemes give, so it is not estimated")
    else:
        problem = problem_for(design)
        pattern, _, _ = pattern_for(problem, check.shift)
        panel = laws.panel_for(problem)
        size = reference_size(problem)
        ref = (f"all {size:,} arrangements (exact)" if size <= EXACT_LIMIT else
               f"{PERMUTATIONS:,} Monte Carlo arrangements")
        # two pilot blocks: the first also pays what is done once (loading compiled loops,
        # imports), which the whole check pays once too, not once a block
        times = []
        for _ in range(2):
            started = time.perf_counter()
            simulate(problem, pattern, BLOCK, check.alpha, 1, panel=panel[:1], workers=1)
            times.append(time.perf_counter() - started)
        blocks = len(panel) * check.datasets / BLOCK
        seconds = max(times[0] - times[1], 0.0) + times[1] * blocks
        what = (f"the check: {len(panel)} error laws x {check.datasets:,} data sets, under the "
                f"null and at the shift, each tested against {ref}; about {seconds:.2g} s "
                f"(timed on a pilot of twice {BLOCK:,} data sets)")
    return Note(text, f"{the_plan}\n{what}",
                {"plan": str(the_plan), "method": the_plan.method,
                 "algorithm": the_plan.chosen.description, "check": what,
                 "estimated_seconds": seconds})


def _declared_check(design):
    """The family's declared check, or None where it has none (check_for says why)."""
    family = family_for(design)
    return family.robustness(design) if family.robustness is not None else None


def _table_effect(design, check, inner):
    """The effect of a count design's check; a `shift` that does not fit is marked."""
    try:
        if isinstance(design, several_paired.SeveralView):
            return several_paired.effect_for(design, check.shift)
        if event_check.is_view(design):
            return event_check.effect_for(design, check.shift)
        return table_check.effect_for(design, check.shift)
    except BindError as err:
        shift = n.options_of(inner).get("shift")
        if err.span is None and shift is not None:
            err.span = shift.span
        raise


def _observed(design, text, progress, check):
    """The statement's own analysis of the data as they are, with its diagnostics."""
    handler = family_for(design)
    observed = handler.execute(design, handler.plan(design), progress, text)
    if not hasattr(observed, "outcome"):   # several tests at once: the family's global test
        observed = handler.extra["global_test"](design, observed)
    attach_diagnostics(design, observed, check.alpha)
    return observed


def _shift_words(problem, asked, shift, shift_sd) -> str:
    per = {"slope": " per sd of x", "ordered": " across the doses"}.get(problem.kind, "")
    if not problem.per_sd > 0:
        return f"a shift of {_g(shift_sd)} sd{per} of the simulated errors (the data have no spread)"
    size = f"{_g(shift)} = {_g(shift_sd)} sd{per} (sd = {problem.sd_words} {_g(problem.sd)})"
    if asked is None:
        return f"the observed {problem.effect_words}, {size}"
    return f"a {problem.effect_words} of {size}"


def _g(v: float) -> str:
    return f"{v:.4g}"


def replayable(text: str, result) -> str:
    """The statement with its seed pinned, so that a replay gives the same numbers."""
    from ..plan.seeds import pinned

    return pinned(text, result.seed)
