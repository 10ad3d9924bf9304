"""Binding of `relate` and `count` statements."""
from __future__ import annotations

from ..errors import BindError


def bind_relate(node, catalog, defaults):
    raise BindError("'relate' is not available in this version", node.span)


def bind_count(node, catalog, defaults):
    raise BindError("'count' is not available in this version", node.span)
