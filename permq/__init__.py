"""permq: exact and permutation inference for small experiments, with a small query language.

    import permq
    results = permq.run('compare mass by recipe using ranks', tables={"trays": df})
    results[0].to_dict()      # the JSON contract
"""
from __future__ import annotations

from .pipeline import Session
from .result import Failure, Note, Result

__version__ = "0.1.0"
__all__ = ["run", "Session", "Result", "Failure", "Note", "__version__"]


def run(text: str, tables: dict | None = None, base_dir=None) -> list:
    """Run statements; returns one Result, Note or Failure per statement that prints."""
    return Session(tables=tables, base_dir=base_dir).run(text)
