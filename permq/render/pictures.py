"""Pictures in the terminal: the null distribution as Unicode block characters.

Input is the plain data of `NullPicture.to_dict()` (as kept in `Result.extra["null_picture"]`
and in the robustness result); nothing is computed here but the characters.
"""
from __future__ import annotations

from . import numbers as fmt

EIGHTHS = " ▁▂▃▄▅▆▇█"
HEIGHT = 6
LEAD = " " * 17


def columns(masses, height: int = HEIGHT) -> list:
    """Bar heights in eighths of a row (a bin with any mass shows at least one eighth)."""
    top = max(masses) if masses else 0.0
    if top <= 0:
        return [0] * len(masses)
    full = height * 8
    return [max(1, round(m / top * full)) if m > 0 else 0 for m in masses]


def picture_lines(pic: dict, label: str = "null") -> list:
    masses = pic["masses"]
    levels = columns(masses)
    lines = [f"  {label:<15}{pic['statistic']} under the null ({pic['source']}); "
             f"▲ the observed value"]
    for row in range(HEIGHT - 1, -1, -1):
        cells = []
        for lv in levels:
            part = lv - row * 8
            cells.append(EIGHTHS[8] if part >= 8 else EIGHTHS[part] if part > 0 else " ")
        lines.append(LEAD + "".join(cells).rstrip())
    width = len(masses)
    where = pic["observed_bin"]
    lines.append(LEAD + "─" * where + "▲" + "─" * (width - where - 1))
    lines.append(LEAD + _labels(pic, width))
    return lines


def _labels(pic: dict, width: int) -> str:
    lo, hi = fmt.num(pic["edges"][0]), fmt.num(pic["edges"][-1])
    obs = f"observed {fmt.num(pic['observed'])}"
    row = [" "] * max(width, len(lo) + len(hi) + 1)
    row[:len(lo)] = lo
    row[len(row) - len(hi):] = hi
    start = min(max(pic["observed_bin"] - len(obs) // 2, len(lo) + 2),
                len(row) - len(hi) - len(obs) - 2)
    if start >= len(lo) + 2:
        row[start:start + len(obs)] = obs
        return "".join(row)
    return "".join(row) + "   " + obs
