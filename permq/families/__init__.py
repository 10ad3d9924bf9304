"""Families: each joins a design to its engine, its normal-theory counterpart and its estimate.

A family module offers `plan(design) -> Plan` and `execute(design, plan, progress) -> Result`.
`handler_for(design)` picks the module by the design's type. To add a family, write an engine
module (candidates + run), a normal-theory function, and a family module here; register it in
HANDLERS.
"""
from __future__ import annotations

from importlib import import_module

# design type -> family module, imported when a statement first needs it (a start loads none)
HANDLERS = {
    "TwoSampleDesign": "two_sample",
    "OneSampleDesign": "one_sample",
    "GroupsDesign": "groups",
    "AssociationDesign": "association",
    "TableDesign": "tables",
    "ManyDesign": "many",
}


def handler_for(design):
    try:
        return import_module(f"{__name__}.{HANDLERS[type(design).__name__]}")
    except KeyError:
        from ..errors import PlanError

        raise PlanError(f"{design.kind} analyses are not available in this version") from None
