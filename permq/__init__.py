"""permq: exact and permutation inference for small experiments, with a small query language.

    import permq
    results = permq.run('compare mass by recipe using ranks', tables={"trays": df})
    results[0].sentence()     # one reporting sentence
    results.to_frame()        # a pandas DataFrame, one row per test
    results[0].to_dict()      # the JSON contract
    permq.compare(a, b, using="ranks")         # arrays and DataFrames, no statement text
"""
from __future__ import annotations

from .classcache import active as _kept_classes

with _kept_classes():       # the dataclasses' methods compiled once, not at every start
    from .api import Results, StatementFailed, compare, count, relate, run
    from .pipeline import Session
    from .result import Failure, Note, Result
    from .result_factorial import FactorialResult
    from .result_many import ManyResult

__version__ = "0.1.0"
__all__ = ["run", "compare", "relate", "count", "Results", "StatementFailed", "Session",
           "Result", "ManyResult", "FactorialResult", "Failure", "Note", "__version__"]
