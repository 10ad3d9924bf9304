"""Binder: a syntax node plus the session's tables -> a design (plain data), or clear errors.

Everything the user can get wrong about names and values is checked here, before any
computation: unknown tables and columns (with the nearest name suggested, all reported at
once), non-numeric responses, wrong numbers of levels, empty samples, missing values
(dropped and counted in a warning), options that do not fit the statement.
"""
from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from typing import Optional

import numpy as np
import pandas as pd

from ..errors import BindError, MultipleErrors, Span
from ..syntax import nodes as n
from .designs import OneSampleDesign, Settings, TwoSampleDesign
from . import groups as grouped_forms

TWO_SAMPLE_FAMILIES = ("means", "ranks", "normal-scores", "medians")
ONE_SAMPLE_FAMILIES = ("means", "ranks", "signs")


@dataclass
class Defaults:
    """Session-wide defaults that `set` changes."""

    confidence: float = 0.95
    seed: Optional[int] = None
    alternative: str = "two-sided"
    budget_seconds: float = 5.0
    memory_bytes: float = 2.0e9
    format: str = "text"
    workers: Optional[int] = None      # local workers for several-response statements (None: all)
    cluster: object = None             # a Dask scheduler address (or Client) to run them on


@dataclass
class Catalog:
    tables: dict = field(default_factory=dict)   # name -> data.tables.Table
    current: Optional[str] = None


# ---------------------------------------------------------------- entry point

def bind(node, catalog: Catalog, defaults: Defaults):
    """Bind an analysis statement (Compare / Relate / Count)."""
    if isinstance(node, n.Compare):
        return bind_compare(node, catalog, defaults)
    from . import other_forms

    if isinstance(node, n.Relate):
        return other_forms.bind_relate(node, catalog, defaults)
    if isinstance(node, n.Count):
        return other_forms.bind_count(node, catalog, defaults)
    raise BindError("this statement has nothing to compute", node.span)


def bind_compare(node: n.Compare, catalog: Catalog, defaults: Defaults):
    opts = n.options_of(node)
    subject = node.subject
    if isinstance(subject, n.Grouped):
        return bind_grouped(node, subject, opts, catalog, defaults)
    operands = subject.operands
    kinds = {type(o) for o in operands}
    if n.ValueOperand in kinds:
        return bind_one_sample(node, operands, opts, catalog, defaults)
    if "paired" in opts:
        return bind_paired(node, operands, opts, catalog, defaults)
    return bind_samples(node, operands, opts, catalog, defaults)


# ---------------------------------------------------------------- settings

def settings_for(node, opts: dict, defaults: Defaults, allowed_families: tuple,
                 default_family: str, form: str, allowed_options: tuple) -> Settings:
    for key, opt in opts.items():
        if key not in allowed_options and key not in ("using", "alternative", "confidence",
                                                      "exact", "sampled", "seed", "in",
                                                      "picture"):
            raise BindError(f"'{key}' does not apply to {form}", opt.span,
                            hint=_option_hint(key))
    if "picture" in opts:
        check_picture(opts["picture"])
    family = default_family
    if "using" in opts:
        family = opts["using"].value
        if family not in allowed_families:
            raise BindError(f"'{family}' is not a test family for {form}", opts["using"].span,
                            hint="choose one of " + ", ".join(allowed_families))
    level = defaults.confidence
    if "confidence" in opts:
        level = confidence_value(opts["confidence"].value, opts["confidence"].span)
    if "exact" in opts and "sampled" in opts:
        raise BindError("'exact' and 'sampled' ask for different methods; keep one",
                        opts["sampled"].span)
    sampled = None
    if "sampled" in opts:
        sampled = int(opts["sampled"].value)
        if sampled < 100:
            raise BindError("'sampled' needs at least 100 draws", opts["sampled"].span)
        if sampled > 1_000_000_000:
            raise BindError("'sampled' is limited to 1,000,000,000 draws", opts["sampled"].span)
    seed = opts["seed"].value if "seed" in opts else defaults.seed
    alternative = opts["alternative"].value if "alternative" in opts else defaults.alternative
    return Settings(family=family, alternative=alternative, level=level,
                    exact="exact" in opts, sampled=sampled, seed=seed,
                    budget_seconds=defaults.budget_seconds, memory_bytes=defaults.memory_bytes)


def confidence_value(value, span: Optional[Span]) -> float:
    if isinstance(value, n.Percent):
        level = value.value / 100.0
    else:
        level = float(value)
        if level > 1:
            raise BindError(f"confidence {value:g} is not a level", span,
                            hint=f"write {value:g}% or {value / 100:g}")
    if not 0 < level < 1:
        raise BindError("the confidence level must lie strictly between 0% and 100%", span)
    return level


def check_picture(opt) -> None:
    """A picture file is written as PNG or SVG, chosen by its extension."""
    if not str(opt.value).lower().endswith((".png", ".svg")):
        raise BindError(f"a picture is written as .png or .svg, not '{opt.value}'", opt.span,
                        hint='for example: picture "null.png"')


def _option_hint(key: str) -> Optional[str]:
    return {
        "paired": "'paired' goes with two columns: compare after vs before paired",
        "levels": "'levels' goes with a group column: compare mass by recipe levels \"A\", \"B\"",
        "within": "'within' goes with a group column: compare mass by recipe within bench",
        "ordered": "'ordered' goes with a group column: compare mass by dose ordered",
        "adjusting": "'adjusting for' goes with: relate Y to X using slope adjusting for Z",
        "datasets": "'datasets' goes with a robustness check: robustness compare ... datasets 5000",
        "shift": "'shift' goes with a robustness check: robustness compare ... shift 1 sd",
        "significance": "'significance' goes with a robustness check: "
                        "robustness compare ... significance 1%",
    }.get(key)


# ---------------------------------------------------------------- tables and columns

def resolve_table(opts: dict, catalog: Catalog, span: Span):
    if "in" in opts:
        name = opts["in"].value
        if name.text not in catalog.tables:
            raise BindError(f"no table named '{name.text}'", name.span,
                            hint=suggest(name.text, list(catalog.tables), "tables"))
        return catalog.tables[name.text]
    if catalog.current is None:
        if not catalog.tables:
            raise BindError("no table is loaded", span,
                            hint='load one first: load "file.csv" as mytable')
        raise BindError("no table is in use", span, hint="say which: use " + next(iter(catalog.tables)))
    return catalog.tables[catalog.current]


def check_columns(table, names: list) -> None:
    """Report every unknown column at once, each with the nearest name."""
    columns = [str(c) for c in table.frame.columns]
    errors = []
    for name in names:
        if name.text not in columns:
            errors.append(BindError(f"no column '{name.text}' in table '{table.name}'", name.span,
                                    hint=suggest(name.text, columns)))
    if len(errors) == 1:
        raise errors[0]
    if errors:
        raise MultipleErrors(errors)


def suggest(word: str, names: list, kind: str = "columns") -> Optional[str]:
    """'did you mean ...?' for the nearest name, else the names there are (as `kind`)."""
    lower = {c.lower(): c for c in names}
    if word.lower() in lower:
        return f"did you mean '{lower[word.lower()]}'?"
    close = difflib.get_close_matches(word, names, n=1, cutoff=0.5)
    if not close:
        close = difflib.get_close_matches(word.lower(), list(lower), n=1, cutoff=0.5)
        close = [lower[c] for c in close]
    if close:
        return f"did you mean '{close[0]}'?"
    if names:
        shown = ", ".join(names[:8]) + (", ..." if len(names) > 8 else "")
        return f"{kind}: {shown}"
    return None


def numeric_column(table, name: n.Name) -> pd.Series:
    s = table.frame[name.text]
    if isinstance(s, pd.DataFrame):
        raise BindError(f"table '{table.name}' has more than one column named '{name.text}'",
                        name.span, hint="rename the duplicates in the file")
    if pd.api.types.is_bool_dtype(s):
        return s.astype(float)
    if not pd.api.types.is_numeric_dtype(s):
        converted = pd.to_numeric(s, errors="coerce")
        bad = s[converted.isna() & s.notna()]
        if len(bad):
            example = str(bad.iloc[0])[:40]
            raise BindError(f"column '{name.text}' is not numeric: row {bad.index[0] + 2} of the "
                            f"file holds '{example}'", name.span,
                            hint=f"{len(bad)} value(s) are not numbers")
        s = converted
    values = s.astype(float)
    if np.isinf(values).any():
        raise BindError(f"column '{name.text}' holds an infinite value", name.span)
    return values


def finite_array(values, what: str, span: Span) -> np.ndarray:
    a = np.asarray(values, dtype=float)
    if not np.all(np.isfinite(a)):
        raise BindError(f"{what} holds a value that is not a finite number", span)
    return a


def dropped_warning(count: int, what: str) -> tuple:
    if not count:
        return ()
    return (f"dropped {count} row{'s' if count != 1 else ''} with a missing value in {what}",)


def level_text(v) -> str:
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    return str(v)


# ---------------------------------------------------------------- grouped: Y by G

def bind_grouped(node, subject: n.Grouped, opts, catalog, defaults):
    if isinstance(subject.response, n.Responses) or "for_each" in opts or "pairwise" in opts:
        from .many import bind_many

        return bind_many(node, subject, opts, catalog, defaults)
    table = resolve_table(opts, catalog, subject.span)
    check_columns(table, [subject.response, subject.group] +
                  ([opts["within"].value] if "within" in opts else []))
    y = numeric_column(table, subject.response)
    g = table.frame[subject.group.text]
    keep = y.notna() & g.notna()
    blocks = None
    if "within" in opts:
        blocks = table.frame[opts["within"].value.text]
        keep &= blocks.notna()
    warnings = dropped_warning(int((~keep).sum()), _names(subject.response, subject.group,
                                                         opts.get("within")))
    y, g = y[keep], g[keep].map(level_text)
    present = sorted(g.unique(), key=_natural_key)
    levels = present
    if "levels" in opts:
        levels = _chosen_levels(opts["levels"], present, subject.group.text)
        chosen = g.isin(levels)
        y, g = y[chosen], g[chosen]
        if blocks is not None:
            blocks = blocks[keep][chosen]
    elif blocks is not None:
        blocks = blocks[keep]
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
                                         warnings, table)
    s = settings_for(node, opts, defaults, TWO_SAMPLE_FAMILIES, "means", "two groups",
                     ("levels",))
    a, b = levels
    x1 = y[g == a].to_numpy(float)
    x2 = y[g == b].to_numpy(float)
    if "levels" not in opts:
        warnings += (f"levels taken in sorted order ({a}, {b}); "
                     f"write levels \"{b}\", \"{a}\" for the other direction",)
    return TwoSampleDesign(x1, x2, (a, b), subject.response.text, f"{a} - {b}", s, warnings)


def _names(*items) -> str:
    names = []
    for it in items:
        if it is None:
            continue
        if isinstance(it, n.Option):
            it = it.value
        names.append(f"'{it.text}'")
    return " or ".join(names)


def _natural_key(text: str):
    try:
        return (0, float(text), text)
    except ValueError:
        return (1, 0.0, text)


def _chosen_levels(opt: n.Option, present: list, column: str) -> list:
    levels = []
    errors = []
    for text, span in opt.value:
        if text not in present:
            errors.append(BindError(f"no level \"{text}\" in column '{column}'", span,
                                    hint=suggest(text, present, "levels")))
        elif text in levels:
            errors.append(BindError(f"level \"{text}\" is named twice", span))
        else:
            levels.append(text)
    if len(errors) == 1:
        raise errors[0]
    if errors:
        raise MultipleErrors(errors)
    if len(levels) < 2:
        raise BindError(f"'{opt.key}' needs two or more levels", opt.span,
                        hint=f"levels: {', '.join(present)}")
    return levels


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
    s = settings_for(node, opts, defaults, TWO_SAMPLE_FAMILIES, "means", "two samples", ())
    return TwoSampleDesign(samples[0], samples[1], tuple(labels), "values",
                           f"{labels[0]} - {labels[1]}", s, warnings)


def _ordinal(i: int) -> str:
    return ["first", "second", "third", "fourth", "fifth", "sixth"][i] if i < 6 else f"sample {i + 1}"


def bind_paired(node, operands, opts, catalog, defaults):
    if len(operands) != 2:
        raise BindError("'paired' compares exactly two columns or lists", node.subject.span)
    a, b = operands
    s = settings_for(node, opts, defaults, ONE_SAMPLE_FAMILIES, "means", "paired data",
                     ("paired",))
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
    d = first - second
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
    s = settings_for(node, opts, defaults, ONE_SAMPLE_FAMILIES, "means", "one sample", ())
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
    return OneSampleDesign(x - ref, f"{label} - {level_text(ref)}", s, "one-sample", ref,
                           (label,), warnings)
