"""What an algorithm will cost, estimated from the design before anything runs.

Every engine module offers `candidates(...) -> list[Candidate]`; the planner compares them with
the budget. `ops` counts elementary array operations (roughly one multiply-add each); the
machine rate turns ops into seconds.
"""
from __future__ import annotations

import json
from dataclasses import dataclass, replace
from functools import lru_cache
from pathlib import Path

# Elementary operations a second on one core of this class of machine, for vectorised numpy
# work (calibrated by bench/calibrate.py; order of magnitude is what matters here).
OPS_PER_SECOND = 2.0e8
# What any statement costs before its algorithm starts (binding, scores, set-up), in seconds.
BASE_SECONDS = 0.004


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
    reference: str = "arrangements"   # what that set is made of, in words

    @property
    def seconds(self) -> float:
        return BASE_SECONDS + self.ops / OPS_PER_SECOND


CALIBRATION_FILE = Path(__file__).with_name("calibration.json")


@lru_cache(maxsize=1)
def calibration() -> dict:
    """Measured seconds / estimated seconds per (engine, algorithm), from bench/calibrate.py."""
    try:
        data = json.loads(CALIBRATION_FILE.read_text())
    except (OSError, ValueError):
        return {}
    return {tuple(k.split("/", 1)): float(v) for k, v in data.get("factors", {}).items()}


def calibrated(engine: str, c: Candidate) -> Candidate:
    factor = calibration().get((engine, c.algorithm))
    if factor is None or not c.feasible or c.ops == float("inf"):
        return c
    return replace(c, ops=c.ops * factor)
