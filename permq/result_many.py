"""Plain result data for several tests at once (responses, features or pairs of levels).

`ManyResult.to_dict()` is its JSON object: the statement's fields, the adjustment, how the
reference set was had, and a "rows" list (sorted by raw p; `top` / `below` applied).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

from .result import _count, _html, _num, _sentence, _short, _text


@dataclass(frozen=True)
class ManyRow:
    name: str                        # response, feature value, or "A - B" for a pair
    n: tuple                         # observed values per group (the pair's two, for pairs)
    statistic: Optional[float]       # on the test's fixed scale (see statistic_name)
    p_value: Optional[float]         # raw permutation p-value
    p_adjusted: Optional[float]
    estimate: Optional[float] = None
    interval: Optional[tuple] = None
    note: str = ""                   # why a response was not tested, and the like
    normal_p: Optional[float] = None         # the normal-theory counterpart's (adjusted) p
    normal_interval: Optional[tuple] = None  # its interval for the same estimate
    extra: dict = field(default_factory=dict, compare=False)   # kept in JSON as they are

    def to_dict(self) -> dict:
        d = {"name": self.name, "n": list(self.n), "statistic": _num(self.statistic),
             "p_value": _num(self.p_value), "p_adjusted": _num(self.p_adjusted),
             "estimate": _num(self.estimate),
             "interval": None if self.interval is None else [_num(v) for v in self.interval],
             "note": self.note}
        if self.normal_p is not None or self.normal_interval is not None:
            d["normal_p"] = _num(self.normal_p)
            d["normal_interval"] = (None if self.normal_interval is None else
                                    [_num(v) for v in self.normal_interval])
        d.update({k: _num(v) if isinstance(v, float) else v for k, v in self.extra.items()})
        return d


@dataclass
class ManyResult:
    statement: str
    family: str                      # "several responses", "for each", "pairwise"
    alternative: str
    test: str                        # the test applied to each, in words
    statistic_name: str
    adjustment: str                  # e.g. "max-t step-down"
    adjustment_rule: str             # in words
    method: str                      # "exact" or "monte-carlo"
    algorithm: str
    arrangements: Optional[float]
    draws: Optional[int]
    seed: Optional[int]
    rows: list                       # ManyRow, sorted by raw p, filters applied
    labels: tuple = ()               # the levels, in order
    effect: str = ""                 # e.g. "difference in means A - B"
    estimate_name: str = ""
    interval_method: str = ""
    level: float = 0.95
    tested: int = 0
    untested: int = 0
    total_rows: int = 0              # rows before `top` / `below`
    filters: dict = field(default_factory=dict)
    overall: dict = field(default_factory=dict)   # pairwise: the k-sample test
    warnings: list = field(default_factory=list)
    where: str = ""                  # where it ran (not part of the JSON: it never changes it)
    line: Optional[int] = None
    normal_test: str = ""            # the counterpart whose p fills the rows' normal_p
    conclusion: str = ""             # a sentence the rows lead to (e.g. the lowest effective dose)
    extra: dict = field(default_factory=dict)     # kept in JSON as they are
    seed_source: str = ""        # how the seed was had: given, statement, fresh (plan/seeds.py)

    def to_dict(self) -> dict:
        d = {"statement": self.statement, "family": self.family, "test": self.test,
             "statistic": {"name": self.statistic_name},
             "alternative": self.alternative, "adjustment": self.adjustment,
             "adjustment_rule": self.adjustment_rule, "method": self.method,
             "algorithm": self.algorithm}
        if self.method == "exact":
            d["arrangements"] = _count(self.arrangements)
        else:
            d["draws"] = self.draws
            d["reference_set"] = _count(self.arrangements)
        d["seed"] = self.seed
        d.update(levels=list(self.labels), effect=self.effect,
                 estimate={"name": self.estimate_name, "level": self.level,
                           "interval_method": self.interval_method},
                 tested=self.tested, not_tested=self.untested, total_rows=self.total_rows,
                 filters=dict(self.filters))
        if self.overall:
            d["overall"] = {k: _num(v) if isinstance(v, float) else v
                            for k, v in self.overall.items()}
        if self.normal_test:
            d["normal_theory"] = {"test": self.normal_test}
        if self.conclusion:
            d["conclusion"] = self.conclusion
        d.update(self.extra)
        d["rows"] = [r.to_dict() for r in self.rows]
        d["warnings"] = list(self.warnings)
        return d

    def sentence(self) -> str:
        return _sentence(self)

    def __str__(self) -> str:
        return _text(self)

    def __repr__(self) -> str:
        return (f"<permq.ManyResult {self.family}: {_short(self.statement)} -> "
                f"{self.tested:,} tests, {self.adjustment}>")

    def _repr_html_(self) -> str:
        return _html(self)
