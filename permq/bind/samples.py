"""Binding of `compare`: a response by a group column, inline samples, two columns, paired data
and one sample against a value."""
from __future__ import annotations

from ..engine.core.grid import exact_difference
from ..errors import BindError
from ..syntax import nodes as n
from . import groups as grouped_forms
from . import units as unit_rows
from .common import (Catalog, Defaults, check_columns, chosen_levels, dropped_warning,
                     finite_array, level_text, names_of, natural_key, numeric_column, resolve_table,
                     settings_for)
from .designs import OneSampleDesign, TwoSampleDesign

def bind_compare(node: n.Compare, catalog: Catalog, defaults: Defaults):
    opts = n.options_of(node)
    subject = node.subject
    if isinstance(subject, n.Grouped):
        return bind_grouped(node, subject, opts, catalog, defaults)
    if isinstance(subject, n.Crossed):
        from .factorial import bind_crossed

        return bind_crossed(node, subject, opts, catalog, defaults)
    operands = subject.operands
    kinds = {type(o) for o in operands}
    if n.ValueOperand in kinds:
        return bind_one_sample(node, operands, opts, catalog, defaults)
    if "paired" in opts:
        return bind_paired(node, operands, opts, catalog, defaults)
    return bind_samples(node, operands, opts, catalog, defaults)


# ---------------------------------------------------------------- grouped: Y by G

def bind_grouped(node, subject: n.Grouped, opts, catalog, defaults, table=None):
    """`table`: the rows to read instead of the statement's table (a count's events as 0/1)."""
    if "event" in opts:
        from .events import bind_events

        return bind_events(node, subject, opts, catalog, defaults)
    if "against" in opts:
        from .control import bind_against

        return bind_against(node, subject, opts, catalog, defaults)
    if isinstance(subject.response, n.Responses) or "for_each" in opts or "pairwise" in opts:
        from .many import bind_many

        return bind_many(node, subject, opts, catalog, defaults)
    if "adjusting" in opts:
        from .adjusted import bind_adjusted

        return bind_adjusted(node, subject, opts, catalog, defaults)
    table = table or resolve_table(opts, catalog, subject.span)
    check_columns(table, [subject.response, subject.group] +
                  [opts[k].value for k in ("within", "units") if k in opts])
    y = numeric_column(table, subject.response)
    g = table.frame[subject.group.text]
    keep = y.notna() & g.notna()
    blocks = None
    if "within" in opts:
        blocks = table.frame[opts["within"].value.text]
        keep &= blocks.notna()
    unit = unit_rows.column(table, opts)
    if unit is not None:
        keep &= unit.notna()
    warnings = dropped_warning(int((~keep).sum()), names_of(subject.response, subject.group,
                                                         opts.get("within"), opts.get("units")))
    y, g = y[keep], g[keep].map(level_text)
    units = None
    if unit is not None:
        unit_rows.check_constant(unit[keep], {subject.group.text: g, **(
            {opts["within"].value.text: blocks[keep]} if blocks is not None else {})},
            opts["units"])
    present = sorted(g.unique(), key=natural_key)
    levels = present
    if "levels" in opts:
        levels = chosen_levels(opts["levels"], present, subject.group.text)
        chosen = g.isin(levels)
        y, g = y[chosen], g[chosen]
        if blocks is not None:
            blocks = blocks[keep][chosen]
    elif blocks is not None:
        blocks = blocks[keep]
    if unit is not None:
        y, carried, units = unit_rows.collapse(y, unit[keep], {"g": g, "b": blocks},
                                               opts["units"])
        g, blocks = carried["g"], carried["b"]
    if len(levels) < 2:
        raise BindError(f"column '{subject.group.text}' has {len(levels)} level"
                        f"{'' if len(levels) == 1 else 's'} here; a comparison needs two or more",
                        subject.group.span,
                        hint=f"levels found: {', '.join(present) or 'none'}")
    for lev in levels:
        if not (g == lev).any():
            raise BindError(f"level '{lev}' of '{subject.group.text}' has no values left",
                            subject.group.span)
    if len(levels) > 2 or "within" in opts or "ordered" in opts:
        return grouped_forms.bind_groups(node, subject, opts, defaults, y, g, levels, blocks,
                                         warnings, table, units)
    s = settings_for(node, opts, defaults, "two-sample", "two groups",
                     ("levels", "margin", "units"))
    a, b = levels
    x1 = y[g == a].to_numpy(float)
    x2 = y[g == b].to_numpy(float)
    if "levels" not in opts:
        warnings += (f"levels taken in sorted order ({a}, {b}); "
                     f"write levels \"{b}\", \"{a}\" for the other direction",)
    effect, info = f"{a} - {b}", None
    if units is not None:
        info = units.info(list(y.index[g == a]) + list(y.index[g == b]))
        effect = f"{a} - {b}, {units.name} means"
        warnings += unit_rows.one_row_units_warning(info)
    return TwoSampleDesign(x1, x2, (a, b), subject.response.text, effect, s, warnings,
                           units=info)


# ---------------------------------------------------------------- inline samples, two columns

def bind_samples(node, operands, opts, catalog, defaults):
    samples, labels, warnings = [], [], ()
    table = None
    for i, op in enumerate(operands):
        if isinstance(op, n.ListOperand):
            if len(op.values) == 0:
                raise BindError("this sample is empty", op.span)
            samples.append(finite_array(op.values, "this list", op.span))
            labels.append(_ordinal(i))
        else:
            table = table or resolve_table(opts, catalog, op.span)
            check_columns(table, [op.name])
            col = numeric_column(table, op.name)
            warnings += dropped_warning(int(col.isna().sum()), f"'{op.name.text}'")
            samples.append(col.dropna().to_numpy(float))
            labels.append(op.name.text)
    for arr, op in zip(samples, operands):
        if len(arr) == 0:
            raise BindError("this sample has no values", op.span)
    if len(samples) > 2:
        return grouped_forms.bind_inline_groups(node, opts, defaults, samples, labels, warnings)
    s = settings_for(node, opts, defaults, "two-sample", "two samples", ("margin",))
    return TwoSampleDesign(samples[0], samples[1], tuple(labels), "values",
                           f"{labels[0]} - {labels[1]}", s, warnings)


def _ordinal(i: int) -> str:
    return ["first", "second", "third", "fourth", "fifth", "sixth"][i] if i < 6 else f"sample {i + 1}"


def bind_paired(node, operands, opts, catalog, defaults):
    if len(operands) != 2:
        raise BindError("'paired' compares exactly two columns or lists", node.subject.span)
    a, b = operands
    s = settings_for(node, opts, defaults, "paired", "paired data",
                     ("paired", "margin"))
    warnings = ()
    if isinstance(a, n.ListOperand) and isinstance(b, n.ListOperand):
        if len(a.values) != len(b.values):
            raise BindError(f"paired lists must have the same length ({len(a.values)} and "
                            f"{len(b.values)} values)", b.span)
        first = finite_array(a.values, "this list", a.span)
        second = finite_array(b.values, "this list", b.span)
        labels = ("first", "second")
    elif isinstance(a, n.ColumnOperand) and isinstance(b, n.ColumnOperand):
        table = resolve_table(opts, catalog, a.span)
        check_columns(table, [a.name, b.name])
        ca, cb = numeric_column(table, a.name), numeric_column(table, b.name)
        keep = ca.notna() & cb.notna()
        warnings = dropped_warning(int((~keep).sum()), f"'{a.name.text}' or '{b.name.text}'")
        first, second = ca[keep].to_numpy(float), cb[keep].to_numpy(float)
        labels = (a.name.text, b.name.text)
    else:
        raise BindError("'paired' needs two columns or two lists of the same kind",
                        node.subject.span)
    d = exact_difference(first, second)      # on the data's decimal grid: ties stay ties
    if len(d) == 0:
        raise BindError("no complete pairs to compare", node.subject.span)
    return OneSampleDesign(d, f"{labels[0]} - {labels[1]}", s, "paired", 0.0, labels, warnings)


def bind_one_sample(node, operands, opts, catalog, defaults):
    if len(operands) != 2 or not isinstance(operands[1], n.ValueOperand):
        bad = next(o for o in operands if isinstance(o, n.ValueOperand))
        raise BindError("a single value can only stand last, as in: compare mass vs 12.5",
                        bad.span)
    first, value = operands
    if "paired" in opts:
        raise BindError("'paired' needs two columns; against a value the test is one-sample",
                        opts["paired"].span)
    s = settings_for(node, opts, defaults, "one-sample", "one sample", ("margin",))
    warnings = ()
    if isinstance(first, n.ListOperand):
        x = finite_array(first.values, "this list", first.span)
        label = "values"
    else:
        table = resolve_table(opts, catalog, first.span)
        check_columns(table, [first.name])
        col = numeric_column(table, first.name)
        warnings = dropped_warning(int(col.isna().sum()), f"'{first.name.text}'")
        x = col.dropna().to_numpy(float)
        label = first.name.text
    if len(x) == 0:
        raise BindError("this sample has no values", first.span)
    ref = float(value.value)
    return OneSampleDesign(exact_difference(x, ref), f"{label} - {level_text(ref)}", s, "one-sample", ref,
                           (label,), warnings)
