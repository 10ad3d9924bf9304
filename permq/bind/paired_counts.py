"""Binding of paired outcomes beyond the 2 x 2 table: two columns of outcomes in three or more
categories (`count before vs after paired`), and several columns of yes/no outcomes on the
same units (`count day1 vs day2 vs day3 paired`)."""
from __future__ import annotations

import numpy as np

from ..errors import BindError
from .common import check_columns, dropped_warning, level_text, natural_key, resolve_table, settings_for
from .designs import GroupsDesign, TableDesign


def bind_categories(node, sub, opts, defaults, a, b, levels, warnings) -> TableDesign:
    """k x k table of (first, second) outcomes, both in the same categories."""
    s = settings_for(node, opts, defaults, "paired-categories", "paired categories",
                     ("paired",))
    t = np.zeros((len(levels), len(levels)), dtype=np.int64)
    for u, v in zip(a, b):
        t[levels.index(u), levels.index(v)] += 1
    return TableDesign(t, tuple(f"{sub.first.text} {v}" for v in levels),
                       tuple(f"{sub.second.text} {v}" for v in levels), s, "paired-categories",
                       names=(sub.first.text, sub.second.text), warnings=warnings)


def bind_several(node, sub, opts, defaults, catalog) -> GroupsDesign:
    """Units (rows) x outcomes (the columns named), each a yes/no outcome of the same two
    values; the columns are the treatments, each unit a block (Cochran's Q)."""
    names = [sub.first, sub.second] + list(sub.more)
    table = resolve_table(opts, catalog, sub.span)
    check_columns(table, names)
    frame = table.frame[[c.text for c in names]]
    keep = frame.notna().all(axis=1)
    warnings = dropped_warning(int((~keep).sum()), " or ".join(f"'{c.text}'" for c in names))
    frame = frame[keep].apply(lambda col: col.map(level_text))
    values = sorted(set(np.unique(frame.to_numpy(str))), key=natural_key)
    if len(values) != 2:
        raise BindError(f"several paired outcomes are compared as yes/no outcomes: these "
                        f"columns hold {len(values)} values ({', '.join(values[:6])})", sub.span,
                        hint="two columns of outcomes in more categories: count A vs B paired")
    if len(frame) < 2:
        raise BindError("fewer than two complete units to compare", sub.span)
    s = settings_for(node, opts, defaults, "several-paired", "several paired outcomes",
                     ("paired",))
    if s.alternative != "two-sided":
        raise BindError(f"a comparison of {len(names)} outcomes has no direction",
                        opts["alternative"].span, hint="drop 'alternative'")
    units, k = len(frame), len(names)
    y = (frame.to_numpy(str) == values[1]).astype(float)          # 1: the second value
    labels = tuple(c.text for c in names)
    return GroupsDesign(y.ravel(), np.tile(np.arange(k), units).astype(np.int64), labels,
                        f"'{values[1]}' (of {values[0]} / {values[1]})", s,
                        np.repeat(np.arange(units), k).astype(np.int64),
                        tuple(str(i + 1) for i in range(units)), False, None, warnings,
                        "blocked")
