"""Plain data for the robustness check and the null-distribution picture; `to_dict` for JSON."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

from ..result import _html, _num, _sentence, _short, _text


@dataclass(frozen=True)
class NullPicture:
    """The null distribution of the reported statistic, binned, with the observed value."""

    statistic: str
    edges: tuple                 # bin edges, len(masses) + 1
    masses: tuple                # probability in each bin; they add up to 1
    observed: float
    observed_bin: int
    source: str                  # "exact null distribution (...)" or "Monte Carlo (...)"
    alternative: str

    def to_dict(self) -> dict:
        return {"statistic": self.statistic, "edges": [_num(v) for v in self.edges],
                "masses": [float(v) for v in self.masses], "observed": _num(self.observed),
                "observed_bin": self.observed_bin, "source": self.source,
                "alternative": self.alternative}


@dataclass(frozen=True)
class LawRow:
    key: str
    name: str
    words: str
    normal_rate: float
    normal_se: float
    permutation_rate: float
    permutation_se: float
    normal_power: float
    normal_power_se: float
    permutation_power: float
    permutation_power_se: float
    normal_verdict: str          # "holds its level", "too liberal", "too conservative"
    permutation_verdict: str     # "exact", "exact, conservative here", "not exact, ..."
    not_exact: str               # why the permutation test is not exact, or ""
    verdict: str                 # the two in one phrase, for the table

    def to_dict(self) -> dict:
        return {"law": self.key, "name": self.name, "description": self.words,
                "normal_theory": {"rejection_rate": self.normal_rate, "se": self.normal_se,
                                  "power": self.normal_power, "power_se": self.normal_power_se,
                                  "verdict": self.normal_verdict},
                "permutation": {"rejection_rate": self.permutation_rate,
                                "se": self.permutation_se, "power": self.permutation_power,
                                "power_se": self.permutation_power_se,
                                "verdict": self.permutation_verdict,
                                "exact_under_this_law": not self.not_exact,
                                "why_not_exact": self.not_exact or None},
                "verdict": self.verdict}


@dataclass
class RobustnessResult:
    statement: str
    family: str                  # the analysis's family: two-sample, paired, ...
    design: str                  # the design in words
    statistic: str               # the permutation statistic
    normal_test: str
    alternative: str
    significance: float
    datasets: int                # data sets a law
    reference: str               # how the simulated permutation tests were done, in words
    exact_reference: bool
    arrangements: int
    seed: int
    shift: float                 # in the data's units
    shift_sd: float
    shift_words: str
    sd: float
    sd_words: str
    rows: list
    summary: list
    observed: Optional[object] = None     # the analysis of the data as they are (Result)
    picture: Optional[NullPicture] = None
    warnings: list = field(default_factory=list)
    line: Optional[int] = None
    counts: bool = False         # a check of counts: sampling schemes, not error laws
    seed_source: str = ""        # how the seed was had: given, statement, fresh (plan/seeds.py)
    coverage: list = field(default_factory=list)   # coverage.CoverageRow per law
    coverage_level: Optional[float] = None
    no_coverage: str = ""        # why the intervals' coverage is not shown

    def to_dict(self) -> dict:
        obs = self.observed
        return {
            "statement": self.statement,
            "family": "robustness",
            "analysis": {"family": self.family, "design": self.design,
                         "statistic": self.statistic, "normal_test": self.normal_test,
                         "alternative": self.alternative, "counts": self.counts},
            "significance": self.significance,
            "datasets": self.datasets,
            "seed": self.seed,
            "simulated_permutation_test": {"method": "exact" if self.exact_reference
                                           else "monte-carlo",
                                           "arrangements": self.arrangements,
                                           "description": self.reference},
            "shift": {"value": _num(self.shift), "sd": _num(self.shift_sd),
                      "description": self.shift_words, "sd_unit": _num(self.sd),
                      "sd_unit_description": self.sd_words},
            "laws": [r.to_dict() for r in self.rows],
            "summary": list(self.summary),
            "observed": None if obs is None else {
                "p_value": _num(obs.outcome.p_value), "method": obs.outcome.method,
                "normal_p_value": _num(obs.normal.p_value) if obs.normal else None,
                "diagnostics": obs.extra.get("diagnostics")},
            "null_picture": self.picture.to_dict() if self.picture else None,
            "warnings": list(self.warnings),
            "coverage": {"level": self.coverage_level,
                         "laws": [r.to_dict() for r in self.coverage]} if self.coverage else None,
        }

    def sentence(self) -> str:
        return _sentence(self)

    def __str__(self) -> str:
        return _text(self)

    def __repr__(self) -> str:
        return f"<permq.RobustnessResult {self.family}: {_short(self.statement)}>"

    def _repr_html_(self) -> str:
        return _html(self)
