"""The planner: a small pure function from a design to a frozen plan.

It asks the design's engine for its candidate algorithms with their estimated cost, and picks:
- `sampled N` forces Monte Carlo with N draws;
- otherwise the cheapest feasible exact algorithm within the time and memory budget;
- past the time budget, still the cheapest exact algorithm when it is cheaper than the draws
  (the answer is exact and comes sooner);
- `exact` forces the cheapest feasible exact algorithm up to a hard ceiling, and refuses past
  it with the estimate;
- otherwise Monte Carlo with the default number of draws.
`str(plan)` is what `explain` prints.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Callable, Optional

from ..errors import PlanError
from ..engine.core.limits import DEFAULT_DRAWS, EXACT_CEILING_SECONDS, Limits, limits_for
from .cost import OPS_PER_SECOND, Candidate, base_bytes, base_seconds, calibrated
from .sizes import words


@dataclass(frozen=True)
class Plan:
    engine: str                 # which engine module runs it
    family: str                 # statistic family
    chosen: Candidate
    candidates: tuple
    draws: int
    seed: Optional[int]         # None only outside the pipeline (nothing sampled yet)
    reason: str
    budget_seconds: float
    limits: Limits = Limits()   # from the settings (`set memory`, `set budget`), for the engine
    parts: tuple = ()           # the statement's other work (plan/statement.py): Part, ...

    @property
    def method(self) -> str:
        return "exact" if self.chosen.exact else "monte-carlo"

    @property
    def seconds(self) -> float:
        """The whole statement: the engine's fixed cost, the chosen algorithm, every part."""
        return (base_seconds(self.engine, self.family) + self.chosen.ops / OPS_PER_SECOND
                + sum(p.seconds for p in self.parts))

    @property
    def memory(self) -> float:
        """Peak bytes: the largest of the algorithm and the other parts, over the base."""
        return base_bytes(self.engine, self.family) + max([self.chosen.memory]
                                             + [p.memory for p in self.parts])

    def with_parts(self, parts) -> "Plan":
        return replace(self, parts=tuple(parts))

    def __str__(self) -> str:
        lines = [f"plan: {self.engine}, family '{self.family}'",
                 f"  chosen: {self.chosen.description} ({self.method})",
                 f"  why: {self.reason}",
                 f"  budget: {_seconds(self.budget_seconds)}",
                 "  candidates:"]
        for c in self.candidates:
            mark = "*" if c is self.chosen else " "
            if not c.feasible:
                est = "cannot apply"
            else:
                est = f"{_seconds(c.seconds)}, {_bytes(c.memory)}"
            note = f" - {c.note}" if c.note else ""
            lines.append(f"   {mark} {c.description:<44} {est}{note}")
        if not self.chosen.exact:
            lines.append(f"  draws: {self.draws:,}, seed {self.seed}")
        if self.chosen.arrangements:
            lines.append(f"  reference set: {_count(self.chosen.arrangements)} "
                         f"{self.chosen.reference}")
        if self.parts:
            merged: dict = {}
            for p in self.parts:
                merged[p.what] = merged.get(p.what, 0.0) + p.seconds
            shown = [(what, secs) for what, secs in merged.items() if secs >= 0.01]
            if shown:
                lines.append("  besides the test:")
                lines += [f"     {what:<62} {_seconds(secs)}" for what, secs in shown]
            lines.append(f"  whole statement: {_seconds(self.seconds)}, {_bytes(self.memory)}")
        return "\n".join(lines)


def make_plan(engine: str, family: str, settings, candidates_for: Callable[[int], list]) -> Plan:
    draws = settings.sampled or DEFAULT_DRAWS
    cands = tuple(calibrated(engine, c) for c in candidates_for(draws))
    seed = settings.seed          # decided once by the pipeline (plan/seeds.py)
    mc = next((c for c in cands if not c.exact), None)
    exact = sorted((c for c in cands if c.exact and c.feasible), key=lambda c: c.ops)
    budget = settings.budget_seconds

    def plan(chosen, reason):
        return Plan(engine, family, chosen, cands, draws, seed, reason, budget,
                    limits=limits_for(settings))

    if settings.sampled and mc is not None:
        return plan(mc, f"'sampled {settings.sampled}' asks for Monte Carlo")
    if mc is None:
        if not exact:
            raise PlanError("no method applies to these data")
        why = ("only an exact method applies here, and it is cheap; 'sampled' is not needed"
               if settings.sampled else "the one exact method for this design")
        return plan(exact[0], why)
    fitting = [c for c in exact if c.memory <= settings.memory_bytes]
    if settings.exact:
        ok = [c for c in fitting if c.seconds <= EXACT_CEILING_SECONDS]
        if not ok:
            best = exact[0] if exact else None
            barred = [c for c in cands if c.exact and not c.feasible]
            if best:
                what = (f"the cheapest exact method ({best.description}) would take "
                        f"{_about(best.seconds)} and {_bytes(best.memory)}")
            elif barred:
                what = "no exact method fits these data (" + "; ".join(
                    f"{c.description}: {c.note or 'past its limits'}" for c in barred) + ")"
            else:
                what = "no exact method applies to these data"
            raise PlanError(f"'exact' refused: {what}; the limit is "
                            f"{_seconds(EXACT_CEILING_SECONDS)} and {_bytes(settings.memory_bytes)}",
                            hint="drop 'exact' for Monte Carlo, or use 'sampled N'")
        return plan(ok[0], "'exact' asks for an exact method; this is the cheapest")
    within = [c for c in fitting if c.seconds <= budget]
    if within:
        return plan(within[0], "the cheapest exact method within the budget")
    if fitting and fitting[0].seconds <= mc.seconds:
        best = fitting[0]
        return plan(best, f"the cheapest exact method would take {_about(best.seconds)}, past the "
                          f"budget of {_seconds(budget)}, but Monte Carlo would take longer "
                          f"({_about(mc.seconds)})")
    if exact:
        return plan(mc, f"the cheapest exact method ({exact[0].description}) would take "
                        f"{_about(exact[0].seconds)}, past the budget of {_seconds(budget)}")
    return plan(mc, "no exact method applies to these data")


def _about(s: float) -> str:
    """An estimate in words: 'about 2 s', 'under 0.01 s', 'about 3 h' (never 'about about')."""
    text = _seconds(s)
    return text if text.startswith(("about", "under", "unbounded")) else f"about {text}"


def _seconds(s: float) -> str:
    if s != s or s == float("inf"):
        return "unbounded time"
    if s < 0.01:
        return "under 0.01 s"
    if s < 120:
        return f"about {s:.2g} s"
    if s < 7200:
        return f"{s / 60:.0f} min"
    if s < 86400 * 3:
        return f"{s / 3600:.0f} h"
    return f"{s / 86400:.3g} days"


def _bytes(b: float) -> str:
    if b != b or b == float("inf"):
        return "unbounded memory"
    for unit, size in (("GB", 1e9), ("MB", 1e6), ("kB", 1e3)):
        if b >= size:
            return f"{b / size:.3g} {unit}"
    return f"{b:.0f} B"


def _count(v) -> str:
    return words(v)
