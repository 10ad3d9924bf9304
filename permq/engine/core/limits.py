"""The limits every engine works within, written once.

Resource limits come from the statement's settings (`set memory`, `set budget`) by way of the
plan: the planner builds `Limits` from the settings, compares each candidate's estimated time
and memory with them, and hands them on to the engine with the plan. Engines estimate; they
never carry a memory or time ceiling of their own.

The other constants here are part of the methods' definitions (the same for every budget):
the default number of Monte Carlo draws, the hard ceiling `exact` may insist up to, the draws
the Monte Carlo interval reads, the size of a null distribution kept for its picture, and the
count below which double precision holds every count exactly.
"""
from __future__ import annotations

from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass

from ...plan.cost import OPS_PER_SECOND

DEFAULT_DRAWS = 100_000              # Monte Carlo draws when the statement names none
EXACT_CEILING_SECONDS = 3600.0       # 'exact' insists on an exact method up to this estimate
INTERVAL_DRAWS = 2_000_000           # a Monte Carlo interval reads the first draws up to this many
NULL_KEEP_MAX = 2_000_000            # a null distribution is kept (for its picture) up to this size
EXACT_COUNT_LIMIT = 2.0 ** 53        # counts below this are exact integers in double precision

DEFAULT_MEMORY_BYTES = 2.0e9         # `set memory` unless changed
DEFAULT_BUDGET_SECONDS = 5.0         # `set budget` unless changed


@dataclass(frozen=True)
class Limits:
    """What one statement may spend: from `set memory` and `set budget`, through the plan."""

    memory_bytes: float = DEFAULT_MEMORY_BYTES
    budget_seconds: float = DEFAULT_BUDGET_SECONDS

    def fits(self, ops: float, memory: float = 0.0) -> bool:
        """An optional exact step (an interval by listing, say) runs when it fits the budget."""
        return memory <= self.memory_bytes and ops / OPS_PER_SECOND <= self.budget_seconds


def limits_for(settings) -> Limits:
    return Limits(float(settings.memory_bytes), float(settings.budget_seconds))


NO_LIMITS_GIVEN = Limits()


# `set memory` for the statement being run (the pipeline sets it around the whole statement)
_MEMORY: ContextVar = ContextVar("permq_memory", default=DEFAULT_MEMORY_BYTES)


def memory_budget() -> float:
    """The memory the running statement may use, in bytes."""
    return float(_MEMORY.get())


@contextmanager
def using_memory(memory_bytes: float):
    """Run the statement inside within `memory_bytes` (its `set memory`)."""
    token = _MEMORY.set(float(memory_bytes))
    try:
        yield
    finally:
        _MEMORY.reset(token)
