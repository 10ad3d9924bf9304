"""permq: exact and permutation inference for small experiments, with a small query language.

    import permq
    results = permq.run('compare mass by recipe using ranks', tables={"trays": df})
    results[0].to_dict()      # the JSON contract
"""
from __future__ import annotations

from .pipeline import Session
from .result import Failure, Note, Result
from .result_many import ManyResult

__version__ = "0.1.0"
__all__ = ["run", "Session", "Result", "ManyResult", "Failure", "Note", "__version__"]


def run(text: str, tables: dict | None = None, base_dir=None, cluster=None,
        workers: int | None = None) -> list:
    """Run statements; returns one Result, ManyResult, Note or Failure per statement that prints.

    `cluster` (a Dask scheduler address such as "tcp://127.0.0.1:8786", or a
    dask.distributed Client) runs several-response statements there; `workers` sets the number
    of local workers for them (default: every core). Either way the numbers are the same.
    """
    return Session(tables=tables, base_dir=base_dir, cluster=cluster, workers=workers).run(text)
