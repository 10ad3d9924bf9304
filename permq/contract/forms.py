"""Which form of the JSON contract a record is, read from the schema itself.

The schema's top level is one of several forms (`result`, `several`, `factorial`,
`robustness`, `power`, `failure`, `plan`); each form but the single result names the values
its `family` field takes. `form_of(record)` gives a record's form, so that renderers choose
their layout by the contract, not by lists of family names of their own.
"""
from __future__ import annotations

from functools import lru_cache

from . import schema


@lru_cache(maxsize=1)
def _by_family() -> dict:
    defs = schema()["$defs"]
    out = {}
    for ref in schema()["items"]["oneOf"]:
        form = ref["$ref"].rsplit("/", 1)[1]
        family = defs[form].get("properties", {}).get("family", {})
        values = family.get("enum", []) + ([family["const"]] if "const" in family else [])
        if form != "result":
            out.update({value: form for value in values})
    return out


def form_of(record: dict) -> str:
    """'failure', 'plan', 'several', 'factorial', 'robustness', 'power' or 'result'."""
    if "error" in record:
        return "failure"
    if "plan" in record:
        return "plan"
    return _by_family().get(record.get("family", ""), "result")


def several_families() -> tuple:
    """The `family` values of several-tests records."""
    return tuple(f for f, form in _by_family().items() if form == "several")
