"""Families: each joins a design to its engine, its normal-theory counterpart and its estimate.

A family module offers `plan(design) -> Plan` and `execute(design, plan, progress) -> Result`.
`handler_for(design)` picks the module by the design's type. To add a family, write an engine
module (candidates + run), a normal-theory function, and a family module here; register it in
HANDLERS.
"""
from __future__ import annotations

from ..bind import designs
from . import association, groups, many, one_sample, tables, two_sample

HANDLERS = {
    designs.TwoSampleDesign: two_sample,
    designs.OneSampleDesign: one_sample,
    designs.GroupsDesign: groups,
    designs.AssociationDesign: association,
    designs.TableDesign: tables,
    designs.ManyDesign: many,
}


def handler_for(design):
    try:
        return HANDLERS[type(design)]
    except KeyError:
        from ..errors import PlanError

        raise PlanError(f"{design.kind} analyses are not available in this version") from None
