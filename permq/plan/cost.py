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
# work (bench/calibrate.py measures how far each algorithm's count is from it).
OPS_PER_SECOND = 2.0e8
# What any statement costs before its algorithm starts (parsing, binding, planning, the
# result), in seconds, and the bytes it holds meanwhile; calibration.json overrides both.
BASE_SECONDS = 0.004
BASE_BYTES = 2.0e6


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
        return base_seconds() + self.ops / OPS_PER_SECOND


CALIBRATION_FILE = Path(__file__).with_name("calibration.json")


@lru_cache(maxsize=1)
def _calibration_file() -> dict:
    try:
        return json.loads(CALIBRATION_FILE.read_text())
    except (OSError, ValueError):
        return {}


@lru_cache(maxsize=1)
def calibration() -> dict:
    """Measured seconds / estimated seconds per (engine, algorithm), and per ("statement",
    part) for the statement's other work, from bench/calibrate.py."""
    return {tuple(k.split("/", 1)): float(v)
            for k, v in _calibration_file().get("factors", {}).items()}


@lru_cache(maxsize=1)
def memory_calibration() -> dict:
    """Measured peak bytes / estimated bytes per (engine, algorithm)."""
    return {tuple(k.split("/", 1)): float(v)
            for k, v in _calibration_file().get("memory_factors", {}).items()}


def _fixed(table: str, common_key: str, default: float, engine: str, family: str) -> float:
    data = _calibration_file()
    by = data.get(table, {})
    common = float(data.get(common_key, default))
    return float(by.get(f"{engine}/{family}", by.get(engine, common)))


def base_seconds(engine: str = "", family: str = "") -> float:
    """The fixed cost of a statement, in seconds: its engine and family's own when calibrated
    (a rank statement's estimate and interval cost more than a median's), else the engine's,
    else the common one."""
    return _fixed("base_seconds_by_engine", "base_seconds", BASE_SECONDS, engine, family)


def base_bytes(engine: str = "", family: str = "") -> float:
    """The bytes any statement of that engine and family holds besides its algorithm and
    parts (looked up as base_seconds is)."""
    return _fixed("base_bytes_by_engine", "base_bytes", BASE_BYTES, engine, family)


def calibrated(engine: str, c: Candidate) -> Candidate:
    if not c.feasible or c.ops == float("inf"):
        return c
    factor = calibration().get((engine, c.algorithm), 1.0)
    memory = memory_calibration().get((engine, c.algorithm), 1.0)
    return replace(c, ops=c.ops * factor, memory=c.memory * memory)


def reload() -> None:
    """Read calibration.json afresh (after bench/calibrate.py wrote it)."""
    for cached in (_calibration_file, calibration, memory_calibration):
        cached.cache_clear()
