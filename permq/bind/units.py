"""The randomised unit: `units COLUMN` (compare, relate; count has its own table of units).

When litters, trays or whole plots were randomised, the rows of a unit are not independent
and must move together: the reference set is every assignment of whole units to the levels
(the unit counts per level kept), not every assignment of rows. Each unit's level (its group,
its block, its value of x, its covariates) must therefore be the same on all its rows; the
first unit that breaks this is named.

The unit-level statistic: each unit enters as the mean of its rows, every unit with the same
weight, and the family's statistic is computed on those means. Why:

- it is the statistic of the experiment as randomised: one value per experimental unit, so
  every exact algorithm of the family (counting, listing, sampling), its estimate and its
  interval by inversion apply to the units unchanged, and the reference set is the units';
- with equal unit sizes it is the same test as the difference of row means with whole units
  moved (the two statistics are equal arrangement by arrangement), and its normal-theory
  counterpart on unit means is the F (or t) of the nested analysis of variance with units
  as the error stratum (tests/test_units.py checks both);
- with unequal sizes, weighting by size would let a large unit dominate when the intraclass
  correlation is high (a unit's shared effect does not shrink with its size); equal weights
  are the safer default for the few-unit designs this is for, and the test is exact either way
  under the randomisation of units.

`Units` carries the unit column and the rows per unit from binding to the design
(`designs.UnitsInfo`); the doses-against-a-control binder can use the same three steps:
`column`, `check_constant`, `collapse` (see DEVELOPERS.md).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

import numpy as np
from ..lazy import pandas as pd

from ..errors import BindError
from .designs import UnitsInfo


@dataclass(frozen=True)
class Units:
    """The unit column of a statement and, once collapsed, the rows of each unit."""

    option: object               # the `units` option (its value is the column's Name)
    sizes: Optional[pd.Series] = None   # rows per unit, indexed by unit label

    @property
    def name(self) -> str:
        return self.option.value.text

    def info(self, order) -> UnitsInfo:
        """The design's record of its units, in the order of its values (unit labels)."""
        order = list(order)
        sizes = self.sizes.loc[order].to_numpy(np.int64)
        return UnitsInfo(self.name, tuple(str(u) for u in order), sizes, int(sizes.sum()))


def column(table, opts) -> Optional[pd.Series]:
    """The unit column's labels as text (None without `units`)."""
    if "units" not in opts:
        return None
    from .common import level_text

    return table.frame[opts["units"].value.text].map(
        lambda v: v if pd.isna(v) else level_text(v))


def check_constant(units: pd.Series, carried: dict, option) -> None:
    """Each unit's `carried` columns ({name: series}) take one value on all its rows; else the
    first unit (in natural order) that breaks this is named, with its values."""
    from .common import level_text, natural_key

    for name, series in carried.items():
        if series is None:
            continue
        counts = series.groupby(units).nunique()
        bad = counts[counts > 1]
        if not len(bad):
            continue
        unit = sorted(bad.index, key=natural_key)[0]
        values = sorted({level_text(v) for v in series[units == unit]}, key=natural_key)
        shown = ", ".join(f'"{v}"' for v in values[:4]) + (", ..." if len(values) > 4 else "")
        raise BindError(f"unit '{unit}' of '{option.value.text}' has rows with {len(values)} "
                        f"values of '{name}' ({shown}): arrangements move whole units, so each "
                        f"unit needs one value of '{name}'", option.value.span,
                        hint=f"check the unit column; leave out 'units {option.value.text}' "
                             "if the rows themselves were randomised")


def collapse(y: pd.Series, units: pd.Series, carried: dict, option) -> tuple:
    """(unit means of y, {name: each unit's value of a carried column}, Units with the rows
    per unit); every series is indexed by unit label, in natural order."""
    from .common import natural_key

    units = units.loc[y.index]
    order = sorted(units.unique(), key=natural_key)
    means = y.groupby(units).mean().loc[order]
    sizes = units.value_counts().loc[order]
    out = {name: (None if s is None else s.loc[y.index].groupby(units).first().loc[order])
           for name, s in carried.items()}
    return means, out, Units(option, sizes)


def one_row_units_warning(info: UnitsInfo) -> tuple:
    if int(info.sizes.max()) == 1:
        return (f"every unit of '{info.column}' has one row: naming the units changes nothing",)
    return ()


def bind_count_units(node, sub, opts, catalog, defaults):
    """`count Y by G units U` with Y two-valued: each unit's value is its proportion of rows
    with the event, and the units' proportions are compared as `compare` compares unit means
    (two groups, three or more, ordered, within blocks), whole units moved."""
    from dataclasses import replace

    from ..data.tables import Table
    from ..syntax import nodes as n
    from .common import check_columns, level_text, resolve_table
    from .counts import binary_events
    from .samples import bind_grouped

    table = resolve_table(opts, catalog, sub.span)
    check_columns(table, [sub.rows, sub.columns] +
                  [opts[k].value for k in ("within", "units") if k in opts])
    y = table.frame[sub.rows.text]
    present = y.notna()
    if not present.any():
        raise BindError(f"column '{sub.rows.text}' has no values", sub.rows.span)
    words, hits = binary_events(y[present].map(level_text), sub.rows)
    frame = table.frame.copy()
    frame[sub.rows.text] = pd.Series(np.nan, index=frame.index)
    frame.loc[present, sub.rows.text] = hits.astype(float)
    derived = Table(table.name, frame, table.source)
    design = bind_grouped(node, n.Grouped(sub.span, sub.rows, sub.columns), opts, catalog,
                          defaults, table=derived)
    value = f"proportion of its rows with {words[0]}"
    design = replace(design, units=replace(design.units, value=value))
    if hasattr(design, "effect") and isinstance(design.effect, str):
        design = replace(design, effect=design.effect.replace(
            f"{design.units.column} means", f"{design.units.column} proportions of {words[0]}"))
    return design
