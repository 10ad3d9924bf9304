"""JSON: one array, one object per statement that produces a result (the contract)."""
from __future__ import annotations

import json

from ..result import Failure, Note, Result
from ..robustness.result import RobustnessResult


def records(outputs) -> list[dict]:
    from ..result_factorial import FactorialResult
    from ..result_many import ManyResult

    out = []
    for o in outputs:
        if isinstance(o, (ManyResult, FactorialResult)):
            out.append(o.to_dict())
            continue
        if isinstance(o, (Result, Failure, RobustnessResult)):
            out.append(o.to_dict())
        elif isinstance(o, Note) and "plan" in o.data:
            out.append({"statement": o.statement, "plan": o.data})
    return out


def render(outputs) -> str:
    return json.dumps(records(outputs), indent=2, allow_nan=False, default=_default) + "\n"


def _default(v):
    import numpy as np

    if isinstance(v, np.generic):
        return v.item()
    if isinstance(v, np.ndarray):
        return v.tolist()
    raise TypeError(type(v).__name__)
