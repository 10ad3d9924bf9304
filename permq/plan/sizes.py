"""Sizes of reference sets at any scale: exact integers, their floats and their logarithms.

A reference set can hold far more arrangements than a float can count (C(1200, 600) is about
1e359, 2^1500 about 1e451). Counts stay Python integers (exact, any size); `big` turns one into
a float for cost formulas (inf beyond the float range, never an OverflowError); the
logarithms price products of such counts without forming them; `words` writes one for people.
"""
from __future__ import annotations

import math

LOG_FLOAT_MAX = math.log(1.7976931348623157e308)


def big(count) -> float:
    """A count as a float: inf beyond the float range (costs compare as 'too many')."""
    try:
        return float(count)
    except OverflowError:
        return math.inf


def log_count(count) -> float:
    """Natural logarithm of a non-negative count of any size (-inf for 0)."""
    if count <= 0:
        return -math.inf
    if isinstance(count, int):
        return math.log(count)          # exact for Python integers of any size
    return math.log(float(count))


def log_comb(n: int, k: int) -> float:
    """log C(n, k) by log-gamma, without forming the integer."""
    if k < 0 or k > n:
        return -math.inf
    return math.lgamma(n + 1) - math.lgamma(k + 1) - math.lgamma(n - k + 1)


def log_multinomial(sizes) -> float:
    """log N! / (n_1! ... n_k!)."""
    sizes = [int(s) for s in sizes]
    return math.lgamma(sum(sizes) + 1) - sum(math.lgamma(s + 1) for s in sizes)


def from_log(log_value: float) -> float:
    """exp(log_value), inf beyond the float range."""
    return math.exp(log_value) if log_value < LOG_FLOAT_MAX else math.inf


def words(count) -> str:
    """'12,870' below 10^15, '1.55e+17' above, '1.08e+451' past the float range."""
    if count is None:
        return "-"
    if isinstance(count, int) or (isinstance(count, float) and count.is_integer()):
        c = int(count)
        if c < 10 ** 15:
            return f"{c:,}"
        if c < 10 ** 300:
            return f"{float(c):.3g}"
        digits = int(math.log10(c))                # no decimal string: any size
        lead = c // 10 ** (digits - 2)             # three leading digits, truncated
        if lead >= 1000:                           # log10 rounded up at the edge
            digits, lead = digits + 1, lead // 10
        elif lead < 100:
            digits, lead = digits - 1, c // 10 ** (digits - 3)
        return f"{lead / 100:.2f}e+{digits}"
    f = float(count)
    if f != f or f == math.inf:
        return "more than 1e308" if f == math.inf else "-"
    return f"{f:.3g}"
