"""What an algorithm will cost, estimated from the design before anything runs.

Every engine module offers `candidates(...) -> list[Candidate]`; the planner compares them with
the budget. `ops` counts elementary array operations (roughly one multiply-add each); the
machine rate turns ops into seconds.
"""
from __future__ import annotations

from dataclasses import dataclass

# Elementary operations a second on one core of this class of machine, for vectorised numpy
# work (calibrated by bench/calibrate.py; order of magnitude is what matters here).
OPS_PER_SECOND = 2.0e8


@dataclass(frozen=True)
class Candidate:
    algorithm: str          # short key, e.g. "dp-integer", "enumeration", "monte-carlo"
    description: str        # in words, as the result's `algorithm` field says it
    exact: bool
    ops: float              # estimated elementary operations
    memory: float           # estimated peak bytes
    feasible: bool = True   # False when the method cannot apply (e.g. scores not on a grid)
    note: str = ""          # why, in words (e.g. "scores are not on a grid")
    arrangements: float = 0.0  # size of the reference set, when known

    @property
    def seconds(self) -> float:
        return self.ops / OPS_PER_SECOND
