"""The one natural order of levels, used by results, `describe` and completion alike.

Levels are compared part by part: runs of digits (with a decimal part, and a sign at the start
or after a space) as numbers, the rest as text without regard to case. So 0, 10, 30, 100;
"2.5 mg" before "10 mg" before "100 mg"; "dose 9" before "dose 10"; numbers before words
("10 mg/kg, 30 mg/kg, 100 mg/kg, control"). Levels that compare equal so (case only) keep a
fixed order by their text.
"""
from __future__ import annotations

import re

_PART = re.compile(r"(?:^|(?<=\s))[-+]?\d+(?:\.\d+)?|\d+(?:\.\d+)?")


def natural_key(text) -> tuple:
    text = str(text)
    parts, at = [], 0
    for m in _PART.finditer(text):
        if m.start() > at:
            parts.append((1, 0.0, text[at:m.start()].lower()))
        parts.append((0, float(m.group(0)), ""))
        at = m.end()
    if at < len(text):
        parts.append((1, 0.0, text[at:].lower()))
    return tuple(parts), text


def natural_sorted(levels) -> list:
    return sorted(levels, key=natural_key)
