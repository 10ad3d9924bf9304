"""Number formats and the block heading shared by the renderers."""
from __future__ import annotations

import math

from ..plan.sizes import words
from ..syntax.parser import one_line


def p(v) -> str:
    if v is None or v != v:
        return "-"
    if v >= 0.001:
        return f"{v:.4f}"
    if v == 0:
        return "0"
    return f"{v:.2e}"


def num(v, digits: int = 4) -> str:
    if v is None:
        return "-"
    v = float(v)
    if math.isnan(v):
        return "-"
    if math.isinf(v):
        return "+inf" if v > 0 else "-inf"
    if v == 0:
        return "0"
    if abs(v) >= 1e6 or abs(v) < 1e-4:
        return f"{v:.{digits}g}"
    mag = int(math.floor(math.log10(abs(v))))
    decimals = max(0, digits - 1 - mag)
    return f"{v:.{decimals}f}"


def interval(iv, digits: int = 4) -> str:
    if iv is None:
        return "-"
    return f"[{num(iv[0], digits)}, {num(iv[1], digits)}]"


def count(v) -> str:
    return words(v)


def df(v) -> str:
    v = float(v)
    return str(int(v)) if v.is_integer() else f"{v:.2f}"


def heading(statement: str, width: int = 76) -> str:
    """The rule a result block opens with: the statement on one line, ruled to `width`."""
    head = f"── {one_line(statement)} "
    return head + "─" * max(2, width - len(head))
