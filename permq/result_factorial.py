"""Plain result data for two crossed factors: one row per term (each main effect and the
interaction), each with its own permutation test and its two-way ANOVA F beside it.

`FactorialResult.to_dict()` is its JSON object: the statement, the factors, the cells (rows,
means), the sums of squares used, and a "terms" list.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

from .result import EngineOutcome, NormalTheory, _count, _html, _num, _sentence, _short, _text

FAMILY = "two factors"


@dataclass(frozen=True)
class TermRow:
    term: str                    # "variety", "fertiliser", "variety × fertiliser"
    arranged: str                # what the reference set rearranges, in words
    outcome: EngineOutcome
    normal: Optional[NormalTheory]
    df: tuple                    # (the term's df, the error df)

    def to_dict(self) -> dict:
        o = self.outcome
        d = {"term": self.term, "arranged": self.arranged,
             "statistic": {"name": o.statistic_name, "value": _num(o.statistic)},
             "df": [int(v) for v in self.df], "p_value": _num(o.p_value), "method": o.method,
             "algorithm": o.algorithm}
        if o.method == "exact":
            d["arrangements"] = _count(o.arrangements)
        else:
            d.update(draws=o.draws, p_interval=[_num(v) for v in o.p_interval],
                     reference_set=_count(o.arrangements))
        d["normal_theory"] = self.normal.to_dict() if self.normal else None
        d["warnings"] = list(o.warnings)
        return d


@dataclass
class FactorialResult:
    statement: str
    response: str
    factors: tuple               # (first, second)
    levels: tuple                # (levels of the first, levels of the second)
    terms: list                  # TermRow, main effects first
    cells: dict                  # {"n": [[...]], "mean": [[...]], "sd": [[...]]}
    sums_of_squares: str         # which sums of squares, in words
    two_sided_rule: str = ""
    alternative: str = "two-sided"
    seed: Optional[int] = None
    seed_source: str = ""        # how the seed was had: given, statement, fresh (plan/seeds.py)
    warnings: list = field(default_factory=list)
    line: Optional[int] = None
    family: str = FAMILY

    @property
    def method(self) -> str:
        """"exact" when every term is exact, else "monte-carlo" (for replaying with the seed)."""
        methods = {t.outcome.method for t in self.terms}
        return "exact" if methods == {"exact"} else "monte-carlo"

    def to_dict(self) -> dict:
        first, second = self.factors
        return {"statement": self.statement, "family": self.family, "response": self.response,
                "factors": list(self.factors), "alternative": self.alternative,
                "method": self.method, "seed": self.seed,
                "sums_of_squares": self.sums_of_squares,
                "cells": {"rows": first, "columns": second, "row_levels": list(self.levels[0]),
                          "column_levels": list(self.levels[1]),
                          **{k: [[_num(v) for v in row] for row in rows]
                             for k, rows in self.cells.items()}},
                "terms": [t.to_dict() for t in self.terms],
                "two_sided_rule": self.two_sided_rule, "warnings": list(self.warnings)}

    def sentence(self) -> str:
        return _sentence(self)

    def __str__(self) -> str:
        return _text(self)

    def __repr__(self) -> str:
        ps = ", ".join(f"{t.term} p = {t.outcome.p_value:.3g}" for t in self.terms)
        return f"<permq.FactorialResult: {_short(self.statement)} -> {ps}>"

    def _repr_html_(self) -> str:
        return _html(self)
