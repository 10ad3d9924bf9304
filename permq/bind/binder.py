"""Binder: a syntax node plus the session's tables -> a design (plain data), or clear errors.

Everything the user can get wrong about names and values is checked here, before any
computation: unknown tables and columns (with the nearest name suggested, all reported at
once), non-numeric responses, wrong numbers of levels, empty samples, missing values
(dropped and counted in a warning), options that do not fit the statement.

    binder.py      the entry point: which form binds the statement
    common.py      settings, tables and columns, levels, warnings (shared by every form)
    samples.py     compare: two groups, inline samples, paired, one sample
    groups.py      compare: three or more groups, ordered groups, blocks
    many.py        compare: several responses, for each, pairwise
    factorial.py   compare: two crossed factors (by A and B)
    adjusted.py    compare: groups adjusted for covariates (covariates.py: text as indicators)
    other_forms.py relate and count
    counts.py      count: two proportions, strata, rates; relate with a two-valued response
    designs.py     the designs handed on to the planner
"""
from __future__ import annotations

from ..errors import BindError
from ..syntax import nodes as n
from . import counts, other_forms, samples
from .common import Catalog, Defaults


def bind(node, catalog: Catalog, defaults: Defaults):
    """Bind an analysis statement (Compare / Relate / Count)."""
    if isinstance(node, n.Compare):
        return samples.bind_compare(node, catalog, defaults)
    if isinstance(node, n.Relate):
        if counts.binary_response(node, catalog):
            return counts.bind_dose_response(node, catalog, defaults)
        return other_forms.bind_relate(node, catalog, defaults)
    if isinstance(node, n.Count):
        return other_forms.bind_count(node, catalog, defaults)
    raise BindError("this statement has nothing to compute", node.span)
