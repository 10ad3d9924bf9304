"""What every binding form shares: session defaults and the catalog of tables, the statement's
settings (family, alternative, level, method), tables and columns by name with the nearest name
suggested, numeric columns, levels in natural order, and the warnings for dropped rows."""
from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from typing import Optional

import numpy as np
from ..lazy import pandas as pd

from ..engine.core.limits import DEFAULT_BUDGET_SECONDS, DEFAULT_MEMORY_BYTES
from ..data.order import natural_key  # noqa: F401 - the binders' level order, from one place
from ..errors import BindError, MultipleErrors, Span
from ..syntax import nodes as n
from .designs import Settings



@dataclass
class Defaults:
    """Session-wide defaults that `set` changes."""

    confidence: float = 0.95
    seed: object = None                # an int, "fresh", or None: from each statement (plan/seeds.py)
    alternative: str = "two-sided"
    budget_seconds: float = DEFAULT_BUDGET_SECONDS
    memory_bytes: float = DEFAULT_MEMORY_BYTES
    format: str = "text"
    workers: Optional[int] = None      # local workers for several-response statements (None: all)
    cluster: object = None             # a Dask scheduler address (or Client) to run them on


@dataclass
class Catalog:
    tables: dict = field(default_factory=dict)   # name -> data.tables.Table
    current: Optional[str] = None


# ---------------------------------------------------------------- settings

def settings_for(node, opts: dict, defaults: Defaults, kind: str, form: str,
                 allowed_options: tuple) -> Settings:
    """The statement's settings for a design of `kind` (families.registry.kinds()); `form` names
    the design in messages ("two groups", "two samples")."""
    from ..families import registry

    family_options = {o for f in registry.for_kind(kind) for o in f.options}
    for key, opt in opts.items():
        if key not in allowed_options and key not in family_options and key not in (
                "using", "alternative", "confidence", "exact", "sampled", "seed", "in",
                "picture"):
            word = {"sizes": "n", "target": "for power"}.get(key, key)
            raise BindError(f"'{word}' does not apply to {form}", opt.span,
                            hint=_option_hint(key, form))
    if "picture" in opts:
        check_picture(opts["picture"])
    chosen = registry.default(kind)
    if "using" in opts:
        chosen = registry.find(kind, opts["using"].value)
        if chosen is None or not chosen.selectable:
            raise _not_a_family(opts["using"], kind, form)
    for key in sorted(family_options - set(chosen.options)):
        if key in opts:
            takers = [f.keyword for f in registry.for_kind(kind) if key in f.options]
            raise BindError(f"'{_OPTION_WORDS.get(key, key)}' goes with {' or '.join(takers)}",
                            opts[key].span, hint=f"add: using {takers[0]}")
    family = chosen.keyword
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
    seed = seed if isinstance(seed, int) else None     # the pipeline decides the rest (plan/seeds.py)
    alternative = opts["alternative"].value if "alternative" in opts else defaults.alternative
    return Settings(family=family, kind=kind, alternative=alternative, level=level,
                    exact="exact" in opts, sampled=sampled, seed=seed,
                    budget_seconds=defaults.budget_seconds, memory_bytes=defaults.memory_bytes)


_OPTION_WORDS = {"adjusting": "adjusting for"}


def _not_a_family(opt, kind: str, form: str) -> BindError:
    """'ranks' is not a test family for ...: the families of this kind, or where the word fits."""
    from ..families import registry

    word = opt.value
    allowed = [f.keyword for f in registry.for_kind(kind) if f.selectable]
    # where the word fits this statement with one more option ('trend' once 'ordered' is added)
    elsewhere = [k for k in registry.kinds_of(word) if registry.kind(k).extends == kind]
    hint = "choose one of " + ", ".join(allowed) if allowed else (
        f"{form} has one test, {registry.default(kind).title}: drop 'using'")
    # a word only of declared shapes the statement lacks a part of ('log-rank' on two groups
    # without 'event'); a word of the base shapes too gets no such hint ('ranks' on censored
    # times would ignore the censoring)
    verb = registry.kind(kind).verb
    theirs = [k for k in registry.kinds_of(word) if registry.kind(k).verb == verb]
    other = [] if any(k in registry.BASE_KINDS for k in theirs) else [
        k for k in theirs if not registry.kind(k).extends]
    if other and not elsewhere:
        hint = f"'{word}' is for {registry.kind(other[0]).words} " \
               f"({registry.kind(other[0]).how}); here {hint}"
    if elsewhere:
        hint = f"'{word}' applies to {registry.kind(elsewhere[0]).words}: " \
               f"{registry.kind(elsewhere[0]).how}"
    return BindError(f"'{word}' is not a test family for {form}", opt.span, hint=hint)


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


# forms that already have a group column: "goes with a group column" would not help there
_WITH_GROUPS = {
    "several responses": {
        "within": "'within' takes one response at a time: compare mass by recipe within bench",
        "ordered": "'ordered' takes one response at a time: compare mass by dose ordered"},
    "pairwise comparisons": {
        "within": "'pairwise' and 'within' do not combine; for two levels within blocks: "
                  "compare mass by recipe levels \"A\", \"B\" within bench",
        "ordered": "'pairwise' and 'ordered' do not combine; drop one of them"},
    "'for each'": {
        "within": "'for each' and 'within' do not combine; drop one of them",
        "ordered": "'for each' and 'ordered' do not combine; drop one of them"},
    "a table": {
        "within": "'within' goes with a numeric response: compare mass by recipe within bench",
        "levels": "a table keeps every level of both columns; to leave some out, filter the "
                  "table before loading it"},
}


def _option_hint(key: str, form: str = "") -> Optional[str]:
    if key in _WITH_GROUPS.get(form, {}):
        return _WITH_GROUPS[form][key]
    return {
        "paired": "'paired' goes with two columns: compare after vs before paired",
        "levels": "'levels' goes with a group column: compare mass by recipe levels \"A\", \"B\"",
        "within": "'within' goes with a group column: compare mass by recipe within bench",
        "ordered": "'ordered' goes with a group column: compare mass by dose ordered",
        "units": "'units' goes with a group column or a predictor: compare weight by dose "
                 "units litter",
        "against": "'against' goes with a group column: compare weight by dose against \"0\"",
        "adjusting": "'adjusting for' goes with a group column or a slope: compare Y by G "
                     "adjusting for Z, relate Y to X using slope adjusting for Z",
        "datasets": "'datasets' goes with a robustness check: robustness compare ... datasets 5000",
        "shift": "'shift' goes with a robustness check: robustness compare ... shift 1 sd",
        "significance": "'significance' goes with a robustness check: "
                        "robustness compare ... significance 1%",
        "margin": "'margin' goes with two samples, pairs or one sample: "
                  "compare after vs before paired margin 0.5",
        "sizes": "'n' goes with power: power compare ... n 8 shift 1 sd",
        "law": "'law' goes with power: power compare ... shift 1 sd law t3",
        "target": "'for power' goes with power: power groups 6, 6 shift 1 sd for power 80%",
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


def names_of(*items) -> str:
    names = []
    for it in items:
        if it is None:
            continue
        if isinstance(it, n.Option):
            it = it.value
        names.append(f"'{it.text}'")
    return " or ".join(names)




def chosen_levels(opt: n.Option, present: list, column: str) -> list:
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


def all_numbers(levels) -> bool:
    """Whether every level reads as a number."""
    try:
        [float(v) for v in levels]
        return True
    except ValueError:
        return False


def listed_numbers(values) -> str:
    """Scores in a message: "0, 10, 20"."""
    return ", ".join(f"{v:g}" for v in values)
