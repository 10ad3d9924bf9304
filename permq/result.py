"""Plain result data: what the engine and normal theory hand to the renderers.

`Result.to_dict()` is the JSON contract (see README, "Machine-readable output").
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional


@dataclass(frozen=True)
class Estimate:
    name: str                      # e.g. "Hodges-Lehmann shift A - B"
    value: float
    interval: Optional[tuple] = None   # (lo, hi); +-inf for one-sided
    level: float = 0.95
    method: str = ""               # how the interval was had, in words

    def to_dict(self) -> dict:
        return {"name": self.name, "value": _num(self.value),
                "interval": None if self.interval is None else [_num(v) for v in self.interval],
                "level": self.level, "method": self.method}


@dataclass(frozen=True)
class NormalTheory:
    test: str                      # e.g. "Welch t (unequal variances)"
    statistic: float
    df: Optional[float]
    p_value: float
    interval: Optional[tuple] = None   # normal-theory interval for the same estimate
    interval_method: str = ""
    undefined: str = ""            # why the test is not defined here ("zero spread"); then
                                   # statistic and p-value are nan (normal/degenerate.py)

    def to_dict(self) -> dict:
        d = {"test": self.test, "statistic": _num(self.statistic),
             "df": None if self.df is None else _num(self.df), "p_value": _num(self.p_value)}
        if self.undefined:
            d["undefined"] = self.undefined
        return d


@dataclass(frozen=True)
class EngineOutcome:
    """What an engine computed: the permutation p-value and how it was had."""

    statistic_name: str
    statistic: float
    p_value: float
    method: str                    # "exact" or "monte-carlo"
    algorithm: str                 # in words
    arrangements: Optional[float] = None   # size of the reference set (exact)
    draws: Optional[int] = None
    p_interval: Optional[tuple] = None     # 99% interval for a Monte Carlo p
    seed: Optional[int] = None
    null_support: Optional[object] = None  # numpy arrays for pictures: values ...
    null_probs: Optional[object] = None    # ... and their probabilities
    warnings: tuple = ()


@dataclass
class Result:
    statement: str
    family: str
    alternative: str
    outcome: EngineOutcome
    normal: Optional[NormalTheory]
    estimate: Optional[Estimate] = None
    effect: str = ""               # the effect in words, e.g. "shift A - B"
    groups: list = field(default_factory=list)   # [{"name":..., "n":..., "mean":..., "median":...}]
    two_sided_rule: str = ""
    warnings: list = field(default_factory=list)
    line: Optional[int] = None
    seed_source: str = ""        # how the seed was had: given, statement, fresh (plan/seeds.py)
    summary_decimals: Optional[list] = None   # decimals for each group's summaries (data/decimals.py)
    extra: dict = field(default_factory=dict)     # family-specific additions (kept in JSON)
    also_normal: list = field(default_factory=list)  # further textbook tests (e.g. Welch ANOVA, HC3)
    reference: str = "arrangements"   # what the exact reference set is made of, in words
    exact_heading: str = ""           # the exact column's heading when not a permutation test
    design: Optional[object] = field(default=None, repr=False, compare=False)  # the bound design

    def to_dict(self) -> dict:
        o = self.outcome
        d = {
            "statement": self.statement,
            "family": self.family,
            "statistic": {"name": o.statistic_name, "value": _num(o.statistic)},
            "alternative": self.alternative,
            "p_value": _num(o.p_value),
            "method": o.method,
            "algorithm": o.algorithm,
        }
        if o.method == "exact":
            d["arrangements"] = _count(o.arrangements)
        else:
            d["draws"] = o.draws
            d["p_interval"] = [_num(v) for v in o.p_interval] if o.p_interval else None
            d["seed"] = o.seed
        d["normal_theory"] = self.normal.to_dict() if self.normal else None
        if self.also_normal:
            d["normal_theory_also"] = [nt.to_dict() for nt in self.also_normal]
        if self.estimate is not None:
            d["estimate"] = self.estimate.to_dict()
            if self.normal is not None and self.normal.interval is not None:
                d["normal_interval"] = {"interval": [_num(v) for v in self.normal.interval],
                                        "level": self.estimate.level,
                                        "method": self.normal.interval_method}
            else:
                d["normal_interval"] = None
        d["effect"] = self.effect
        d["groups"] = [{k: _num(v) if isinstance(v, float) else v for k, v in g.items()}
                       for g in self.groups]
        d["two_sided_rule"] = self.two_sided_rule
        d["warnings"] = list(self.warnings) + list(o.warnings)
        d.update(self.extra)
        return d

    def sentence(self) -> str:
        """The reporting sentence: estimate, interval, method, p-values, effect sizes."""
        return _sentence(self)

    def __str__(self) -> str:
        return _text(self)

    def __repr__(self) -> str:
        o = self.outcome
        how = f"{o.method}" + (f", {o.draws:,} draws" if o.method != "exact" else "")
        return (f"<permq.Result {self.family}: {_short(self.statement)} -> p = "
                f"{_p(o.p_value)} ({how})>")

    def _repr_html_(self) -> str:
        return _html(self)


@dataclass
class Failure:
    """A statement that could not be carried out, in place of its result."""

    statement: str
    message: str
    line: Optional[int] = None
    column: Optional[int] = None
    kind: str = "error"
    hint: Optional[str] = None
    caret: str = ""                # the statement line with a caret under the spot

    def sentence(self) -> str:
        return _sentence(self)

    def __str__(self) -> str:
        return _text(self)

    def __repr__(self) -> str:
        return f"<permq.Failure {self.kind}: {self.message}>"

    def _repr_html_(self) -> str:
        return _html(self)

    def to_dict(self) -> dict:
        msg = self.message + (f" ({self.hint})" if self.hint else "")
        return {"statement": self.statement,
                "error": {"message": msg, "line": self.line, "column": self.column}}


@dataclass
class Note:
    """Output of a session statement (load, use, set, explain, show, describe, help)."""

    statement: str
    text: str
    data: dict = field(default_factory=dict)
    line: Optional[int] = None

    def __str__(self) -> str:
        return self.text

    def __repr__(self) -> str:
        return f"<permq.Note {_short(self.statement)}>"

    def _repr_html_(self) -> str:
        import html

        return f"<pre>{html.escape(self.text)}</pre>"


# ---------------------------------------------------------------- how results show themselves
# (the renderers do the work; imported when asked, so that results stay plain data)

def _sentence(output) -> str:
    from .render.sentences import sentence

    return sentence(output.to_dict())


def _text(output) -> str:
    from .render.text import render_one

    return render_one(output)


def _html(output) -> str:
    from .render.html import output_html

    return output_html(output)


def _short(statement: str, width: int = 60) -> str:
    text = " ".join(statement.split())
    return text if len(text) <= width else text[:width - 3] + "..."


def _p(v) -> str:
    from .render.numbers import p

    return p(v)


def _num(v):
    if v is None:
        return None
    try:
        f = float(v)
    except (TypeError, ValueError):
        return v
    if f != f:
        return None
    if f in (float("inf"), float("-inf")):
        return "inf" if f > 0 else "-inf"
    return f


def _count(v):
    if v is None:
        return None
    if isinstance(v, int):           # exact, any size (JSON numbers have no size limit)
        return v
    f = float(v)
    return int(f) if f < 2 ** 63 and f == int(f) else f
