"""Results as table rows: one row per test, the JSON contract's fields as columns.

`rows(records)` flattens each record (nested objects to dotted names: `statistic.value`,
`normal_theory.p_value`, `estimate.interval`; lists stay whole in their cell). A several-tests
record gives one row per test: its own fields, and the row's fields under the names a single
result uses (`statistic.value`, `p_value`, `estimate.value`, `estimate.interval`) beside
`p_adjusted`, `row.name`, `row.n` and `row.note` (a row's other fields as `row.<field>`). A two-factor record gives one row per term
(kind "term"): the term's fields under `term.`, its `p_value` and `statistic.value` beside
them. Every row has `record` (its place in the
run) and `kind`. `record_of(row)` turns a row back into the fields it came from.
"""
from __future__ import annotations

import math

from ..contract.forms import form_of

ROW_FIELDS = {"name": "row.name", "n": "row.n", "statistic": "statistic.value",
              "p_value": "p_value", "p_adjusted": "p_adjusted", "estimate": "estimate.value",
              "interval": "estimate.interval", "note": "row.note"}


def rows(records) -> list:
    out = []
    for i, r in enumerate(records):
        if "plan" in r:
            continue
        base = {"record": i, "kind": _kind(r)}
        form = form_of(r)
        if form == "several":
            head = flatten({k: v for k, v in r.items() if k != "rows"})
            for row in r["rows"]:
                line = dict(base, **head)
                line.update({ROW_FIELDS.get(k, f"row.{k}"): v for k, v in row.items()})
                out.append(line)
        elif form == "factorial":     # one row per term: its fields under `term.`
            head = flatten({k: v for k, v in r.items() if k != "terms"})
            for term in r["terms"]:
                line = dict(base, **head, kind="term")
                line.update(flatten(term, "term."))
                line.update({"p_value": term["p_value"],
                             "statistic.value": term["statistic"]["value"]})
                out.append(line)
        else:
            out.append(dict(base, **flatten(r)))
    return out


def _kind(r) -> str:
    form = form_of(r)
    return form if form in ("failure", "several", "robustness") else "result"


def flatten(d: dict, prefix: str = "") -> dict:
    out = {}
    for k, v in d.items():
        name = f"{prefix}{k}"
        if isinstance(v, dict) and v:
            out.update(flatten(v, name + "."))
        else:
            out[name] = v
    return out


def record_of(row: dict) -> dict:
    """The nested fields of one row (missing cells left out; `record` and `kind` dropped)."""
    back = {v: k for k, v in ROW_FIELDS.items()}
    several = row.get("kind") == "several"
    out: dict = {}
    for name, value in row.items():
        if name in ("record", "kind") or _missing(value):
            continue
        if row.get("kind") == "term" and name in ("p_value", "statistic.value"):
            continue                         # copies of the term's own fields
        if several and name in back:
            out.setdefault("row", {})[back[name]] = value
            continue
        node = out
        parts = name.split(".")
        for p in parts[:-1]:
            node = node.setdefault(p, {})
        node[parts[-1]] = value
    return out


def _missing(v) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v))
