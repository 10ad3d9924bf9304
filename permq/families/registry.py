"""The family registry: every test family declares itself once, and the pipeline reads it.

A `Family` is one test for one or more design kinds: the word after `using`, the kinds it
accepts, the published test it is, how it plans and runs (its exact algorithms and Monte Carlo
engine are the candidates its `plan` hands the planner), its normal-theory counterpart, its
estimate and interval, its robustness form, and its help and completion text. The grammar's
family words, the binder's checks and defaults, the planner's input, help and completion all
come from here; no module outside a family's own declaration compares family names.

To add a family, write a module in `permq/families/` whose `FAMILIES` lists its declarations
(whose `KINDS`, if it brings a new shape of data, names the kinds it adds; whose `REPORTED`
says how reports name its tests, with their sources; and whose `BIBLIOGRAPHY` adds any source
the shared list lacks), and add the module's name to `MODULES` below.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from importlib import import_module
from typing import Callable, Optional

from ..classcache import active as _kept_classes

# The modules that declare families, in the order their words are offered. Adding a family is
# adding its module here.
MODULES = ("two_sample", "one_sample", "k_sample", "ordered", "blocked", "association",
           "tables", "paired_counts", "two_proportions", "strata", "rates", "dose_response",
           "many", "scale", "factorial", "adjusted", "events", "events_strata", "events_groups",
           "incomplete_blocks", "control", "dose_finding", "studentized")


@dataclass(frozen=True)
class Kind:
    """A design kind: the shape of data a statement binds to."""

    verb: str            # the statement that produces it
    words: str           # in messages: "'signs' is not a test family for two groups"
    how: str = ""        # how a statement reaches it, for hints
    extends: str = ""    # the kind a statement becomes this one from, by adding `how`


BASE_KINDS = {
    "two-sample": Kind("compare", "two groups", "compare Y by G with two levels"),
    "paired": Kind("compare", "paired data", "compare after vs before paired"),
    "one-sample": Kind("compare", "one sample", "compare Y vs 12.5"),
    "k-sample": Kind("compare", "three or more groups", "compare Y by G with three or more levels"),
    "ordered": Kind("compare", "ordered groups", "add 'ordered'", "k-sample"),
    "stratified": Kind("compare", "two groups within blocks", "add 'within BLOCK' with two levels"),
    "blocked": Kind("compare", "blocked designs", "add 'within BLOCK' with three or more levels"),
    "ordered-blocked": Kind("compare", "ordered groups within blocks", "add 'ordered'",
                            "blocked"),
    "many": Kind("compare", "several responses", "compare Y1, Y2 by G"),
    "association": Kind("relate", "an association", "relate Y to X"),
    "table": Kind("count", "a table", "count A by B"),
    "ordered-table": Kind("count", "an ordered table",
                          "add 'ordered' (rows and columns in the order given)", "table"),
    "paired-table": Kind("count", "paired outcomes", "count first vs second paired"),
    "proportion": Kind("count", "one proportion", "count 7 of 20 vs 0.5"),
}


@dataclass(frozen=True)
class Reported:
    """How reports name the test behind one statistic, read from a result's JSON object.

    `records` are the values of the record's `family` field it appears under, `statistic` the
    start of the statistic's name ("" for any); `name` is the test as a report writes it
    ("" keeps the record's own `test`), `sources` the keys of its sources (render/methods.py's
    SOURCES or a module's BIBLIOGRAPHY) and `over` how a sentence says what an exact p-value
    is counted over ("over {n} tables with the observed margins"; `{n}` is the reference
    set's size in words, `{trials}` one less). The first declaration that matches wins."""

    records: tuple
    statistic: str
    name: str = ""
    sources: tuple = ()
    over: str = ""


@dataclass(frozen=True)
class Family:
    keyword: str                   # the word after `using`
    kinds: tuple                   # the design kinds (KINDS) it accepts
    title: str                     # the published test, e.g. "Wilcoxon rank-sum test"
    summary: str                   # one line for completion menus and `help families`
    plan: Callable                 # design -> plan.planner.Plan (its candidates: exact and MC)
    execute: Callable              # (design, plan, progress, statement) -> Result
    normal: str                    # the normal-theory counterpart, in words
    estimate: str = ""             # the estimate and its interval, in words ("" when none)
    robustness: Optional[Callable] = None   # design -> its robustness.spec.Check (or CountCheck)
    no_robustness: str = ""        # why there is no robustness form, when there is none
    default_in: tuple = ()         # kinds where it is the default family
    options: tuple = ()            # options only this family takes, e.g. ("adjusting",)
    help: str = ""                 # its help paragraph (`help KEYWORD`)
    selectable: bool = True        # offered after `using` (False: the kind's only test)
    effect_sizes: Optional[Callable] = None   # (design, result) -> list (effects.pieces)
    extra: dict = field(default_factory=dict, compare=False)   # what else the family needs


@lru_cache(maxsize=1)
def _declared() -> tuple:
    found, kinds, reported, bibliography = [], dict(BASE_KINDS), [], {}
    with _kept_classes():          # the family modules' dataclasses: methods kept compiled
        modules = [import_module(f"{__package__}.{name}") for name in MODULES]
    for name, module in zip(MODULES, modules):
        for key, kind in getattr(module, "KINDS", {}).items():
            if key in kinds:
                raise ValueError(f"module '{name}' declares the kind '{key}' a second time")
            kinds[key] = kind
        found.extend(module.FAMILIES)
        reported.extend(getattr(module, "REPORTED", ()))
        for key, text in getattr(module, "BIBLIOGRAPHY", {}).items():
            if bibliography.setdefault(key, text) != text:
                raise ValueError(f"module '{name}' gives the source '{key}' a second text")
    _check(found, kinds)
    return tuple(found), kinds, tuple(reported), bibliography


def families() -> tuple:
    return _declared()[0]


def reported(record_family: str, statistic: str) -> Optional[Reported]:
    """How reports name the test of a result record with this `family` and statistic name."""
    return next((r for r in _declared()[2] if record_family in r.records
                 and statistic.startswith(r.statistic)), None)


def bibliography() -> dict:
    """The sources the family modules add to the shared list."""
    return _declared()[3]


def kinds() -> dict:
    """Every design kind: the base kinds and those the family modules declare."""
    return _declared()[1]


def kind(name: str) -> Kind:
    return kinds()[name]


def _check(found, known) -> None:
    seen = {}
    for f in found:
        for kind in f.kinds:
            if kind not in known:
                raise ValueError(f"family '{f.keyword}' names an unknown kind '{kind}'")
            if (kind, f.keyword) in seen:
                raise ValueError(f"family '{f.keyword}' is declared twice for {kind}")
            seen[(kind, f.keyword)] = f
        if not set(f.default_in) <= set(f.kinds):
            raise ValueError(f"family '{f.keyword}' is a default where it does not apply")
    for kind in {k for f in found for k in f.kinds}:
        defaults = [f for f in found if kind in f.default_in]
        if len(defaults) != 1:
            raise ValueError(f"kind '{kind}' needs exactly one default family")


def keywords() -> tuple:
    """The words `using` accepts, in declaration order (the grammar's FAMILY terminal)."""
    out = []
    for f in families():
        if f.selectable and f.keyword not in out:
            out.append(f.keyword)
    return tuple(out)


def for_kind(kind: str) -> tuple:
    return tuple(f for f in families() if kind in f.kinds)


def find(kind: str, keyword: str) -> Optional[Family]:
    return next((f for f in for_kind(kind) if f.keyword == keyword), None)


def default(kind: str) -> Family:
    return next(f for f in for_kind(kind) if kind in f.default_in)


def kinds_of(keyword: str) -> tuple:
    return tuple(k for f in families() if f.keyword == keyword for k in f.kinds)


def for_verb(verb: str) -> tuple:
    """The `using` words that fit a statement's verb (completion filters by them)."""
    out = []
    for f in families():
        if f.selectable and any(kind(k).verb == verb for k in f.kinds) and f.keyword not in out:
            out.append(f.keyword)
    return tuple(out)


def family_for(design) -> Family:
    """The declaration that plans and runs a bound design."""
    s = design.settings
    found = find(s.kind, s.family)
    if found is None:
        from ..errors import PlanError

        raise PlanError(f"'{s.family}' analyses of {kind(s.kind).words} are not available "
                        "in this version")
    return found


def effect_pieces(*names: str) -> Callable:
    """A family's effect sizes: the pieces of permq/effects.py named, in order (loaded when a
    result first needs them)."""
    def sizes(design, result):
        from ..effects import pieces

        return pieces(*names)(design, result)
    return sizes


def declaring_module(family: Family) -> str:
    return family.plan.__module__
