"""Binding of `against`: every other level of a group column against a control level
(`compare weight by dose against "control"`), and doses in order against it, for the lowest
effective dose (`compare weight by dose ordered against "0"`).

The control becomes level 0 and the other levels follow: in natural order, in the order of
`levels`, or in the order of `ordered` (where the control must come first). Both forms take
one response column; rows missing the response or the group are dropped with a warning.
"""
from __future__ import annotations

import numpy as np

from ..errors import BindError
from ..syntax import nodes as n
from . import units as unit_rows
from .designs import ControlDesign

FORMS = {"control": "comparisons against a control",
         "dose-finding": "doses in order against a control"}


def bind_against(node, subject, opts, catalog, defaults) -> ControlDesign:
    from .common import (check_columns, dropped_warning, level_text, names_of, natural_key,
                         numeric_column, resolve_table, settings_for)

    _check_form(subject, opts)
    table = resolve_table(opts, catalog, subject.span)
    check_columns(table, [subject.response, subject.group] +
                  ([opts["units"].value] if "units" in opts else []))
    y = numeric_column(table, subject.response)
    g = table.frame[subject.group.text]
    keep = y.notna() & g.notna()
    unit = unit_rows.column(table, opts)
    if unit is not None:
        keep &= unit.notna()
    warnings = dropped_warning(int((~keep).sum()), names_of(subject.response, subject.group,
                                                         opts.get("units")))
    y, g = y[keep], g[keep].map(level_text)
    if unit is not None:
        unit_rows.check_constant(unit[keep], {subject.group.text: g}, opts["units"])
    present = sorted(g.unique(), key=natural_key)
    control = _control(opts["against"], present, subject.group.text)
    ordered = "ordered" in opts
    kind = "dose-finding" if ordered else "control"
    levels = (_ordered_levels(opts, present, g, subject, table, control) if ordered
              else _levels(opts, present, subject.group.text, control))
    s = settings_for(node, opts, defaults, kind, FORMS[kind],
                     ("levels", "ordered", "against", "units") + (() if ordered else ("adjust",)))
    if len(levels) < 2:
        raise BindError(f"column '{subject.group.text}' has no level besides the control "
                        f"\"{control}\"", subject.group.span,
                        hint=f"levels found: {', '.join(present)}")
    chosen = g.isin(levels).to_numpy()
    y, g = y[chosen], g[chosen]
    units = None
    if unit is not None:
        y, carried, units = unit_rows.collapse(y, unit[keep][chosen], {"g": g}, opts["units"])
        g = carried["g"]
    _check_counts(g, levels, kind, s.family, subject, units)
    codes = np.array([levels.index(v) for v in g], dtype=np.int64)
    values = y.to_numpy(float)
    if np.ptp(values) == 0:
        raise BindError(f"'{subject.response.text}' is constant here ({values[0]:g}): nothing "
                        "to compare", subject.response.span)
    adjustment, step = ("max-t", "step-down")
    scores = None
    if ordered:
        from .groups import _dose_scores

        scores, _ = _dose_scores(levels, True, table.frame[subject.group.text])
    elif "adjust" in opts:
        from .many import _adjustment

        adjustment, step = _adjustment(opts)
    info = None
    if units is not None:
        info = units.info(y.index)
        warnings += unit_rows.one_row_units_warning(info)
    return ControlDesign(values, codes, tuple(levels), subject.response.text, s, adjustment,
                         step, scores, warnings, kind, units=info)


def _check_form(subject, opts) -> None:
    if isinstance(subject.response, n.Responses):
        raise BindError("'against' compares the levels of one response", subject.response.span,
                        hint="name one response: compare weight by dose against \"0\"")
    for key, words in (("within", "'within' (blocks)"), ("pairwise", "'pairwise'"),
                       ("for_each", "'for each'")):
        if key in opts:
            raise BindError(f"{words} and 'against' do not go together", opts[key].span,
                            hint="'against' compares every other level with one control level")


def _control(opt, present, column) -> str:
    from .common import suggest

    text, span = opt.value
    if text not in present:
        raise BindError(f"no level \"{text}\" in column '{column}'", span,
                        hint=suggest(text, present, "levels"))
    return text


def _levels(opts, present, column, control) -> list:
    if "levels" not in opts:
        return [control] + [v for v in present if v != control]
    chosen = [v for v in _chosen(opts["levels"], present, column) if v != control]
    return [control] + chosen


def _chosen(opt, present, column) -> list:
    """The levels named (one is enough here: the control joins them)."""
    from .common import chosen_levels

    if len(opt.value) == 1:
        text, span = opt.value[0]
        if text not in present:
            from .common import suggest

            raise BindError(f"no level \"{text}\" in column '{column}'", span,
                            hint=suggest(text, present, "levels"))
        return [text]
    return chosen_levels(opt, present, column)


def _ordered_levels(opts, present, g, subject, table, control) -> list:
    from .groups import _ordered_levels as order_of

    if opts["ordered"].value or "levels" not in opts:
        levels = order_of(opts["ordered"], present, g, subject, table)
    else:
        levels = _chosen(opts["levels"], present, subject.group.text)
        if control not in levels:
            levels = [control] + levels
    if control not in levels:
        raise BindError(f"the control \"{control}\" is not in the order given",
                        opts["ordered"].span,
                        hint="write the order from the control up: ordered \"" + control +
                             "\" < ...")
    if levels[0] != control:
        raise BindError(f"the control \"{control}\" must come first in the order (lowest dose); "
                        f"the order here starts at \"{levels[0]}\"", opts["against"].value[1],
                        hint="write: ordered " + " < ".join(
                            f'"{v}"' for v in [control] + [v for v in levels if v != control]))
    return list(levels)


def _check_counts(g, levels, kind, family, subject, units=None) -> None:
    """Every level keeps the values its family needs (`values_per_level` in its declaration's
    extra: 2 where each level needs a spread of its own; else 1); with units, a value is a
    unit's mean."""
    from ..families import registry

    need = registry.find(kind, family).extra.get("values_per_level", 1)
    counts = g.value_counts()
    one, many = ("value", "values") if units is None else ("unit", f"units of '{units.name}'")
    for lev in levels:
        have = int(counts.get(lev, 0))
        if have < need:
            raise BindError(f"level \"{lev}\" of '{subject.group.text}' has {have} "
                            f"{one if have == 1 else many}; '{family}' needs {need} in each level "
                            "(a spread of its own)" if need > 1 else
                            f"level \"{lev}\" of '{subject.group.text}' has no values left",
                            subject.group.span,
                            hint="using ranks takes levels with a single value" if need > 1
                            else None)
