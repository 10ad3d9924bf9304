"""Bound designs: plain data between the binder and the planner / engines.

A design holds the numbers an engine needs (already cleaned of missing values), the names of
things in the user's words, and the settings that apply to this one statement.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from ..engine.core.limits import DEFAULT_BUDGET_SECONDS, DEFAULT_MEMORY_BYTES


@dataclass(frozen=True)
class Settings:
    family: str              # the word after `using` (or the kind's default family)
    kind: str = ""           # the design kind it was bound as (families.registry.kinds())
    alternative: str = "two-sided"
    level: float = 0.95
    exact: bool = False
    sampled: Optional[int] = None
    seed: Optional[int] = None
    budget_seconds: float = DEFAULT_BUDGET_SECONDS
    memory_bytes: float = DEFAULT_MEMORY_BYTES
    explain: bool = False


@dataclass(frozen=True)
class UnitsInfo:
    """The randomised unit (`units COLUMN`): the design's values are one per unit, each the
    mean of the unit's rows (bind/units.py says why), and arrangements move whole units."""

    column: str              # the unit column, in the user's words
    labels: tuple            # the units, in the order of the design's values
    sizes: np.ndarray        # rows of each unit, in the same order
    rows: int                # rows used in all
    value: str = "mean of the unit's rows"   # what a unit's value is, in words

    @property
    def count(self) -> int:
        return len(self.labels)

    def to_dict(self) -> dict:
        return {"column": self.column, "units": self.count, "rows": int(self.rows),
                "rows_per_unit": {"min": int(self.sizes.min()), "max": int(self.sizes.max())},
                "unit_value": f"{self.value} (each unit weighted equally)"}

    def words(self) -> str:
        low, high = int(self.sizes.min()), int(self.sizes.max())
        per = f"{low}" if low == high else f"{low} to {high}"
        return (f"{self.count} units of '{self.column}' ({self.rows} rows, {per} a unit): "
                "each unit's mean is one value; arrangements move whole units")


@dataclass(frozen=True)
class TwoSampleDesign:
    x: np.ndarray
    y: np.ndarray
    labels: tuple            # (first, second) in the user's words
    response: str
    effect: str              # e.g. "A - B"
    settings: Settings
    warnings: tuple = ()
    kind: str = "two-sample"
    units: Optional[UnitsInfo] = None    # x's units, then y's


@dataclass(frozen=True)
class OneSampleDesign:
    d: np.ndarray            # differences (paired) or values minus the reference value
    effect: str              # e.g. "after - before", "mass - 12.5"
    settings: Settings
    kind: str = "paired"     # "paired" or "one-sample"
    reference: float = 0.0   # the value subtracted, for one sample
    labels: tuple = ()
    warnings: tuple = ()


@dataclass(frozen=True)
class GroupsDesign:
    """Three or more groups, ordered groups, or blocked designs (k-sample family)."""

    values: np.ndarray
    groups: np.ndarray       # codes 0..k-1 in level order
    labels: tuple
    response: str
    settings: Settings
    blocks: Optional[np.ndarray] = None
    block_labels: tuple = ()
    ordered: bool = False
    scores: Optional[np.ndarray] = None   # dose scores of the ordered levels
    warnings: tuple = ()
    kind: str = "k-sample"
    units: Optional[UnitsInfo] = None


@dataclass(frozen=True)
class AssociationDesign:
    y: np.ndarray
    x: np.ndarray
    names: tuple             # (response, predictor)
    settings: Settings
    covariates: Optional[np.ndarray] = None
    covariate_names: tuple = ()
    warnings: tuple = ()
    kind: str = "association"
    units: Optional[UnitsInfo] = None


@dataclass(frozen=True)
class TableDesign:
    table: np.ndarray        # counts, rows x columns
    row_labels: tuple
    col_labels: tuple
    settings: Settings
    form: str = "table"      # "table", "paired", "proportion"
    ordered: bool = False
    reference: Optional[float] = None
    names: tuple = ()
    warnings: tuple = field(default_factory=tuple)
    kind: str = "table"
    row_scores: Optional[tuple] = None    # trend scores of the ordered rows / columns
    col_scores: Optional[tuple] = None


@dataclass(frozen=True)
class TwoProportionsDesign:
    """Two independent binomial samples: x1 of n1 against x2 of n2."""

    counts: tuple            # (x1, n1, x2, n2)
    labels: tuple            # (first, second) in the user's words
    outcomes: tuple          # (what is counted, the other): ("successes", "failures"),
    settings: Settings       #   ("dead = 1", "dead = 0")
    names: tuple = ()        # (response, group) when from two columns
    warnings: tuple = ()
    kind: str = "two-proportions"


@dataclass(frozen=True)
class StrataDesign:
    """A binary response in two or more groups within strata (2 x k x K)."""

    tables: np.ndarray       # (strata, groups, 2): events and non-events
    group_labels: tuple
    stratum_labels: tuple
    outcomes: tuple          # (the event, the other), e.g. ("dead = 1", "dead = 0")
    settings: Settings
    scores: tuple = ()       # the groups' dose scores (ordered strata)
    names: tuple = ()        # (response, group, stratum)
    warnings: tuple = ()
    kind: str = "strata"     # "strata" (2 x 2 x K) or "ordered-strata" (2 x k x K)


@dataclass(frozen=True)
class RatesDesign:
    """Event counts over exposures: one rate against a reference, or two rates."""

    counts: tuple
    exposures: tuple
    settings: Settings
    reference: float = 1.0   # one rate: the reference rate; two rates: the rate ratio tested
    warnings: tuple = ()
    kind: str = "rate"       # "rate" or "two-rates"


@dataclass(frozen=True)
class DoseResponseDesign:
    """A binary response against a numeric predictor (dose)."""

    y: np.ndarray            # 0 / 1
    x: np.ndarray
    names: tuple             # (response, predictor)
    outcomes: tuple          # (the event, the other), e.g. ("dead = 1", "dead = 0")
    settings: Settings
    warnings: tuple = ()
    kind: str = "dose-response"


@dataclass(frozen=True)
class ManyDesign:
    """Several responses (or every pair of levels) across the same groups, permuted together."""

    values: np.ndarray       # (units, tested responses), NaN where a value is missing
    groups: np.ndarray       # codes 0..k-1 in level order, one per unit
    labels: tuple            # the levels, in order
    names: tuple             # the tested responses (features, or the one response of pairwise)
    settings: Settings
    adjustment: str = "max-t"        # none | holm | fdr | max-t | min-p
    step: str = "step-down"          # step-down | single-step (holm single-step: Bonferroni)
    pairwise: bool = False
    top: Optional[int] = None
    below: Optional[float] = None
    untested: tuple = ()     # ((name, reason), ...) in the order named
    feature: str = ""        # `for each` column, if any
    response: str = ""       # the response column of `for each` / `pairwise`
    group: str = ""          # the group column
    workers: Optional[int] = None
    cluster: object = None   # an address or a dask.distributed Client
    warnings: tuple = ()
    kind: str = "many"


@dataclass(frozen=True)
class ControlDesign:
    """Every other level against a control (`against`), or doses in order against it
    (`ordered against`): level 0 is the control, the others follow in order."""

    values: np.ndarray       # one per unit
    groups: np.ndarray       # codes 0..k-1; 0 is the control
    labels: tuple            # the control first, then the other levels in order
    response: str
    settings: Settings
    adjustment: str = "max-t"        # many-to-one: none | holm | fdr | max-t | min-p
    step: str = "step-down"
    scores: Optional[np.ndarray] = None   # dose scores (ordered against): one per level
    warnings: tuple = ()
    kind: str = "control"            # "control" or "dose-finding"
    units: Optional[UnitsInfo] = None    # `units COLUMN`: values are unit means


@dataclass(frozen=True)
class FactorialDesign:
    """One response across two crossed factors (`compare Y by A and B`), every cell filled."""

    values: np.ndarray
    first: np.ndarray        # level codes of the first factor, 0..a-1 in level order
    second: np.ndarray       # level codes of the second factor
    first_labels: tuple
    second_labels: tuple
    names: tuple             # (response, first factor, second factor)
    settings: Settings
    warnings: tuple = ()
    kind: str = "two-factor"


@dataclass(frozen=True)
class AdjustedDesign:
    """Groups compared with covariates in the statistic (`compare Y by G adjusting for Z`)."""

    values: np.ndarray
    groups: np.ndarray       # codes 0..k-1 in level order
    labels: tuple
    response: str
    group: str
    covariates: np.ndarray   # rows x columns (text covariates as indicator columns)
    covariate_names: tuple   # the columns named, in the user's words
    settings: Settings
    warnings: tuple = ()
    kind: str = "adjusted"


@dataclass(frozen=True)
class EventsDesign:
    """Censored times to an event in two groups: event 1 marks an event at that time, 0 a
    unit censored then (still without the event)."""

    time1: np.ndarray
    event1: np.ndarray
    time2: np.ndarray
    event2: np.ndarray
    labels: tuple            # the two groups, first and second
    names: tuple             # (time column, group column, event column)
    event_words: str         # what counts as an event, e.g. "died = 1"
    settings: Settings
    warnings: tuple = ()
    kind: str = "events"


@dataclass(frozen=True)
class EventsStrataDesign:
    """Censored times in two groups within strata (`within S`): group 0 is the first level;
    strata are codes 0..K-1 in `strata_labels` order."""

    time: np.ndarray
    event: np.ndarray
    groups: np.ndarray       # 0 / 1
    strata: np.ndarray       # codes
    labels: tuple            # the two groups
    strata_labels: tuple
    names: tuple             # (time column, group column, event column, strata column)
    event_words: str
    settings: Settings
    warnings: tuple = ()
    kind: str = "events-strata"


@dataclass(frozen=True)
class EventsGroupsDesign:
    """Censored times in three or more groups: group codes 0..k-1 in `labels` order."""

    time: np.ndarray
    event: np.ndarray
    groups: np.ndarray
    labels: tuple
    names: tuple             # (time column, group column, event column)
    event_words: str
    settings: Settings
    warnings: tuple = ()
    kind: str = "events-groups"
