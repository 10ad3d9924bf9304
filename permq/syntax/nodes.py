"""Syntax nodes: frozen dataclasses whose first field is the source span.

No lark object leaves the parser module; everything downstream sees only these.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional, Union

from ..errors import Span


@dataclass(frozen=True)
class Name:
    span: Span
    text: str


@dataclass(frozen=True)
class Option:
    """One option after a statement's subject: `using ranks`, `seed 7`, `levels "A", "B"` ..."""

    span: Span
    key: str
    value: object = True


# ---- operands of `compare ... vs ...`
@dataclass(frozen=True)
class ColumnOperand:
    span: Span
    name: Name


@dataclass(frozen=True)
class ValueOperand:
    span: Span
    value: float


@dataclass(frozen=True)
class ListOperand:
    span: Span
    values: tuple


Operand = Union[ColumnOperand, ValueOperand, ListOperand]


@dataclass(frozen=True)
class Responses:
    """Several responses: a list of columns, or every numeric column except some."""

    span: Span
    names: tuple = ()            # listed columns
    every_numeric: bool = False
    excluded: tuple = ()         # with every_numeric


@dataclass(frozen=True)
class Grouped:
    span: Span
    response: object             # Name, or Responses for several responses
    group: Name


@dataclass(frozen=True)
class Crossed:
    """`compare Y by A and B`: one response, two crossed factors."""

    span: Span
    response: object             # Name (Responses is refused by the binder)
    first: Name
    second: Name


@dataclass(frozen=True)
class Versus:
    span: Span
    operands: tuple


@dataclass(frozen=True)
class Compare:
    span: Span
    subject: Union[Grouped, Crossed, Versus]
    options: tuple = ()


@dataclass(frozen=True)
class Relate:
    span: Span
    response: Name
    predictor: Name
    options: tuple = ()


@dataclass(frozen=True)
class CountBy:
    span: Span
    rows: Name
    columns: Name


@dataclass(frozen=True)
class CountVersus:
    span: Span
    first: Name
    second: Name
    more: tuple = ()           # further columns: several paired outcomes


@dataclass(frozen=True)
class CountInline:
    span: Span
    rows: tuple


@dataclass(frozen=True)
class CountProportion:
    span: Span
    successes: int
    trials: int
    value: Optional[float] = None


@dataclass(frozen=True)
class CountTwoProportions:
    """`count 3 of 20 vs 9 of 21`."""

    span: Span
    first: tuple             # (successes, trials)
    second: tuple


@dataclass(frozen=True)
class CountRates:
    """`count 7 events in 120.5 vs 0.05` (one rate) or `... vs 2 events in 98` (two)."""

    span: Span
    counts: tuple            # one or two event counts
    exposures: tuple
    reference: Optional[float] = None   # one rate: the reference rate


@dataclass(frozen=True)
class Count:
    span: Span
    subject: Union[CountBy, CountVersus, CountInline, CountProportion, CountTwoProportions,
                   CountRates]
    options: tuple = ()


Analysis = Union[Compare, Relate, Count]


@dataclass(frozen=True)
class Robustness:
    span: Span
    analysis: Analysis


@dataclass(frozen=True)
class Layout:
    """A design described before the data exist: `groups 6, 6`, `pairs 10`, `sample 12`,
    `count proportions 0.2 vs 0.6`, `count proportion 0.7 vs 0.5`."""

    span: Span
    shape: str                   # "groups", "pairs", "sample", "proportions", "proportion"
    sizes: tuple                 # units a group (one number for pairs and one sample)
    options: tuple = ()
    values: tuple = ()           # count shapes: the two proportions (true, or true and null)


@dataclass(frozen=True)
class Power:
    """`power ANALYSIS` (its data are the pilot) or `power LAYOUT`."""

    span: Span
    analysis: Union[Analysis, Layout]


@dataclass(frozen=True)
class Explain:
    span: Span
    analysis: Union[Analysis, Robustness]


@dataclass(frozen=True)
class Load:
    span: Span
    path: str
    alias: Optional[Name] = None
    options: tuple = ()          # Option: delimiter, decimal, sheet (each a string)


@dataclass(frozen=True)
class Use:
    span: Span
    table: Name


@dataclass(frozen=True)
class SetStatement:
    span: Span
    key: str
    value: object
    value_span: Optional[Span] = None


@dataclass(frozen=True)
class Show:
    span: Span
    what: str


@dataclass(frozen=True)
class Describe:
    span: Span
    table: Name


@dataclass(frozen=True)
class Help:
    span: Span
    topic: Optional[str] = None


@dataclass(frozen=True)
class Save:
    span: Span
    path: str
    what: str = "session"        # "session" (a query file) or "report" (an HTML page)


@dataclass(frozen=True)
class Copy:
    """`copy`: the last result's sentence, plain, and on the clipboard where there is one."""

    span: Span


@dataclass(frozen=True)
class Quit:
    span: Span


Statement = Union[Load, Use, Compare, Relate, Count, Explain, Robustness, Power, SetStatement, Show, Describe,
                  Help, Save, Copy, Quit]


def options_of(node) -> dict:
    """The options of an analysis as a dict key -> Option (the last one wins)."""
    return {o.key: o for o in getattr(node, "options", ())}


@dataclass(frozen=True)
class Percent:
    """A number written with a percent sign."""

    value: float = field(default=0.0)
