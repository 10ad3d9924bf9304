"""Three or more groups, ordered groups and blocked designs."""
from __future__ import annotations

from ..engine import blocks as blocks_engine
from ..engine import ksample, ordered
from ..engine.core.pvalues import TWO_SIDED_LINEAR, TWO_SIDED_QUADRATIC
from ..normal import blocks as normal_blocks
from ..normal import ksample as normal_k
from ..plan.planner import make_plan
from ..result import Result

K_NORMAL = {"means": normal_k.one_way_anova, "ranks": normal_k.kruskal_chi_square,
            "normal-scores": normal_k.normal_scores_chi_square,
            "medians": normal_k.median_chi_square}


def blocked_test(design) -> str:
    fam = design.settings.family
    if len(design.labels) == 2:
        return "stratified-ranks" if fam == "ranks" else "stratified-means"
    if design.ordered:
        return "page"
    return "friedman" if fam == "ranks" else "within-block-f"


def plan(design):
    s = design.settings
    v, g = design.values, design.groups
    if design.kind == "blocked":
        test = blocked_test(design)
        cands = lambda draws: blocks_engine.candidates(test, v, g, design.blocks, draws,
                                                       n_groups=len(design.labels),
                                                       block_names=design.block_labels,
                                                       group_names=design.labels)
        return make_plan("blocked", test, s, cands)
    if design.kind == "ordered":
        fam = ordered.FAMILIES[s.family]
        if s.family == "means":
            cands = lambda draws: fam.candidates(v, g, design.scores, draws)
        else:
            cands = lambda draws: fam.candidates(v, g, draws)
        return make_plan("ordered", s.family, s, cands)
    fam = ksample.FAMILIES[s.family]
    return make_plan("k-sample", s.family, s, lambda draws: fam.candidates(v, g, draws))


def execute(design, the_plan, progress, statement: str = "") -> Result:
    s = design.settings
    v, g = design.values, design.groups
    alg, draws, seed = the_plan.chosen.algorithm, the_plan.draws, the_plan.seed
    also, estimate, rule = [], None, TWO_SIDED_QUADRATIC
    if design.kind == "blocked":
        test = blocked_test(design)
        g, labels = _first_minus_second(design)
        out = blocks_engine.run(test, v, g, design.blocks, s.alternative, alg, draws, seed,
                                progress, n_groups=len(design.labels),
                                block_names=design.block_labels, group_names=labels,
                                limits=the_plan.limits)
        normal = _blocked_normal(test, design, g)
        if test.startswith("stratified") or test == "page":
            rule = TWO_SIDED_LINEAR
        effect = (f"{labels[0]} - {labels[1]} within {_blocks_word(design)}"
                  if len(design.labels) == 2 else
                  f"differences among {', '.join(design.labels)} within {_blocks_word(design)}")
        if design.ordered and len(design.labels) == 2:
            effect += f" (a rise along {' < '.join(design.labels)})"
        if test == "page":
            effect = f"a rise along {' < '.join(design.labels)} within {_blocks_word(design)}"
    elif design.kind == "ordered":
        fam = ordered.FAMILIES[s.family]
        if s.family == "means":
            out = fam.run(v, g, s.alternative, alg, draws, seed, progress, scores=design.scores)
            normal = normal_k.linear_trend_t(v, g, design.scores, s.alternative, s.level)
        else:
            out = fam.run(v, g, s.alternative, alg, draws, seed, progress)
            normal = normal_k.jonckheere_normal(v, g, s.alternative)
            also.append(normal_k.linear_trend_t(v, g, design.scores, s.alternative, s.level))
        estimate = ordered.slope_estimate(v, g, design.scores, s.level, s.alternative, progress,
                                          limits=the_plan.limits)
        rule = TWO_SIDED_LINEAR
        effect = f"a rise along {' < '.join(design.labels)}"
    else:
        out = ksample.FAMILIES[s.family].run(v, g, s.alternative, alg, draws, seed, progress)
        normal = K_NORMAL[s.family](v, g)
        if s.family == "means":
            also.append(normal_k.welch_anova(v, g))
        effect = f"differences among {', '.join(design.labels)}"
    groups = normal_k.group_summaries(v, design.groups, design.labels)
    return Result(statement, design.kind, s.alternative, out, normal, estimate, effect=effect,
                  groups=groups, two_sided_rule=rule, warnings=list(design.warnings),
                  also_normal=also)


def _first_minus_second(design):
    """Group codes and labels with the effect's first level as code 0: two ordered levels
    within blocks test a rise along the order, so the later level comes first (its sum is the
    statistic, and 'higher' means it lies above the earlier one)."""
    if design.ordered and len(design.labels) == 2:
        return 1 - design.groups, design.labels[::-1]
    return design.groups, design.labels


def _blocks_word(design) -> str:
    return f"{len(design.block_labels)} blocks"


def _blocked_normal(test, design, g):
    v, b, s = design.values, design.blocks, design.settings
    if test == "stratified-means":
        return normal_blocks.stratified_mean_t(v, g, b, s.alternative, s.level)
    if test == "stratified-ranks":
        return normal_blocks.stratified_rank_sum_normal(v, g, b, s.alternative)
    if test == "friedman":
        return normal_blocks.friedman_chi_square(v, g, b, len(design.labels))
    if test == "page":
        return normal_blocks.page_normal(v, g, b, s.alternative, len(design.labels))
    return normal_blocks.additive_f(v, g, b)
