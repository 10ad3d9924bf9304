"""Binding of `relate` (association, slopes) and `count` (tables, paired binary, proportions)."""
from __future__ import annotations

import numpy as np
from ..lazy import pandas as pd

from ..errors import BindError
from ..syntax import nodes as n
from . import covariates as covariate_columns
from .common import all_numbers as _all_numbers, listed_numbers as _listed
from .designs import AssociationDesign, TableDesign

MAX_TABLE_CELLS = 400


def bind_relate(node: n.Relate, catalog, defaults):
    from .common import check_columns, dropped_warning, numeric_column, resolve_table, settings_for

    opts = n.options_of(node)
    s = settings_for(node, opts, defaults, "association", "an association", ())
    table = resolve_table(opts, catalog, node.span)
    covs = list(opts["adjusting"].value) if "adjusting" in opts else []
    check_columns(table, [node.response, node.predictor] + covs)
    cols = [numeric_column(table, c) for c in [node.response, node.predictor]]
    cols += covariate_columns.columns(table, covs)     # text covariates become indicators below
    frame = pd.concat(cols, axis=1, keys=range(len(cols)))
    keep = frame.notna().all(axis=1)
    names = [node.response.text, node.predictor.text] + [c.text for c in covs]
    warnings = dropped_warning(int((~keep).sum()), " or ".join(f"'{v}'" for v in names))
    frame = frame[keep]
    y, x = frame[0].to_numpy(float), frame[1].to_numpy(float)
    need = 3 + len(covs)
    if len(y) < need:
        raise BindError(f"{len(y)} complete rows; this needs at least {need}", node.span)
    if np.ptp(x) == 0:
        raise BindError(f"column '{node.predictor.text}' is constant here", node.predictor.span)
    if np.ptp(y) == 0:
        raise BindError(f"column '{node.response.text}' is constant here", node.response.span)
    z = None
    if covs:
        z, notes = covariate_columns.matrix([frame[i] for i in range(2, len(cols))], covs)
        warnings += notes
        need = 3 + z.shape[1]
        if len(y) < need:
            raise BindError(f"{len(y)} complete rows; this needs at least {need}", node.span)
    return AssociationDesign(y, x, (node.response.text, node.predictor.text), s, z,
                             tuple(c.text for c in covs), warnings)


def bind_count(node: n.Count, catalog, defaults):
    from . import counts
    from .common import settings_for

    opts = n.options_of(node)
    design = counts.bind_count(node, opts, catalog, defaults)
    if design is not None:
        return design
    sub = node.subject
    if isinstance(sub, n.CountProportion):
        s = settings_for(node, opts, defaults, "proportion", "one proportion", ())
        if sub.trials == 0 or sub.successes > sub.trials:
            raise BindError(f"{sub.successes} of {sub.trials} is not a proportion", sub.span)
        ref = 0.5 if sub.value is None else float(sub.value)
        if not 0 < ref < 1:
            raise BindError("the reference proportion must lie strictly between 0 and 1", sub.span)
        t = np.array([[sub.successes, sub.trials - sub.successes]], dtype=np.int64)
        return TableDesign(t, ("count",), ("successes", "failures"), s, "proportion",
                           reference=ref, names=(f"{sub.successes} of {sub.trials}",))
    if isinstance(sub, n.CountInline):
        return _inline_table(node, sub, opts, defaults)
    if isinstance(sub, n.CountVersus):
        return _paired_binary(node, sub, opts, defaults, catalog)
    return _crosstab(node, sub, opts, defaults, catalog)


def _table_settings(node, opts, defaults, ordered, extra=()):
    from .common import settings_for

    kind = "ordered-table" if ordered else "table"
    return settings_for(node, opts, defaults, kind, "a table", ("ordered",) + extra)


def _check_shape(t, span):
    if t.shape[0] < 2 or t.shape[1] < 2:
        raise BindError(f"a {t.shape[0]} x {t.shape[1]} table has nothing to compare; it needs "
                        "two rows and two columns or more", span)
    if t.size > MAX_TABLE_CELLS:
        raise BindError(f"a {t.shape[0]} x {t.shape[1]} table is too large for this statement",
                        span, hint=f"at most {MAX_TABLE_CELLS} cells")


def _inline_table(node, sub, opts, defaults):
    rows = sub.rows
    width = {len(r) for r in rows}
    if len(width) != 1:
        raise BindError("every row of the table needs the same number of counts", sub.span)
    t = np.array(rows, dtype=float)
    if np.any(t < 0) or np.any(t != np.round(t)):
        raise BindError("table entries must be counts (whole numbers, 0 or more)", sub.span)
    t = t.astype(np.int64)
    _check_shape(t, sub.span)
    ordered = "ordered" in opts
    if ordered and opts["ordered"].value:
        raise BindError("an inline table is ordered as written; write just 'ordered'",
                        opts["ordered"].span)
    s = _table_settings(node, opts, defaults, ordered, ("rows", "columns", "scores"))
    r, c = t.shape
    rows = _labels(opts.get("rows"), r, "row", "rows")
    cols = _labels(opts.get("columns"), c, "column", "columns")
    u, v = np.arange(1.0, r + 1), np.arange(1.0, c + 1)
    warnings = ()
    if "scores" in opts:
        given = _given_scores(opts["scores"], ordered)
        if len(given) == c:
            v, side = given, "columns"
        elif len(given) == r:
            u, side = given, "rows"
        else:
            raise BindError(f"{len(given)} scores for a {r} x {c} table", opts["scores"].span,
                            hint=f"give {c} scores (one a column) or {r} (one a row)")
        other = "rows" if side == "columns" else "columns"
        warnings = (f"trend scores: {side} {_listed(given)} (as given); {other} 1..k in the "
                    "order written",)
    elif ordered:
        warnings = ("trend scores: rows and columns 1..k in the order written",)
    return TableDesign(t, rows, cols, s, "table", ordered, warnings=warnings,
                       row_scores=tuple(u) if ordered else None,
                       col_scores=tuple(v) if ordered else None)


def _labels(opt, size: int, word: str, plural: str) -> tuple:
    """`rows "treated", "control"` / `columns "yes", "no"`: names for an inline table's rows
    or columns, one each, no repeats."""
    if opt is None:
        return tuple(f"{word} {i + 1}" for i in range(size))
    names = [text for text, _ in opt.value]
    if len(names) != size:
        raise BindError(f"the table has {size} {plural}; '{opt.key}' names {len(names)}",
                        opt.span, hint=f"give {size} names")
    for i, (text, span) in enumerate(opt.value):
        if text in names[:i]:
            raise BindError(f"\"{text}\" names two {plural}", span)
    return tuple(names)


def _crosstab(node, sub: n.CountBy, opts, defaults, catalog):
    from .common import check_columns, dropped_warning, level_text, resolve_table

    table = resolve_table(opts, catalog, sub.span)
    check_columns(table, [sub.rows, sub.columns])
    a, b = table.frame[sub.rows.text], table.frame[sub.columns.text]
    keep = a.notna() & b.notna()
    warnings = dropped_warning(int((~keep).sum()), f"'{sub.rows.text}' or '{sub.columns.text}'")
    numeric = (pd.api.types.is_numeric_dtype(a), pd.api.types.is_numeric_dtype(b))
    a, b = a[keep].map(level_text), b[keep].map(level_text)
    ordered = "ordered" in opts
    s = _table_settings(node, opts, defaults, ordered, ("levels", "scores"))
    chosen = None
    if "levels" in opts:        # the arms: choose and order the `by` column's levels
        from .common import chosen_levels as _chosen_levels

        present = sorted(set(b), key=_natural)
        chosen = _chosen_levels(opts["levels"], present, sub.columns.text)
        inside = b.isin(chosen)
        if (~inside).sum():
            warnings += (f"left out {int((~inside).sum())} row"
                         f"{'s' if (~inside).sum() != 1 else ''} at levels not named in "
                         f"'levels'",)
        a, b = a[inside], b[inside]
    if "scores" in opts and not ordered:
        raise BindError("'scores' go with 'ordered'", opts["scores"].span,
                        hint="add 'ordered' (and the order of the levels, unless numeric)")
    scores = (None, None)
    if ordered:
        a, b, row_levels, col_levels, scores, more = _order_crosstab(sub, opts, a, b, numeric,
                                                                     chosen)
        warnings += more
    ct = pd.crosstab(a, b)
    if ordered:
        ct = ct.reindex(index=row_levels, columns=col_levels, fill_value=0)
    else:
        ct = ct.loc[sorted(ct.index, key=_natural), sorted(ct.columns, key=_natural)]
    if not ordered and "levels" in opts:
        ct = ct[[c for c in chosen if c in ct.columns]]
    t = ct.to_numpy(np.int64)
    _check_shape(t, sub.span)
    return TableDesign(t, tuple(map(str, ct.index)), tuple(map(str, ct.columns)), s, "table",
                       ordered, names=(sub.rows.text, sub.columns.text), warnings=warnings,
                       row_scores=scores[0], col_scores=scores[1])


def _order_crosstab(sub, opts, a, b, numeric, chosen=None):
    """The order and the trend scores of both variables of an ordered table.

    A listed order (`ordered "control" < "low" < ...`) names the levels of one of the two
    variables, in that order (rows with other levels are left out) and scores them 1..k; the
    other variable, and an unlisted one, go by their values when numeric (scores: the values),
    else in natural text order (scores 1..k). `scores` set the scores of the listed variable
    (of the columns when none is listed). Levels chosen with `levels` are a listed order of
    the columns."""
    from .common import chosen_levels

    names = (sub.rows.text, sub.columns.text)
    present = (sorted(set(a), key=_natural), sorted(set(b), key=_natural))
    levels, listed, warnings = list(present), None, ()
    opt = opts["ordered"]
    if opt.value:
        texts = {text for text, _ in opt.value}
        listed = 0 if texts <= set(present[0]) and not texts <= set(present[1]) else 1
        levels[listed] = chosen_levels(opt, present[listed], names[listed])
        keep = (a, b)[listed].isin(levels[listed])
        dropped = int((~keep).sum())
        if dropped:
            a, b = a[keep], b[keep]
            warnings += (f"{dropped} row{'s' if dropped != 1 else ''} with other levels of "
                         f"'{names[listed]}' left out",)
    elif chosen is not None:
        listed, levels[1] = 1, list(chosen)
    scores, how = [], []
    for side in (0, 1):
        if side == listed:
            scores.append(np.arange(1.0, len(levels[side]) + 1))
            how.append("1..k in the order listed")
        elif numeric[side] and _all_numbers(levels[side]):
            scores.append(np.array([float(v) for v in levels[side]]))
            how.append("the values")
        elif len(levels[side]) <= 2:
            scores.append(np.arange(1.0, len(levels[side]) + 1))
            how.append("1..k in text order")
        else:
            order = " < ".join(f'"{v}"' for v in levels[side])
            raise BindError(f"'ordered' needs the order of the levels of '{names[side]}'",
                            opt.span, hint=(f"write: ordered {order} (in the right order)"
                                            if listed is None else
                                            f"record '{names[side]}' as numbers, or list its "
                                            "order and let the other variable go by its values"))
    if "scores" in opts:
        side = 1 if listed is None else listed
        given = _given_scores(opts["scores"], True)
        if len(given) != len(levels[side]):
            raise BindError(f"{len(given)} scores for the {len(levels[side])} levels of "
                            f"'{names[side]}' ({', '.join(levels[side])})", opts["scores"].span,
                            hint=f"give {len(levels[side])} scores, one a level, in order")
        scores[side], how[side] = given, "as given"
    text = "; ".join(f"{('rows', 'columns')[s]} ('{names[s]}') {_listed(scores[s])} ({how[s]})"
                     for s in (0, 1))
    warnings += (f"trend scores: {text}",)
    return a, b, levels[0], levels[1], (tuple(scores[0]), tuple(scores[1])), warnings


def _given_scores(opt, ordered) -> np.ndarray:
    if not ordered:
        raise BindError("'scores' go with 'ordered'", opt.span, hint="add 'ordered'")
    values = np.array([v for v, _ in opt.value], float)
    if not np.all(np.isfinite(values)):
        raise BindError("scores must be finite numbers", opt.span)
    if np.ptp(values) == 0:
        raise BindError("the scores are all equal: no trend can be seen", opt.span)
    return values




def _paired_binary(node, sub: n.CountVersus, opts, defaults, catalog):
    from .common import check_columns, dropped_warning, level_text, resolve_table, settings_for

    if "paired" not in opts:
        raise BindError("two columns of outcomes are compared as pairs", sub.span,
                        hint=f"write: count {sub.first.text} vs {sub.second.text} paired, or "
                             f"count {sub.first.text} by {sub.second.text} for a table")
    from . import paired_counts

    if sub.more:
        return paired_counts.bind_several(node, sub, opts, defaults, catalog)
    table = resolve_table(opts, catalog, sub.span)
    check_columns(table, [sub.first, sub.second])
    a, b = table.frame[sub.first.text], table.frame[sub.second.text]
    keep = a.notna() & b.notna()
    warnings = dropped_warning(int((~keep).sum()), f"'{sub.first.text}' or '{sub.second.text}'")
    a, b = a[keep].map(level_text), b[keep].map(level_text)
    levels = sorted(set(a) | set(b), key=_natural)
    if len(levels) > 2:
        return paired_counts.bind_categories(node, sub, opts, defaults, a, b, levels, warnings)
    if len(levels) != 2:
        raise BindError(f"paired outcomes need two values or more in all; found {len(levels)}"
                        f" ({', '.join(levels[:6])})", sub.span)
    s = settings_for(node, opts, defaults, "paired-table", "paired outcomes", ("paired",))
    t = np.zeros((2, 2), dtype=np.int64)
    for u, v in zip(a, b):
        t[levels.index(u), levels.index(v)] += 1
    return TableDesign(t, tuple(f"{sub.first.text} {v}" for v in levels),
                       tuple(f"{sub.second.text} {v}" for v in levels), s, "paired",
                       names=(sub.first.text, sub.second.text), warnings=warnings)


def _natural(text):
    from ..data.order import natural_key

    return natural_key(text)
