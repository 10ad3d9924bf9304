"""Binding of censored times: `compare days by arm event died` (1 = the event, 0 = censored)
or `compare days by arm event outcome "dead"` (that value marks the event, any other value a
censored time) -> `EventsDesign`."""
from __future__ import annotations

import numpy as np

from ..errors import BindError
from ..lazy import pandas as pd
from .common import (check_columns, chosen_levels, dropped_warning, level_text, names_of,
                     natural_key, numeric_column, resolve_table, settings_for)
from .designs import EventsDesign, EventsGroupsDesign, EventsStrataDesign


def bind_events(node, subject, opts, catalog, defaults):
    from ..syntax import nodes as n

    if isinstance(subject.response, n.Responses):
        raise BindError("censored times take one time column at a time", subject.response.span)
    for key, words in (("ordered", "a trend over ordered groups of censored times is not in "
                                   "this version"),
                       ("adjusting", "censored times adjusted for covariates are not in this "
                                     "version")):
        if key in opts:
            raise BindError(words, opts[key].span)
    column, mark = opts["event"].value
    table = resolve_table(opts, catalog, subject.span)
    within = opts["within"].value if "within" in opts else None
    check_columns(table, [subject.response, subject.group, column] + ([within] if within else []))
    time = numeric_column(table, subject.response)
    raw = table.frame[column.text]
    g = table.frame[subject.group.text]
    keep = time.notna() & g.notna() & raw.notna()
    if within is not None:
        keep &= table.frame[within.text].notna()
    warnings = dropped_warning(int((~keep).sum()), names_of(
        *((subject.response, subject.group, column) + ((within,) if within else ()))))
    negative = time[keep] < 0
    if negative.any():
        row = int(negative[negative].index[0]) + 2
        raise BindError(f"column '{subject.response.text}' holds a negative time (row {row} of "
                        "the file): times to an event start at zero", subject.response.span)
    event, words = _events(raw[keep], column, mark)
    strata = (table.frame[within.text][keep].map(level_text).to_numpy() if within is not None
              else None)
    time, g = time[keep].to_numpy(float), g[keep].map(level_text).to_numpy()
    present = sorted(set(g), key=natural_key)
    levels = present
    if "levels" in opts:
        levels = chosen_levels(opts["levels"], present, subject.group.text)
    if len(levels) > 2 and within is None:
        return _groups(node, subject, opts, defaults, time, event, g, levels, column, words,
                       warnings)
    if len(levels) != 2:
        raise BindError(f"censored times compare two groups; '{subject.group.text}' has "
                        f"{len(levels)} level{'' if len(levels) == 1 else 's'} here",
                        opts["levels"].span if "levels" in opts else subject.group.span,
                        hint="choose two with levels \"a\", \"b\" (strata take two groups)"
                        if len(levels) > 2 else
                        f"levels found: {', '.join(present) or 'none'}")
    kind, form = (("events-strata", "censored times within strata") if within is not None
                  else ("events", "censored times"))
    s = settings_for(node, opts, defaults, kind, form, ("levels", "event", "within"))
    a, b = levels
    first, second = g == a, g == b
    if "levels" in opts and len(present) > 2:
        left = int((~(first | second)).sum())
        warnings += (f"left out {left} row{'s' if left != 1 else ''} of other levels of "
                     f"'{subject.group.text}'",)
    if "levels" not in opts:
        warnings += (f"levels taken in sorted order ({a}, {b}); "
                     f"write levels \"{b}\", \"{a}\" for the other direction",)
    if not (event[first | second] == 1).any():
        raise BindError(f"no event in '{column.text}' ({words}): every time is censored, so "
                        "there is nothing to compare", column.span)
    if within is not None:
        return _strata(subject, within, time, event, first, second, strata, (a, b), column,
                       words, s, warnings)
    return EventsDesign(time[first], event[first], time[second], event[second], (a, b),
                        (subject.response.text, subject.group.text, column.text), words, s,
                        warnings)


def _strata(subject, within, time, event, first, second, strata, labels, column, words, s,
            warnings):
    keep = first | second
    names = sorted(set(strata[keep]), key=natural_key)
    codes = np.array([names.index(v) for v in strata[keep]], dtype=int)
    groups = np.where(first[keep], 0, 1)
    both = [i for i in range(len(names)) if len(set(groups[codes == i])) == 2]
    if not both:
        raise BindError(f"no stratum of '{within.text}' holds both groups, so there is "
                        "nothing to compare within strata", within.span,
                        hint="drop 'within' to compare the groups over all rows")
    lone = [names[i] for i in range(len(names)) if i not in both]
    if lone:
        warnings += (f"{'stratum' if len(lone) == 1 else 'strata'} {', '.join(lone)} of "
                     f"'{within.text}' hold{'s' if len(lone) == 1 else ''} one group only and "
                     "add nothing to the test",)
    return EventsStrataDesign(time[keep], event[keep], groups, codes, labels, tuple(names),
                              (subject.response.text, subject.group.text, column.text,
                               within.text), words, s, warnings)


def _groups(node, subject, opts, defaults, time, event, g, levels, column, words, warnings):
    s = settings_for(node, opts, defaults, "events-groups", "censored times in three or more "
                     "groups", ("levels", "event"))
    keep = np.isin(g, levels)
    if "levels" in opts and not keep.all():
        left = int((~keep).sum())
        warnings += (f"left out {left} row{'s' if left != 1 else ''} of other levels of "
                     f"'{subject.group.text}'",)
    codes = np.array([levels.index(v) for v in g[keep]], dtype=int)
    small = [lv for i, lv in enumerate(levels) if not (codes == i).any()]
    if small:
        raise BindError(f"level {small[0]} of '{subject.group.text}' has no rows here",
                        opts["levels"].span if "levels" in opts else subject.group.span)
    if not (event[keep] == 1).any():
        raise BindError(f"no event in '{column.text}' ({words}): every time is censored, so "
                        "there is nothing to compare", column.span)
    return EventsGroupsDesign(time[keep], event[keep], codes, tuple(levels),
                              (subject.response.text, subject.group.text, column.text), words,
                              s, warnings)


def _events(values, column, mark):
    """0 / 1 event indicators from the event column, and what counts as an event in words."""
    if mark is not None:
        text, span = mark
        shown = values.map(level_text).astype(str)
        if not (shown == text).any():
            present = sorted(set(shown), key=natural_key)
            raise BindError(f"no value \"{text}\" in column '{column.text}'", span,
                            hint="values: " + ", ".join(present[:8]))
        return (shown == text).to_numpy().astype(int), f"{column.text} = {text}"
    if pd.api.types.is_bool_dtype(values):
        return values.to_numpy().astype(int), f"{column.text} true"
    numbers = pd.to_numeric(values, errors="coerce")
    if numbers.isna().any() or not set(np.unique(numbers)) <= {0.0, 1.0}:
        present = sorted(set(values.map(level_text).astype(str)), key=natural_key)
        example = present[-1] if present else "dead"
        raise BindError(f"column '{column.text}' is not 1 (event) / 0 (censored): it holds "
                        + ", ".join(present[:6]) + ("..." if len(present) > 6 else ""),
                        column.span,
                        hint=f"name the value that marks an event: event {column.text} "
                             f"\"{example}\"")
    return numbers.to_numpy().astype(int), f"{column.text} = 1"
