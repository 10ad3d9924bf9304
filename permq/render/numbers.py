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


def normal_p(nt) -> str:
    """A normal-theory p-value, or 'undefined (zero spread)' where the test is not defined."""
    if nt is None:
        return "-"
    return f"undefined ({nt.undefined})" if nt.undefined else p(nt.p_value)


def sampled_p(v, iv) -> str:
    """A Monte Carlo p with its interval as two ends: '0.0064 [0.0050, 0.0080]' (never a
    '±' that would reach below 0)."""
    if iv is None:
        return p(v)
    return f"{p(v)} [{p(iv[0])}, {p(iv[1])}]"


def as_extreme(v, draws) -> int:
    """How many draws were as extreme as the observed: b, read back from p = (b + 1) / (m + 1)
    (engine/core/pvalues.py), which every Monte Carlo p follows."""
    return max(0, int(round(float(v) * (int(draws) + 1))) - 1)


def seed(value, source: str = "") -> str:
    """'seed 7', or 'seed 1882066518 (from the statement's text)' (plan/seeds.py)."""
    how = {"statement": " (from the statement's text)", "fresh": " (fresh for this run)"}
    return f"seed {value}{how.get(source, '')}"


def fixed(v, decimals: int) -> str:
    """A number with a fixed number of decimals ('-' for none; never '-0.00')."""
    if v is None or v != v:
        return "-"
    if math.isinf(v):
        return "+inf" if v > 0 else "-inf"
    text = f"{v:.{decimals}f}"
    return text[1:] if text.startswith("-") and not text.strip("-0.") else text


def counted(n: int, word: str) -> str:
    """'1 row', '2 rows', '19,000 rows'."""
    return f"{int(n):,} {word}{'' if int(n) == 1 else 's'}"


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
    """Both ends with one number of decimals: `digits` significant digits of the larger end,
    and at least two of the smaller ('[0.660, 2.540]', never '[0.6600, 2.540]'). An end that
    is exactly 0 or infinite is shown as such; ends past 1e6 or below 1e-4 keep their own."""
    if iv is None:
        return "-"
    sizes = [abs(float(v)) for v in iv if v is not None and math.isfinite(v) and v != 0]
    if not sizes or max(sizes) >= 1e6 or min(sizes) < 1e-4:
        return f"[{num(iv[0], digits)}, {num(iv[1], digits)}]"
    top = max(0, digits - 1 - math.floor(math.log10(max(sizes))))
    low = max(0, 1 - math.floor(math.log10(min(sizes))))
    d = max(top, low)
    ends = ["0" if v == 0 else fixed(float(v), d) for v in iv]
    return f"[{ends[0]}, {ends[1]}]"


def count(v) -> str:
    return words(v)


def df(v) -> str:
    v = float(v)
    return str(int(v)) if v.is_integer() else f"{v:.2f}"


def heading(statement: str, width: int = 76) -> str:
    """The rule a result block opens with: the statement on one line, ruled to `width`."""
    head = f"── {one_line(statement)} "
    return head + "─" * max(2, width - len(head))
