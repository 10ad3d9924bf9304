"""Binding of three or more groups, ordered groups and blocked designs."""
from __future__ import annotations

from ..errors import BindError


def bind_groups(node, subject, opts, defaults, y, g, levels, blocks, warnings, table):
    raise BindError("comparisons of three or more groups, ordered groups and blocks are not "
                    "available in this version", subject.group.span,
                    hint="choose two levels: levels \"A\", \"B\"")


def bind_inline_groups(node, opts, defaults, samples, labels, warnings):
    raise BindError("comparisons of three or more samples are not available in this version",
                    node.subject.span)
