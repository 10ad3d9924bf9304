"""The smallest attainable p of a result or a plan, and the warning when it is above the level.

The numbers come from `engine.core.attainable`; this module picks the basis a result or a
plan has (the engine's exact law, the size of a uniform reference set, the Monte Carlo
draws) and attaches the record (`extra["smallest_p"]`, a warning) to results.

A uniform reference set (every arrangement equally likely) is what the permutation designs
have: two samples, paired and one-sample sign flips, groups, blocks, relations. The count
forms' reference sets are tables of unequal probability, so their size says nothing about the
smallest p; they get one only from the exact law their engine keeps.
"""
from __future__ import annotations

from typing import Optional

from ..bind import designs
from ..engine.core import attainable as at

UNIFORM = (designs.TwoSampleDesign, designs.OneSampleDesign, designs.GroupsDesign,
           designs.AssociationDesign, designs.AdjustedDesign)
QUADRATIC_KINDS = ("k-sample", "blocked")


def alpha_of(settings) -> float:
    return round(1.0 - float(settings.level), 10)


def symmetric(design) -> bool:
    """Does the layout mirror its extremes (T - E0 T and its negative equally likely)?"""
    if isinstance(design, designs.OneSampleDesign):
        return True
    if isinstance(design, designs.TwoSampleDesign):
        return len(design.x) == len(design.y)
    return False


def design_rule(design) -> str:
    kind = getattr(design.settings, "kind", "") or getattr(design, "kind", "")
    return "upper" if kind in QUADRATIC_KINDS else "linear"


def for_result(design, result) -> Optional[at.Attainable]:
    o = result.outcome
    rule = at.rule_of(result.two_sided_rule)
    if o.method == "exact":
        if o.null_support is not None and o.null_probs is not None and len(o.null_probs):
            return at.from_law(o.null_support, o.null_probs, rule)
        if isinstance(design, UNIFORM) and o.arrangements and o.arrangements != float("inf"):
            return at.from_count(o.arrangements, symmetric(design), rule)
        return None
    if o.draws:
        return at.from_draws(int(o.draws))
    return None


def for_plan(design, plan) -> Optional[at.Attainable]:
    c = plan.chosen
    if c.exact:
        if isinstance(design, UNIFORM) and c.arrangements:
            return at.from_count(c.arrangements, symmetric(design), design_rule(design))
        return None
    return at.from_draws(int(plan.draws))


def attach(design, result) -> None:
    """extra["smallest_p"] and, when no outcome can reach the level, a warning."""
    att = for_result(design, result)
    if att is None:
        return
    alpha = alpha_of(design.settings)
    result.extra["smallest_p"] = att.to_dict(result.alternative, alpha)
    if result.outcome.method == "exact":
        text = at.warning(att, result.alternative, alpha)
        if text:
            result.warnings.append(text)


def plan_words(design, plan) -> tuple[str, Optional[dict]]:
    """The plan's line about the smallest p, and its record (for `explain`)."""
    att = for_plan(design, plan)
    if att is None:
        return "", None
    alpha = alpha_of(design.settings)
    record = att.to_dict(design.settings.alternative, alpha)
    this = record["this_test"]
    two = "" if att.two_sided is None else f", two-sided {att.two_sided:.3g}"
    line = (f"  smallest p: one-sided {'at least ' if att.lower_bound else ''}"
            f"{att.one_sided:.3g}{two} ({att.basis})")
    if plan.chosen.exact:
        text = at.warning(att, design.settings.alternative, alpha)
        if text:
            line += f"\n  warning: {text}"
    elif this is not None and this > alpha:
        line += f"\n  warning: {this:.3g} is above the {alpha:g} level; ask for more draws"
    return line, record
