"""Binding of the count forms for binary outcomes and events: two proportions, strata, rates,
and a binary response against a dose.

- `count 3 of 20 vs 9 of 21`: two binomial samples (kind "two-proportions");
- `count Y by G using boschloo` (or barnard) on two columns, and `count [[a, b], [c, d]] using
  boschloo`: the same, from a two-valued response in two groups, or from a 2 x 2 table whose
  rows are the samples and whose first column counts the successes;
- `count Y by G within S`: a two-valued response in groups within strata, "strata" for two
  groups (2 x 2 x K), "ordered-strata" with `ordered` (2 x k x K, a trend in the groups);
- `count 7 events in 120.5 vs 0.05`, `count 7 events in 120.5 vs 2 events in 98`: one rate
  against a reference rate, or two rates ("rate", "two-rates");
- `relate Y to X` with Y two-valued: the binary dose response ("dose-response").

A two-valued response counts its second value in natural order as the event (1 of 0 / 1,
true of false, "yes" of "no"); the result names it. Groups keep their natural order unless
`levels` (or `ordered "a" < "b"`) orders them; effects are the first named against the second.
"""
from __future__ import annotations

import numpy as np

from ..errors import BindError
from ..syntax import nodes as n
from .designs import DoseResponseDesign, RatesDesign, StrataDesign, TwoProportionsDesign

MAX_STRATA = 500


def bind_count(node: n.Count, opts: dict, catalog, defaults):
    """The design of a count statement of these forms, or None when it is another form."""
    sub = node.subject
    if isinstance(sub, n.CountTwoProportions):
        return _inline_proportions(node, sub, opts, defaults)
    if isinstance(sub, n.CountRates):
        return _rates(node, sub, opts, defaults)
    if isinstance(sub, n.CountBy) and "within" in opts:
        return _strata(node, sub, opts, defaults, catalog)
    if isinstance(sub, (n.CountBy, n.CountInline)) and _asks_for_proportions(opts):
        if isinstance(sub, n.CountInline):
            return _table_proportions(node, sub, opts, defaults)
        return _column_proportions(node, sub, opts, defaults, catalog)
    return None


def _asks_for_proportions(opts) -> bool:
    """`using WORD` names a test of two proportions that tables do not have."""
    from ..families import registry

    if "using" not in opts:
        return False
    word = opts["using"].value
    return (registry.find("two-proportions", word) is not None
            and registry.find("table", word) is None)


# ---------------------------------------------------------------- two proportions

def _proportion_settings(node, opts, defaults, extra=()):
    from .common import settings_for

    return settings_for(node, opts, defaults, "two-proportions", "two proportions", extra)


def _check_binomial(x, trials, span, what):
    if trials < 1:
        raise BindError(f"{what} has no trials", span)
    if x > trials:
        raise BindError(f"{x} of {trials} is not a proportion: more successes than trials",
                        span)


def _inline_proportions(node, sub, opts, defaults):
    (x1, n1), (x2, n2) = sub.first, sub.second
    _check_binomial(x1, n1, sub.span, "the first sample")
    _check_binomial(x2, n2, sub.span, "the second sample")
    s = _proportion_settings(node, opts, defaults)
    return TwoProportionsDesign((x1, n1, x2, n2), (f"{x1} of {n1}", f"{x2} of {n2}"),
                                ("successes", "failures"), s)


def _table_proportions(node, sub, opts, defaults):
    rows = sub.rows
    t = np.array(rows, dtype=float)
    if t.shape != (2, 2) or np.any(t < 0) or np.any(t != np.round(t)):
        raise BindError("two proportions take a 2 x 2 table of counts: each row a sample, "
                        "successes then failures", sub.span,
                        hint="for example: count [[3, 17], [9, 12]] using boschloo")
    t = t.astype(np.int64)
    for i in range(2):
        _check_binomial(int(t[i, 0]), int(t[i].sum()), sub.span, f"row {i + 1}")
    s = _proportion_settings(node, opts, defaults)
    counts = (int(t[0, 0]), int(t[0].sum()), int(t[1, 0]), int(t[1].sum()))
    return TwoProportionsDesign(counts, ("row 1", "row 2"), ("column 1", "column 2"), s)


def _column_proportions(node, sub, opts, defaults, catalog):
    from .common import check_columns, resolve_table

    table = resolve_table(opts, catalog, sub.span)
    check_columns(table, [sub.rows, sub.columns])
    y, g, warnings = _two_columns(table, sub.rows, sub.columns)
    outcomes, hits = _binary(y, sub.rows)
    levels = _group_levels(opts, g, sub.columns, table, two=True)
    s = _proportion_settings(node, opts, defaults, ("levels",))
    counts = []
    for level in levels:
        inside = (g == level).to_numpy()
        counts += [int(hits[inside].sum()), int(inside.sum())]
    other = len(g) - counts[1] - counts[3]
    if other:
        warnings += (f"left out {other} row{'s' if other != 1 else ''} of other levels of "
                     f"'{sub.columns.text}'",)
    return TwoProportionsDesign(tuple(counts), tuple(levels), outcomes, s,
                                (sub.rows.text, sub.columns.text), warnings)


# ---------------------------------------------------------------- columns, events, levels

def _two_columns(table, a_name, b_name, c_name=None):
    from .common import dropped_warning, level_text, names_of

    names = [a_name, b_name] + ([c_name] if c_name is not None else [])
    cols = [table.frame[nm.text] for nm in names]
    keep = cols[0].notna()
    for c in cols[1:]:
        keep &= c.notna()
    warnings = dropped_warning(int((~keep).sum()), names_of(*names))
    out = [c[keep].map(level_text).reset_index(drop=True) for c in cols]
    return (*out, warnings)


def _binary(y, name):
    """((the event, the other) in words, 0/1 array): the second value in natural order is
    the event."""
    from .common import natural_key

    values = sorted(set(y), key=natural_key)
    if len(values) != 2:
        shown = ", ".join(values[:6]) + (", ..." if len(values) > 6 else "")
        raise BindError(f"'{name.text}' needs exactly two values to be counted as events; it "
                        f"has {len(values)} ({shown})", name.span,
                        hint="for a table of any size: count Y by G (without 'within')")
    words = (f"{name.text} = {values[1]}", f"{name.text} = {values[0]}")
    return words, (y == values[1]).to_numpy().astype(np.int64)


def _group_levels(opts, g, name, table, two: bool):
    from .common import chosen_levels, natural_key

    present = sorted(set(g), key=natural_key)
    if "levels" in opts:
        levels = chosen_levels(opts["levels"], present, name.text)
    elif "ordered" in opts and opts["ordered"].value:
        levels = chosen_levels(opts["ordered"], present, name.text)
    else:
        levels = present
    if two and len(levels) != 2:
        raise BindError(f"two proportions need a group column with two levels; '{name.text}' "
                        f"has {len(levels)}", name.span,
                        hint="choose two: levels " + ", ".join(f'"{v}"' for v in levels[:2]))
    if len(levels) < 2:
        raise BindError(f"'{name.text}' has one level here: there is nothing to compare",
                        name.span)
    return levels


def _dose_scores(levels) -> tuple:
    try:
        return tuple(float(v) for v in levels)
    except ValueError:
        return tuple(float(i + 1) for i in range(len(levels)))


# ---------------------------------------------------------------- strata

def _strata(node, sub, opts, defaults, catalog):
    from .common import check_columns, natural_key, resolve_table, settings_for

    within = opts["within"].value
    table = resolve_table(opts, catalog, sub.span)
    check_columns(table, [sub.rows, sub.columns, within])
    y, g, z, warnings = _two_columns(table, sub.rows, sub.columns, within)
    outcomes, hits = _binary(y, sub.rows)
    levels = _group_levels(opts, g, sub.columns, table, two=False)
    ordered = "ordered" in opts
    if len(levels) > 2 and not ordered:
        raise BindError(f"'{sub.columns.text}' has {len(levels)} levels: within strata, "
                        "three or more groups are compared as a trend", sub.columns.span,
                        hint="add 'ordered' (the levels' order, or ordered \"a\" < \"b\" < "
                             "\"c\"), or choose two with levels \"a\", \"b\"")
    strata = sorted(set(z), key=natural_key)
    if len(strata) > MAX_STRATA:
        raise BindError(f"'{within.text}' has {len(strata)} strata; at most {MAX_STRATA}",
                        within.span)
    kind = "ordered-strata" if ordered else "strata"
    words = "ordered groups within strata" if ordered else "two groups within strata"
    s = settings_for(node, opts, defaults, kind, words, ("within", "levels", "ordered"))
    tables = np.zeros((len(strata), len(levels), 2), dtype=np.int64)
    gi = {v: i for i, v in enumerate(levels)}
    si = {v: i for i, v in enumerate(strata)}
    dropped = 0
    for yy, gg, zz in zip(hits, g, z):
        if gg not in gi:
            dropped += 1
            continue
        tables[si[zz], gi[gg], 0 if yy else 1] += 1
    if "levels" in opts and dropped:
        warnings += (f"left out {dropped} row{'s' if dropped != 1 else ''} of other levels of "
                     f"'{sub.columns.text}'",)
    useless = [strata[k] for k in range(len(strata)) if _uninformative(tables[k])]
    if len(useless) == len(strata):
        raise BindError(f"no stratum of '{within.text}' has events and non-events in two "
                        "groups: there is nothing to compare", within.span)
    if useless:
        shown = ", ".join(f"'{v}'" for v in useless[:5]) + (", ..." if len(useless) > 5 else "")
        many = len(useless) != 1
        warnings += (f"{len(useless)} {'strata' if many else 'stratum'} of '{within.text}' "
                     f"({shown}) {'carry' if many else 'carries'} no information: one group "
                     "only, or one outcome only",)
    scores = _dose_scores(levels) if ordered else ()
    return StrataDesign(tables, tuple(levels), tuple(strata), outcomes, s, scores,
                        (sub.rows.text, sub.columns.text, within.text), warnings, kind)


def _uninformative(t) -> bool:
    groups = int(np.count_nonzero(t.sum(axis=1)))
    events, total = int(t[:, 0].sum()), int(t.sum())
    return groups < 2 or events == 0 or events == total


# ---------------------------------------------------------------- rates

def _rates(node, sub, opts, defaults):
    from .common import settings_for

    for t in sub.exposures:
        if not t > 0 or t != t or t == float("inf"):
            raise BindError(f"an exposure must be a positive number, not {t:g}", sub.span)
    if len(sub.counts) == 2:
        s = settings_for(node, opts, defaults, "two-rates", "two rates", ())
        return RatesDesign(tuple(sub.counts), tuple(sub.exposures), s, 1.0, kind="two-rates")
    if sub.reference is None:
        x, t = sub.counts[0], sub.exposures[0]
        raise BindError("one rate is tested against a reference rate", sub.span,
                        hint=f"write: count {x} events in {t:g} vs 0.05 (events per unit of "
                             f"exposure), or compare it with a second rate: vs 2 events in 98")
    if not sub.reference > 0:
        raise BindError("the reference rate must be above 0", sub.span)
    s = settings_for(node, opts, defaults, "rate", "one rate", ())
    return RatesDesign(tuple(sub.counts), tuple(sub.exposures), s, float(sub.reference),
                       kind="rate")


# ---------------------------------------------------------------- binary dose response

def binary_response(node: n.Relate, catalog) -> bool:
    """`relate Y to X` with Y two-valued and no other test asked for: the dose-response form.
    (Unknown tables or columns are left for the association binder to report.)"""
    from ..families import registry

    opts = n.options_of(node)
    if "adjusting" in opts:
        return False
    if "using" in opts and registry.find("dose-response", opts["using"].value) is None:
        return False
    try:
        from .common import resolve_table

        table = resolve_table(opts, catalog, node.span)
    except BindError:
        return False
    columns = [str(c) for c in table.frame.columns]
    if node.response.text not in columns or node.predictor.text not in columns:
        return False
    y = table.frame[node.response.text]
    if getattr(y, "ndim", 1) != 1:
        return False
    return y.dropna().nunique() == 2


def bind_dose_response(node: n.Relate, catalog, defaults):
    from .common import check_columns, dropped_warning, names_of, numeric_column, resolve_table
    from .common import level_text, settings_for

    opts = n.options_of(node)
    s = settings_for(node, opts, defaults, "dose-response", "a binary response", ())
    table = resolve_table(opts, catalog, node.span)
    check_columns(table, [node.response, node.predictor])
    raw = table.frame[node.response.text]
    x = numeric_column(table, node.predictor)
    keep = raw.notna() & x.notna()
    warnings = dropped_warning(int((~keep).sum()), names_of(node.response, node.predictor))
    y_text = raw[keep].map(level_text).reset_index(drop=True)
    outcomes, y = _binary(y_text, node.response)
    xv = x[keep].to_numpy(float)
    if np.ptp(xv) == 0:
        raise BindError(f"column '{node.predictor.text}' is constant here", node.predictor.span)
    return DoseResponseDesign(y, xv, (node.response.text, node.predictor.text), outcomes, s,
                              warnings)
