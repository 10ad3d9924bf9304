"""Small helpers shared by the tests (the brute-force reference lives in tests/brute.py)."""
from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

TESTS = Path(__file__).resolve().parent
ROOT = TESTS.parent
if str(TESTS) not in sys.path:          # `import brute` from any test file
    sys.path.insert(0, str(TESTS))

import permq  # noqa: E402

ALTERNATIVES = ("two-sided", "higher", "lower")


def run_one(text: str, tables: dict | None = None):
    """Run one statement through the public API and return its single output."""
    out = permq.run(text, tables=tables)
    assert len(out) == 1, out
    return out[0]


def result_of(text: str, tables: dict | None = None) -> permq.Result:
    out = run_one(text, tables)
    assert isinstance(out, permq.Result), getattr(out, "message", out)
    return out


def failure_of(text: str, tables: dict | None = None) -> permq.Failure:
    out = run_one(text, tables)
    assert isinstance(out, permq.Failure), f"expected a failure, got {out!r}"
    return out


def inline(values) -> str:
    """A Python list of numbers as a permq inline list."""
    return "[" + ", ".join(repr(float(v)) for v in values) + "]"


def assert_exact(p, expected, rel=1e-12):
    """An exact p-value agrees with a rational reference to rounding of the counts."""
    assert p == pytest.approx(float(expected), rel=rel, abs=1e-15), (p, float(expected))


@pytest.fixture
def trays() -> dict:
    """A small table with a missing value, a text column and a one-level column."""
    frame = pd.DataFrame({
        "mass": [12.4, 13.1, 11.8, np.nan, 11.0, 10.9, 12.0, 11.5],
        "recipe": ["A", "A", "A", "B", "B", "B", "B", "B"],
        "after": [5.1, 4.9, 6.0, 5.5, 5.0, 4.4, 6.1, 5.9],
        "before": [4.6, 4.9, 5.2, 5.1, 5.3, 4.0, 5.5, np.nan],
        "label": ["x", "y", "z", "w", "v", "u", "t", "s"],
        "site": ["one"] * 8,
        "blank": [np.nan] * 8,
    })
    return {"trays": frame}
