"""Covariates named after `adjusting for`: number columns as they are, text columns as
indicators.

A text column (levels such as "north", "south") enters the model as one indicator column per
level but the first in natural order, which is the reference; a note says so. A column of
numbers written as text is read as numbers; a column that is mostly numbers with a stray word
is refused (a typo must not turn a measurement into dozens of indicators).
"""
from __future__ import annotations

import numpy as np

from ..errors import BindError
from ..lazy import pandas as pd


def columns(table, names) -> list:
    """The named columns as they stand (missing values still in), for the caller's row mask."""
    out = []
    for name in names:
        s = table.frame[name.text]
        if isinstance(s, pd.DataFrame):
            raise BindError(f"table '{table.name}' has more than one column named '{name.text}'",
                            name.span, hint="rename the duplicates in the file")
        out.append(s)
    return out


def matrix(series: list, names) -> tuple[np.ndarray, tuple]:
    """(rows x columns covariate matrix, notes) from the kept rows of each covariate."""
    parts, notes = [], []
    rows = len(series[0]) if series else 0
    for s, name in zip(series, names):
        values = _numbers(s, name)
        if values is not None:
            parts.append(values[:, None])
            continue
        block, note = _indicators(s, name)
        parts.append(block)
        notes.append(note)
    if not parts:
        return np.zeros((rows, 0)), tuple(notes)
    return np.hstack(parts), tuple(notes)


def _numbers(s, name):
    if pd.api.types.is_bool_dtype(s):
        return s.astype(float).to_numpy()
    if pd.api.types.is_numeric_dtype(s):
        v = s.astype(float).to_numpy()
        if np.isinf(v).any():
            raise BindError(f"column '{name.text}' holds an infinite value", name.span)
        return v
    converted = pd.to_numeric(s, errors="coerce")
    bad = s[converted.isna() & s.notna()]
    if len(bad) == 0:
        return converted.astype(float).to_numpy()
    if len(bad) * 2 < s.notna().sum():
        raise BindError(f"column '{name.text}' is not numeric: row {bad.index[0] + 2} of the file "
                        f"holds '{str(bad.iloc[0])[:40]}'", name.span,
                        hint="the column is mostly numbers; mend the value, or make it text "
                             "throughout to adjust for it as levels")
    return None


def _indicators(s, name):
    from .common import level_text, natural_key

    text = s.map(level_text)
    levels = sorted(text.unique(), key=natural_key)
    if len(levels) < 2:
        return (np.zeros((len(s), 0)),
                f"'{name.text}' has one level here ({levels[0] if levels else 'none'}): "
                "nothing to adjust for")
    block = np.column_stack([(text == lev).to_numpy(float) for lev in levels[1:]])
    shown = ", ".join(levels[:6]) + (", ..." if len(levels) > 6 else "")
    count = len(levels) - 1
    return block, (f"'{name.text}' is text: adjusted for as {count} indicator column"
                   f"{'s' if count > 1 else ''} ({shown}; '{levels[0]}' the reference)")
