"""Two crossed factors (`compare Y by A and B`): each main effect by restricted permutation,
the interaction by residual permutation, the two-way ANOVA F beside each."""
from __future__ import annotations

from dataclasses import dataclass, replace

from ..engine.core.pvalues import TWO_SIDED_QUADRATIC
from ..lazy import module
from ..plan.cost import Candidate
from ..plan.planner import make_plan
from ..result_factorial import FactorialResult, TermRow
from .registry import Family, Kind, Reported

engine = module("permq.engine.factorial")          # loaded when a statement first runs
normal_factorial = module("permq.normal.factorial")

KINDS = {"two-factor": Kind("compare", "two crossed factors", "compare Y by A and B")}

SUMS = ("type II: each main effect adjusted for the other, the interaction for both (equal to "
        "type I and III in a balanced design)")


@dataclass(frozen=True)
class TermPlans:
    """The plans of the three terms, read by the pipeline and `explain` as one plan."""

    plans: tuple             # ((key, words, Plan), ...)

    def plan(self, key):
        return next(p for k, _, p in self.plans if k == key)

    @property
    def chosen(self) -> Candidate:
        picked = [p.chosen for _, _, p in self.plans]
        exact = all(p.chosen.exact for k, _, p in self.plans if k != "interaction")
        words = "; ".join(f"{w}: {p.chosen.description}" for _, w, p in self.plans)
        return Candidate("per-term", words, exact, sum(c.ops for c in picked),
                         max(c.memory for c in picked))

    @property
    def method(self) -> str:
        return "exact" if all(p.chosen.exact for _, _, p in self.plans) else "monte-carlo"

    @property
    def seconds(self) -> float:
        """The whole statement: the three terms, one after the other."""
        return sum(p.seconds for _, _, p in self.plans)

    @property
    def memory(self) -> float:
        """Peak bytes: the largest of the terms (they run one at a time)."""
        return max(p.memory for _, _, p in self.plans)

    @property
    def seed(self) -> int:
        return self.plans[0][2].seed

    @property
    def draws(self) -> int:
        return self.plans[0][2].draws

    def __str__(self) -> str:
        parts = []
        for _, words, p in self.plans:
            text = str(p).splitlines()
            parts.append(f"{words}:\n" + "\n".join("  " + line for line in text))
        return "\n".join(parts)


def words(design) -> dict:
    _, a, b = design.names
    return {"first": a, "second": b, "interaction": f"{a} × {b}"}


def arranged(design) -> dict:
    _, a, b = design.names
    return {"first": f"{response_word(design)} permuted within each level of {b}",
            "second": f"{response_word(design)} permuted within each level of {a}",
            "interaction": f"residuals of the additive model ({a} + {b}) permuted over all rows"}


def response_word(design) -> str:
    return f"values of {design.names[0]}"


def _layout(design):
    return engine.layout(design.values, design.first, design.second)


def plan(design) -> TermPlans:
    s = design.settings               # its seed decided once by the pipeline (plan/seeds.py)
    lay = _layout(design)
    names = words(design)
    out = []
    for key in engine.TERMS:
        if key == "interaction":
            term_settings = replace(s, exact=False)
        else:
            term_settings = replace(s, budget_seconds=s.budget_seconds / 2)
        out.append((key, names[key], make_plan(
            "two-factor", s.family, term_settings,
            lambda draws, key=key: engine.candidates(lay, key, draws))))
    return TermPlans(tuple(out))


def execute(design, the_plan: TermPlans, progress, statement: str = "") -> FactorialResult:
    lay = _layout(design)
    sums = engine.sums_of_squares(lay)
    dfs = {k: t.df for k, t in lay.terms.items()}
    names, how = words(design), arranged(design)
    rows = []
    for key in engine.TERMS:
        p = the_plan.plan(key)
        out = engine.run(lay, key, p.chosen.algorithm, p.draws, p.seed, progress)
        if key == "interaction" and design.settings.exact:
            out = replace(out, warnings=out.warnings + (
                "'exact' applies to the main effects; the interaction has no exact test here",))
        normal = normal_factorial.two_way_f(sums, dfs, lay.df_error, key)
        rows.append(TermRow(names[key], how[key], out, normal, (dfs[key], lay.df_error)))
    return FactorialResult(statement, design.names[0], design.names[1:],
                           (design.first_labels, design.second_labels), rows, _cells(design),
                           SUMS, TWO_SIDED_QUADRATIC, seed=the_plan.seed,
                           warnings=list(design.warnings))


def _cells(design) -> dict:
    import numpy as np

    a, b = len(design.first_labels), len(design.second_labels)
    n = np.zeros((a, b))
    mean = np.full((a, b), np.nan)
    sd = np.full((a, b), np.nan)
    for i in range(a):
        for j in range(b):
            v = design.values[(design.first == i) & (design.second == j)]
            n[i, j] = len(v)
            mean[i, j] = v.mean()
            if len(v) > 1:
                sd[i, j] = v.std(ddof=1)
    return {"n": n.astype(int).tolist(), "mean": mean.tolist(), "sd": sd.tolist()}


NO_CHECK = ("a two-factor comparison holds three tests on three reference sets (two "
            "restricted permutations and a residual permutation), and the check simulates one "
            "test on one reference set")

FAMILIES = [
    Family("means", ("two-factor",), "two-way permutation ANOVA: restricted permutation for "
           "each main effect, Freedman-Lane residual permutation for the interaction",
           "two-way permutation F", plan, execute,
           "two-way ANOVA F of each term (type II sums of squares)",
           "cell means; no permutation interval", no_robustness=NO_CHECK,
           default_in=("two-factor",),
           help="compare Y by A and B: each main effect by permuting Y within the levels of the "
                "other factor\n(exact by listing, Anderson & ter Braak 2003), the interaction "
                "by permuting residuals\nof the additive model (Freedman-Lane, Monte Carlo, "
                "approximate); type II sums of squares"),
]

# How reports name the tests (registry.Reported)
REPORTED = [
    Reported(("two factors",), "", "two-way permutation ANOVA (restricted permutation for the "
             "main effects, Freedman-Lane residual permutation for the interaction)",
             ("anderson-ter-braak-2003", "freedman-lane-1983")),
]
