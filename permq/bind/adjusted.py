"""Binding of groups compared with covariates: `compare Y by G adjusting for Z1, Z2`
-> AdjustedDesign (two or more levels; text covariates as indicators, bind/covariates.py)."""
from __future__ import annotations

import numpy as np

from ..errors import BindError
from ..syntax import nodes as n
from . import covariates as cov
from .common import (check_columns, chosen_levels, dropped_warning, level_text, natural_key,
                     numeric_column, resolve_table, settings_for)
from .designs import AdjustedDesign

FORM = "groups adjusted for covariates"
EXACT_WHEN = ("exact when the groups were assigned at random and the covariates could not be "
              "changed by them (measured before assignment)")


def bind_adjusted(node, subject: n.Grouped, opts, catalog, defaults) -> AdjustedDesign:
    s = settings_for(node, opts, defaults, "adjusted", FORM, ("levels", "adjusting"))
    names = list(opts["adjusting"].value)
    table = resolve_table(opts, catalog, subject.span)
    check_columns(table, [subject.response, subject.group] + names)
    for name in names:
        if name.text in (subject.response.text, subject.group.text):
            raise BindError(f"'{name.text}' is the {'response' if name.text == subject.response.text else 'group column'}"
                            "; a covariate is another column", name.span)
    y = numeric_column(table, subject.response)
    g = table.frame[subject.group.text]
    raw = cov.columns(table, names)
    keep = y.notna() & g.notna()
    for c in raw:
        keep &= c.notna()
    shown = " or ".join(f"'{v.text}'" for v in [subject.response, subject.group] + names)
    warnings = dropped_warning(int((~keep).sum()), shown)
    y, g = y[keep], g[keep].map(level_text)
    raw = [c[keep] for c in raw]
    present = sorted(g.unique(), key=natural_key)
    levels = present
    if "levels" in opts:
        levels = chosen_levels(opts["levels"], present, subject.group.text)
        inside = g.isin(levels).to_numpy()
        y, g, raw = y[inside], g[inside], [c[inside] for c in raw]
    if len(levels) < 2:
        raise BindError(f"column '{subject.group.text}' has {len(levels)} level"
                        f"{'' if len(levels) == 1 else 's'} here; a comparison needs two or more",
                        subject.group.span, hint=f"levels found: {', '.join(present) or 'none'}")
    if len(levels) > 2 and s.alternative != "two-sided":
        raise BindError(f"a comparison of {len(levels)} groups has no direction",
                        opts["alternative"].span if "alternative" in opts else node.span,
                        hint="drop 'alternative'")
    z, notes = cov.matrix(raw, names)
    codes = np.array([levels.index(v) for v in g], dtype=np.int64)
    sizes = np.bincount(codes, minlength=len(levels))
    if np.any(sizes == 0):
        lev = levels[int(np.flatnonzero(sizes == 0)[0])]
        raise BindError(f"level '{lev}' of '{subject.group.text}' has no values left",
                        subject.group.span)
    need = 1 + z.shape[1] + len(levels)
    if len(codes) < need:
        raise BindError(f"{len(codes)} complete rows; {len(levels)} groups adjusted for "
                        f"{z.shape[1]} covariate column{'s' if z.shape[1] != 1 else ''} need "
                        f"at least {need}", node.span)
    warnings += notes
    if len(levels) == 2 and "levels" not in opts:
        a, b = levels
        warnings += (f"levels taken in sorted order ({a}, {b}); "
                     f"write levels \"{b}\", \"{a}\" for the other direction",)
    warnings += (EXACT_WHEN,)
    return AdjustedDesign(y.to_numpy(float), codes, tuple(levels), subject.response.text,
                          subject.group.text, z, tuple(v.text for v in names), s, warnings)
