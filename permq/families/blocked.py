"""Blocked designs: two groups within blocks of any size (stratified), complete blocks
(Friedman, the F within blocks) and ordered treatments within blocks (Page)."""
from __future__ import annotations

from ..lazy import module
from ..engine.core.pvalues import TWO_SIDED_LINEAR, TWO_SIDED_QUADRATIC
from ..plan.planner import make_plan
from ..result import Result
from .registry import Family, Reported, effect_pieces

blocks_engine = module("permq.engine.blocks")      # loaded when a statement first runs
normal_blocks = module("permq.normal.blocks")
normal_k = module("permq.normal.ksample")

# the blocked engine's test for each (kind, family)
TESTS = {("stratified", "ranks"): "stratified-ranks", ("stratified", "means"): "stratified-means",
         ("blocked", "ranks"): "friedman", ("blocked", "means"): "within-block-f",
         ("ordered-blocked", "ranks"): "page"}


def blocked_test(design) -> str:
    return TESTS[(design.settings.kind, design.settings.family)]


def plan(design):
    s = design.settings
    test = blocked_test(design)
    cands = lambda draws: blocks_engine.candidates(test, design.values, design.groups,
                                                   design.blocks, draws,
                                                   n_groups=len(design.labels),
                                                   block_names=design.block_labels,
                                                   group_names=design.labels)
    return make_plan("blocked", test, s, cands)


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    v, g = design.values, design.groups
    test = blocked_test(design)
    out = blocks_engine.run(test, v, g, design.blocks, s.alternative, the_plan.chosen.algorithm,
                            the_plan.draws, the_plan.seed, progress, n_groups=len(design.labels),
                            block_names=design.block_labels, group_names=design.labels,
                            limits=the_plan.limits)
    where = f"{len(design.block_labels)} blocks"
    labels = design.labels
    if s.kind == "stratified":
        effect, rule = f"{labels[0]} - {labels[1]} within {where}", TWO_SIDED_LINEAR
    elif s.kind == "ordered-blocked":
        effect, rule = f"a rise along {' < '.join(labels)} within {where}", TWO_SIDED_LINEAR
    else:
        effect, rule = f"differences among {', '.join(labels)} within {where}", TWO_SIDED_QUADRATIC
    return Result(statement, design.kind, s.alternative, out, NORMAL[test](design), None,
                  effect=effect, groups=normal_k.group_summaries(v, g, labels),
                  two_sided_rule=rule, warnings=list(design.warnings))


def _args(d):
    return d.values, d.groups, d.blocks


NORMAL = {
    "stratified-means": lambda d: normal_blocks.stratified_mean_t(*_args(d), d.settings.alternative,
                                                                  d.settings.level),
    "stratified-ranks": lambda d: normal_blocks.stratified_rank_sum_normal(*_args(d),
                                                                           d.settings.alternative),
    "friedman": lambda d: normal_blocks.friedman_chi_square(*_args(d), len(d.labels)),
    "within-block-f": lambda d: normal_blocks.additive_f(*_args(d)),
    "page": lambda d: normal_blocks.page_normal(*_args(d), d.settings.alternative, len(d.labels)),
}


def _check(form, scores, counterpart, normal_p, reported="as_is"):
    """The robustness check of a blocked family: units permuted within their block."""
    def check(design):
        from ..robustness import counterparts, reported as rep, scoring
        from ..robustness.spec import Check

        return Check(form, getattr(scoring, scores), counterpart, getattr(counterparts, normal_p),
                     getattr(rep, reported), test=blocked_test(design))
    return check


FAMILIES = [
    Family("means", ("stratified",), "stratified permutation test of the difference in means",
           "", plan, execute, "t for the group effect in the additive model with blocks",
           robustness=_check("linear", "values",
                             "t for the group effect, additive model with blocks", "blocked_t"),
           default_in=("stratified",)),
    Family("ranks", ("stratified",), "stratified Wilcoxon rank-sum test (ranks within blocks)",
           "", plan, execute, "normal approximation to the stratified rank sum",
           robustness=_check("linear", "ranks_within",
                             "normal approximation to the stratified rank sum",
                             "stratified_rank_sum_z")),
    Family("means", ("blocked",), "permutation F within blocks", "", plan, execute,
           "F for treatments in the additive two-way model",
           robustness=_check("quadratic", "values", "F for treatments, additive two-way model",
                             "additive_f", "within_block_f"),
           default_in=("blocked",), effect_sizes=effect_pieces("partial_eta_squared")),
    Family("ranks", ("blocked",), "Friedman test (mid-ranks within blocks)", "", plan, execute,
           "chi-square approximation to Friedman's statistic",
           robustness=_check("quadratic", "ranks_within",
                             "chi-square approximation to Friedman's statistic",
                             "friedman_chi_square", "friedman"),
           effect_sizes=effect_pieces("kendalls_w")),
    Family("ranks", ("ordered-blocked",), "Page's test for ordered treatments", "", plan,
           execute, "normal approximation to Page's L",
           robustness=_check("linear", "ranks_within", "normal approximation to Page's L",
                             "page_z"),
           default_in=("ordered-blocked",), effect_sizes=effect_pieces("kendalls_w")),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(('blocked',), 'Friedman',
             'Friedman test',
             ('friedman-1937',)),
    Reported(('blocked',), 'Page',
             "Page's test for ordered treatments",
             ('page-1963',)),
    Reported(('blocked',), 'F for treatments',
             'permutation F test within blocks',
             ('pitman-1938',)),
    Reported(('blocked',), 'stratified sum',
             'stratified permutation test of the difference in means (within-block permutation)',
             ('pitman-1937',)),
    Reported(('blocked',), 'stratified rank sum',
             'stratified Wilcoxon rank-sum test (ranks within blocks)',
             ('wilcoxon-1945', 'lehmann-1975')),
]
