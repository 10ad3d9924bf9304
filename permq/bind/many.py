"""Binding of several responses at once: `compare a, b, c by g`, `compare every numeric by g`,
`compare y by g for each feature` (a long table), and `compare y by g pairwise`.

Everything becomes one `ManyDesign`: a units x responses matrix (NaN where missing), the group
codes, and the adjustment. A response that cannot be tested is kept with its reason and shown
in its row (too few values in a group, constant, not numeric, an infinite value); columns that
`every numeric` passes over because they are not numeric are named in a warning. Nothing is
dropped without a word.
"""
from __future__ import annotations

import numpy as np
from ..lazy import pandas as pd

from ..errors import BindError
from ..syntax import nodes as n
from .designs import ManyDesign

MANY_OPTIONS = ("levels", "adjust", "pairwise", "for_each", "top", "below")
MIN_PER_GROUP = 2          # values each group needs for a response to be tested
SHOWN_NAMES = 10


def bind_many(node, subject, opts, catalog, defaults) -> ManyDesign:
    from .common import check_columns, resolve_table, settings_for

    table = resolve_table(opts, catalog, subject.span)
    response = subject.response
    several = isinstance(response, n.Responses)
    _check_forms(several, opts, response)
    wanted = [subject.group]
    if several:
        wanted += list(response.names) + list(response.excluded)
    else:
        wanted.append(response)
    if "for_each" in opts:
        wanted.append(opts["for_each"].value)
    check_columns(table, wanted)
    form = ("pairwise comparisons" if "pairwise" in opts else
            "'for each'" if "for_each" in opts else "several responses")
    s = settings_for(node, opts, defaults, "many", form, MANY_OPTIONS)
    adjustment, step = _adjustment(opts)
    top, below = _filters(opts)
    frame = table.frame
    if "for_each" in opts:
        values, names, g, warnings = _long_table(frame, response, subject.group,
                                                 opts["for_each"].value)
        untested = ()
    else:
        columns = _response_columns(frame, subject, response)
        values, names, untested, warnings = _matrix(frame, columns, response, several)
        g = frame[subject.group.text]
    values, codes, levels, warnings = _groups(values, g, subject.group, opts, warnings)
    if "pairwise" in opts:
        values, codes, warnings = _pairwise_data(values, codes, levels, names[0], subject,
                                                 warnings)
    else:
        values, names, untested = _screen(values, codes, levels, names, untested)
        warnings += _untested_warning(untested, len(names))
        if not names:
            raise BindError("no response can be tested: " + _reasons(untested), response.span
                            if hasattr(response, "span") else subject.span)
    _check_direction(s, levels, opts, node)
    warnings += _missing_warning(values)
    return ManyDesign(values, codes, tuple(levels), tuple(names), s, adjustment, step,
                      "pairwise" in opts, top, below, tuple(untested),
                      opts["for_each"].value.text if "for_each" in opts else "",
                      response.text if isinstance(response, n.Name) else "",
                      subject.group.text, getattr(defaults, "workers", None),
                      getattr(defaults, "cluster", None), tuple(warnings))


# ---------------------------------------------------------------- options

def _check_forms(several, opts, response):
    if several and "for_each" in opts:
        raise BindError("'for each' takes one response column (the long table's values)",
                        opts["for_each"].span, hint="compare value by group for each feature")
    if several and "pairwise" in opts:
        raise BindError("'pairwise' compares the levels of one response", opts["pairwise"].span,
                        hint="name one response: compare mass by recipe pairwise")
    if "for_each" in opts and "pairwise" in opts:
        raise BindError("'pairwise' and 'for each' do not go together", opts["pairwise"].span,
                        hint="'pairwise' compares the levels of one response")


def _adjustment(opts) -> tuple:
    if "adjust" not in opts:
        return "max-t", "step-down"
    method, step = opts["adjust"].value
    if method in ("fdr", "none") and step is not None:
        what = ("the Benjamini-Hochberg step-up rule" if method == "fdr"
                else "no adjustment")
        raise BindError(f"'{method}' is {what}; '{step}' does not apply", opts["adjust"].span,
                        hint=f"write: adjust {method}")
    if method == "fdr":
        return method, "step-up"
    if method == "none":
        return method, ""
    return method, step or "step-down"


def _filters(opts) -> tuple:
    top = below = None
    if "top" in opts:
        top = int(opts["top"].value)
        if top < 1:
            raise BindError("'top' needs at least 1 row", opts["top"].span)
    if "below" in opts:
        below = float(opts["below"].value)
        if not 0 < below <= 1:
            raise BindError(f"'below {below:g}' is not a p-value threshold", opts["below"].span,
                            hint="write a level between 0 and 1, e.g. below 0.05")
    return top, below


def _check_direction(s, levels, opts, node):
    if s.alternative == "two-sided":
        return
    where = opts["alternative"].span if "alternative" in opts else node.span
    if "pairwise" in opts:
        raise BindError("pairwise comparisons are two-sided", where,
                        hint="drop 'alternative'")
    if len(levels) > 2:
        raise BindError(f"a comparison of {len(levels)} groups has no direction", where,
                        hint="drop 'alternative', or choose two levels")


# ---------------------------------------------------------------- responses

def _response_columns(frame, subject, response) -> list:
    if isinstance(response, n.Name):
        return [response.text]
    group = subject.group.text
    if not response.every_numeric:
        seen, errors = set(), []
        for name in response.names:
            if name.text == group:
                errors.append(BindError(f"'{group}' is the group column; it cannot also be a "
                                        "response", name.span))
            elif name.text in seen:
                errors.append(BindError(f"response '{name.text}' is named twice", name.span))
            seen.add(name.text)
        if errors:
            raise errors[0]
        return [name.text for name in response.names]
    excluded = {e.text for e in response.excluded} | {group}
    return [str(c) for c in frame.columns if str(c) not in excluded]


def _matrix(frame, columns, response, several) -> tuple:
    """(values, tested-so-far names, untested, warnings) from the named or found columns."""
    every = several and response.every_numeric
    block, in_block = _numeric_block(frame, columns)
    infinite = np.isinf(block).any(axis=0)
    tested, from_block, others, untested, skipped = [], [], [], [], []
    for name in columns:
        if name in in_block:
            i = in_block[name]
            if infinite[i]:
                untested.append((name, "holds an infinite value"))
            else:
                from_block.append((len(tested), i))
                tested.append(name)
            continue
        col, reason = _numeric(frame, name)
        if reason is None:
            others.append((len(tested), col))
            tested.append(name)
        elif every and reason.startswith("not numeric"):
            skipped.append(name)
        else:
            untested.append((name, reason))
    warnings = ()
    if skipped:
        shown = ", ".join(f"'{s}'" for s in skipped[:SHOWN_NAMES])
        more = f" and {len(skipped) - SHOWN_NAMES} more" if len(skipped) > SHOWN_NAMES else ""
        warnings += (f"skipped {len(skipped)} column{'s' if len(skipped) != 1 else ''} that "
                     f"{'are' if len(skipped) != 1 else 'is'} not numeric: {shown}{more}",)
    if every and not tested and not untested:
        raise BindError("no numeric column to compare", response.span,
                        hint="the table's columns: " + ", ".join(map(str, frame.columns[:8])))
    values = np.empty((len(frame), len(tested)))
    if from_block:
        at, i = (np.array(v) for v in zip(*from_block))
        values[:, at] = block[:, i]
    for at, col in others:
        values[:, at] = col
    return values, tested, untested, warnings


def _numeric_block(frame, columns):
    """The plain numeric columns (not bool, names not repeated) read at once: (block, index)."""
    names = [str(c) for c in frame.columns]
    repeated = {nm for nm, dup in zip(names, pd.Index(names).duplicated(keep=False)) if dup}
    kinds = {nm: getattr(dt, "kind", "O") for nm, dt in zip(names, frame.dtypes)}
    plain = [nm for nm in columns if kinds.get(nm, "O") in "iuf" and nm not in repeated]
    if not plain:
        return np.empty((len(frame), 0)), {}
    position = {nm: i for i, nm in enumerate(names)}
    block = frame.iloc[:, [position[nm] for nm in plain]].to_numpy(dtype=float, na_value=np.nan)
    return block, {nm: i for i, nm in enumerate(plain)}


def _numeric(frame, name):
    """(float values, None) or (None, reason the column cannot be a response)."""
    s = frame[name]
    if isinstance(s, pd.DataFrame):
        return None, "more than one column has this name"
    if pd.api.types.is_bool_dtype(s):
        s = s.astype(float)
    elif not pd.api.types.is_numeric_dtype(s):
        converted = pd.to_numeric(s, errors="coerce")
        bad = s[converted.isna() & s.notna()]
        if len(bad):
            return None, (f"not numeric: row {bad.index[0] + 2} of the file holds "
                          f"'{str(bad.iloc[0])[:30]}'")
        s = converted
    values = s.to_numpy(dtype=float, na_value=np.nan)
    if np.isinf(values).any():
        return None, "holds an infinite value"
    return values, None


def _long_table(frame, response, group, feature) -> tuple:
    """A long table: one row per unit and feature; the i-th row of each feature is unit i."""
    from .common import level_text, natural_key

    y = _named_numeric(frame, response)
    f = frame[feature.text]
    g = frame[group.text]
    keep = f.notna() & g.notna()
    warnings = ()
    if (~keep).any():
        warnings += (f"dropped {int((~keep).sum())} rows with a missing value in "
                     f"'{feature.text}' or '{group.text}'",)
    y, f, g = y[keep.to_numpy()], f[keep].map(level_text), g[keep].map(level_text)
    features = sorted(f.unique(), key=natural_key)
    if not features:
        raise BindError(f"column '{feature.text}' has no values", feature.span)
    first = g[f == features[0]].tolist()
    columns = []
    for feat in features:
        here = (f == feat).to_numpy()
        labels = g[here].tolist()
        if labels != first:
            raise BindError(f"'for each {feature.text}': '{feat}' lists {len(labels)} rows, "
                            f"'{features[0]}' lists {len(first)}, or their groups differ in "
                            f"order; each {feature.text} must list the same units in the same "
                            "order (one row per unit)", feature.span,
                            hint="keep a row for every unit, with an empty value where "
                                 "nothing was measured")
        columns.append(y[here])
    values = np.column_stack(columns)
    warnings += (f"for each {feature.text}: row i of every {feature.text} is taken as the same "
                 f"unit ({len(first)} units, {len(features)} {feature.text} values)",)
    return values, [str(v) for v in features], pd.Series(first), warnings


def _named_numeric(frame, name) -> np.ndarray:
    values, reason = _numeric(frame, name.text)
    if reason is not None:
        raise BindError(f"column '{name.text}' cannot be a response: {reason}", name.span)
    return values


# ---------------------------------------------------------------- groups

def _groups(values, g, group, opts, warnings):
    from .common import chosen_levels, natural_key, level_text

    g = pd.Series(g).reset_index(drop=True)
    keep = g.notna().to_numpy()
    if (~keep).any():
        warnings += (f"dropped {int((~keep).sum())} row{'s' if (~keep).sum() != 1 else ''} "
                     f"with a missing value in '{group.text}'",)
    values, g = values[keep], g[keep].map(level_text).reset_index(drop=True)
    present = sorted(g.unique(), key=natural_key)
    levels = present
    if "levels" in opts:
        levels = chosen_levels(opts["levels"], present, group.text)
        chosen = g.isin(levels).to_numpy()
        values, g = values[chosen], g[chosen].reset_index(drop=True)
    if len(levels) < 2:
        raise BindError(f"column '{group.text}' has {len(levels)} level"
                        f"{'' if len(levels) == 1 else 's'} here; a comparison needs two or more",
                        group.span, hint=f"levels found: {', '.join(present) or 'none'}")
    index = {lev: i for i, lev in enumerate(levels)}
    codes = np.array([index[v] for v in g], dtype=np.int64)
    if "levels" not in opts and len(levels) == 2:
        a, b = levels
        warnings += (f"levels taken in sorted order ({a}, {b}); "
                     f"write levels \"{b}\", \"{a}\" for the other direction",)
    return values, codes, levels, warnings


def _pairwise_data(values, codes, levels, name, subject, warnings):
    from .common import dropped_warning

    if len(levels) < 3:
        raise BindError("'pairwise' needs three or more levels; two levels are one comparison",
                        subject.group.span, hint="drop 'pairwise'")
    y = values[:, 0]
    keep = ~np.isnan(y)
    warnings += dropped_warning(int((~keep).sum()), f"'{name}'")
    y, codes = y[keep], codes[keep]
    for i, lev in enumerate(levels):
        if not (codes == i).any():
            raise BindError(f"level '{lev}' of '{subject.group.text}' has no values left",
                            subject.group.span)
    if np.ptp(y) == 0:
        raise BindError(f"'{name}' is constant here ({y[0]:g}): nothing to compare",
                        subject.response.span)
    return y[:, None], codes, warnings


# ---------------------------------------------------------------- screening

def _screen(values, codes, levels, names, untested) -> tuple:
    """Responses with too few values in a group, or constant, join the untested (by name)."""
    observed = ~np.isnan(values)
    per_group = np.stack([observed[codes == i].sum(axis=0) for i in range(len(levels))])
    with np.errstate(invalid="ignore"):
        low = np.where(observed, values, np.inf).min(axis=0) if len(values) else np.zeros(0)
        high = np.where(observed, values, -np.inf).max(axis=0) if len(values) else np.zeros(0)
    reasons = {}
    short = (per_group < MIN_PER_GROUP).any(axis=0)
    for j in np.flatnonzero(short | (low == high)):
        few = [f"{int(per_group[i, j])} in {lev}" for i, lev in enumerate(levels)
               if per_group[i, j] < MIN_PER_GROUP]
        if few:
            reasons[j] = f"too few values ({', '.join(few)}; each group needs {MIN_PER_GROUP})"
        else:
            reasons[j] = f"constant (every value is {low[j]:g})"
    keep = [j for j in range(len(names)) if j not in reasons] if reasons else list(
        range(len(names)))
    out = tuple(untested) + tuple((names[j], r) for j, r in sorted(reasons.items()))
    return values[:, keep], [names[j] for j in keep], out


def _reasons(untested) -> str:
    text = "; ".join(f"'{nm}' {why}" for nm, why in untested[:SHOWN_NAMES])
    if len(untested) > SHOWN_NAMES:
        text += f"; and {len(untested) - SHOWN_NAMES} more"
    return text


def _untested_warning(untested, tested: int) -> tuple:
    if not untested:
        return ()
    k = len(untested)
    return (f"{k} response{'s' if k != 1 else ''} not tested ({_reasons(untested)}); "
            f"the adjustment covers the {tested} tested",)


def _missing_warning(values) -> tuple:
    missing = np.isnan(values)
    if not missing.any():
        return ()
    cols = int(missing.any(axis=0).sum())
    return (f"{cols} response{'s' if cols != 1 else ''} with missing values "
            f"({int(missing.sum())} in all): each uses the units where it is observed, and the "
            "permutation moves whole units",)
