"""`PowerResult`: power of both tests at each n simulated, and the n that reaches a target."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional


@dataclass
class PowerResult:
    statement: str
    test: str                     # the analysis's test, in words (its family's title)
    normal_test: str              # its normal-theory counterpart
    design: str                   # the layout, in words
    source: str                   # "described" or "pilot"
    alternative: str
    alpha: float
    law: str                      # key of the error law, or "pilot"
    law_words: str
    shift_sd: float
    shift_words: str
    datasets: int
    seed: int
    rows: list                    # simulate.AtN, by n
    target: Optional[float] = None
    needed: dict = field(default_factory=dict)     # {"permutation": n, "normal": n} or None
    warnings: list = field(default_factory=list)
    line: Optional[int] = None
    seed_source: str = ""
    method: str = "simulation"    # "simulation", or "summation" over every outcome (counts)
    formula_words: str = ""       # the closed form beside the tests (rows' `formula`), if any
    allocation: Optional[list] = None   # a search's group sizes over the first's, if unequal

    def to_dict(self) -> dict:
        rows = [{"n": list(r.sizes), "power": r.permutation.value, "power_se": r.permutation.se,
                 "normal_power": r.normal.value, "normal_power_se": r.normal.se,
                 "exact": r.exact, "arrangements": r.arrangements,
                 "smallest_p": r.smallest_p} for r in self.rows]
        if self.formula_words:
            for row, r in zip(rows, self.rows):
                row["normal_formula_power"] = r.formula
        return {"statement": self.statement, "family": "power", "test": self.test,
                "normal_test": self.normal_test, "design": self.design, "source": self.source,
                "alternative": self.alternative, "level": self.alpha, "law": self.law,
                "law_words": self.law_words, "shift_sd": self.shift_sd,
                "shift": self.shift_words, "datasets": self.datasets, "seed": self.seed,
                "rows": rows, "target": self.target,
                "needed": dict(self.needed) if self.target is not None else None,
                "warnings": list(self.warnings), "method": self.method,
                "formula": self.formula_words or None, "allocation": self.allocation}

    def sentence(self) -> str:
        from ..render.power import sentence

        return sentence(self.to_dict())

    def __str__(self) -> str:
        from ..render.power import text_block

        return text_block(self)

    def _repr_html_(self) -> str:
        from ..render.html import output_html

        return output_html(self)

    def __repr__(self) -> str:
        return f"<permq.PowerResult {self.design}: {len(self.rows)} sizes simulated>"
