"""Binding of two crossed factors: `compare Y by A and B` -> FactorialDesign.

Every combination of the two factors' levels needs a row (an empty cell is named), some cell
needs two rows or more (else nothing is left to estimate the error: the blocked form
`compare Y by A within B` fits one row a cell), and the F has no direction.
"""
from __future__ import annotations

import numpy as np

from ..errors import BindError
from ..syntax import nodes as n
from .common import (check_columns, dropped_warning, level_text, names_of, natural_key,
                     numeric_column, resolve_table, settings_for)
from .designs import FactorialDesign

FORM = "two crossed factors"


def bind_crossed(node, subject: n.Crossed, opts, catalog, defaults) -> FactorialDesign:
    if isinstance(subject.response, n.Responses):
        raise BindError("two crossed factors take one response", subject.response.span,
                        hint=f"name one: compare {_first_name(subject.response)} by "
                             f"{subject.first.text} and {subject.second.text}")
    if "picture" in opts:
        raise BindError("a picture shows one null distribution; a two-factor comparison has "
                        "three tests", opts["picture"].span, hint="drop 'picture'")
    if "using" in opts and opts["using"].value != "means":
        raise BindError(f"'{opts['using'].value}' is not a test family for {FORM}",
                        opts["using"].span, hint="two crossed factors take the two-way "
                        "permutation F (means): drop 'using'")
    s = settings_for(node, opts, defaults, "two-factor", FORM, ())
    if s.alternative != "two-sided":
        raise BindError("the F of a two-factor comparison has no direction",
                        opts["alternative"].span if "alternative" in opts else node.span,
                        hint="drop 'alternative'")
    if subject.first.text == subject.second.text:
        raise BindError(f"'{subject.first.text}' is named twice: two different factors are "
                        "needed", subject.second.span)
    table = resolve_table(opts, catalog, subject.span)
    check_columns(table, [subject.response, subject.first, subject.second])
    y = numeric_column(table, subject.response)
    a, b = table.frame[subject.first.text], table.frame[subject.second.text]
    keep = y.notna() & a.notna() & b.notna()
    warnings = dropped_warning(int((~keep).sum()), names_of(subject.response, subject.first,
                                                         subject.second))
    y, a, b = y[keep], a[keep].map(level_text), b[keep].map(level_text)
    first, first_labels = _codes(a, subject.first)
    second, second_labels = _codes(b, subject.second)
    counts = np.zeros((len(first_labels), len(second_labels)), dtype=np.int64)
    np.add.at(counts, (first, second), 1)
    if np.any(counts == 0):
        i, j = np.argwhere(counts == 0)[0]
        empty = int((counts == 0).sum())
        raise BindError(f"no row has {subject.first.text} '{first_labels[i]}' with "
                        f"{subject.second.text} '{second_labels[j]}'"
                        + (f" ({empty} combinations are empty)" if empty > 1 else ""),
                        subject.span, hint="every combination of the two factors needs a row")
    if np.all(counts == 1):
        raise BindError("every combination of the two factors has one row: nothing is left to "
                        "estimate the error or to test the interaction", subject.span,
                        hint=f"for one row a combination, treat one factor as blocks: compare "
                             f"{subject.response.text} by {subject.first.text} within "
                             f"{subject.second.text}")
    if len(np.unique(counts)) > 1:
        warnings += (f"unbalanced: {counts.min()} to {counts.max()} rows a combination; "
                     "type II sums of squares (each main effect adjusted for the other)",)
    return FactorialDesign(y.to_numpy(float), first, second, first_labels, second_labels,
                           (subject.response.text, subject.first.text, subject.second.text), s,
                           warnings)


def _codes(column, name: n.Name):
    levels = tuple(sorted(column.unique(), key=natural_key))
    if len(levels) < 2:
        raise BindError(f"column '{name.text}' has {len(levels)} level"
                        f"{'' if len(levels) == 1 else 's'} here; a factor needs two or more",
                        name.span, hint=f"levels found: {', '.join(levels) or 'none'}")
    index = {v: i for i, v in enumerate(levels)}
    return np.array([index[v] for v in column], dtype=np.int64), levels


def _first_name(responses: n.Responses) -> str:
    return responses.names[0].text if responses.names else "Y"
