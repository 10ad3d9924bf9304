"""Delimited text files (.csv, .txt, .tsv): the delimiter and the decimal mark.

A spreadsheet's export in many locales separates fields with ';' and writes decimals with a
comma (12,4). Read as plain CSV it would be one garbled column, so both are found from the
file itself unless `load` names them (`delimiter ";"`, `decimal ","`):

- delimiter: the first of , ; tab | that splits the first lines (outside quotes) into the
  same number of fields, two or more; failing that, the one that splits the header most;
- decimal mark: ',' when numbers written with a decimal comma appear and none with a point
  (a point is then taken as a thousands separator where it groups digits by three: 1.234,5),
  else '.'. Where both marks appear in number-like fields the file is refused with a message
  that asks for `decimal`.

A comma-delimited file can still carry decimal commas in quoted fields ("12,4"): such text
columns become numbers when every value in them is a number with a decimal comma.
"""
from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Optional

from ..errors import DataError

CANDIDATES = (",", ";", "\t", "|")
NAMES = {",": "','", ";": "';'", "\t": "tab", "|": "'|'"}
SAMPLE_LINES = 50

_COMMA_NUMBER = re.compile(r"^[-+]?(\d{1,3}(\.\d{3})+|\d+),\d+$")
_POINT_NUMBER = re.compile(r"^[-+]?(\d{1,3}(,\d{3})+|\d*)\.\d+$")
_GROUPED = re.compile(r"^[-+]?[1-9]\d{0,2}(\.\d{3})+(,\d+)?$")


@dataclass(frozen=True)
class Layout:
    delimiter: str
    decimal: str = "."
    thousands: Optional[str] = None
    found: bool = True            # found from the file (not named in `load`)

    def words(self) -> str:
        """'delimiter ';', decimal ','' for the load note."""
        out = f"delimiter {NAMES.get(self.delimiter, repr(self.delimiter))}"
        out += f", decimal '{self.decimal}'"
        return out + (f", thousands '{self.thousands}'" if self.thousands else "")


def delimiter_value(text: str) -> str:
    """`delimiter "tab"` or `delimiter "\\t"` for a tab; otherwise one character."""
    return "\t" if text in ("tab", "\\t", "\t") else text


def sample(path: Path) -> list[str]:
    with open(path, encoding="utf-8-sig", errors="replace", newline="") as fh:
        lines = []
        for line in fh:
            if line.strip():
                lines.append(line.rstrip("\r\n"))
            if len(lines) >= SAMPLE_LINES:
                break
    return lines


def _fields(line: str, delimiter: str) -> list[str]:
    return next(csv.reader(io.StringIO(line), delimiter=delimiter, quotechar='"'), [])


def find_delimiter(lines: list[str], default: str = ",") -> str:
    best, best_width = None, 1
    for d in CANDIDATES:
        widths = {len(_fields(line, d)) for line in lines[:20]}
        if len(widths) == 1 and min(widths) > best_width:
            best, best_width = d, min(widths)
    if best is not None:
        return best
    counts = {d: len(_fields(lines[0], d)) if lines else 1 for d in CANDIDATES}
    top = max(counts, key=lambda d: counts[d])
    return top if counts[top] > 1 else default


def find_decimal(lines: list[str], delimiter: str) -> tuple[str, Optional[str], Optional[str]]:
    """(decimal mark, thousands separator, a line that shows both marks or None)."""
    first_comma = first_point = None
    comma = point = 0
    grouped = True            # every point-number is digits grouped by three (1.234)
    dotted = False            # some comma-number has grouping points (1.234,5)
    for i, line in enumerate(lines[1:], start=2):
        for c in (c.strip() for c in _fields(line, delimiter)):
            if _COMMA_NUMBER.match(c):
                comma += 1
                dotted = dotted or "." in c
                first_comma = first_comma or f"{c} on line {i}"
            elif _POINT_NUMBER.match(c) or _GROUPED.match(c):
                point += 1
                grouped = grouped and bool(_GROUPED.match(c))
                first_point = first_point or f"{c} on line {i}"
    if comma == 0:
        return ".", None, None
    if point == 0 or grouped:     # 1.234,5 and 1.234: a point groups thousands
        return ",", "." if (dotted or point) else None, None
    return ",", None, f"{first_comma} and {first_point}"


def layout_for(path: Path, delimiter: Optional[str], decimal: Optional[str],
               default_delimiter: str, span=None) -> Layout:
    lines = sample(path)
    found = delimiter is None and decimal is None
    if delimiter is None:
        delimiter = find_delimiter(lines, default_delimiter)
    thousands = None
    if decimal is None:
        decimal, thousands, clash = (".", None, None) if delimiter == "," else \
            find_decimal(lines, delimiter)
        if clash:
            raise DataError(f"'{path.name}' writes numbers with both '.' and ',' as the decimal "
                            f"mark (for example {clash})", span,
                            hint=f'say which: load "{path.name}" decimal "," (or decimal ".")')
    if decimal not in (".", ","):
        raise DataError(f"the decimal mark is '.' or ',', not '{decimal}'", span)
    if decimal == delimiter:
        raise DataError(f"the decimal mark and the delimiter are both '{decimal}'", span,
                        hint='a file with decimal commas is usually delimited by ";": '
                             'delimiter ";" decimal ","')
    return Layout(delimiter, decimal, thousands, found)


def read(path: Path, delimiter: Optional[str] = None, decimal: Optional[str] = None,
         default_delimiter: str = ",", span=None):
    """(frame, layout) of a delimited text file."""
    import pandas as pd

    layout = layout_for(path, delimiter, decimal, default_delimiter, span)
    frame = pd.read_csv(path, sep=layout.delimiter, decimal=layout.decimal,
                        thousands=layout.thousands, encoding="utf-8-sig")
    if layout.delimiter == "," and decimal is None:
        frame = _quoted_decimal_commas(frame)
    if frame.shape[1] == 1:
        _refuse_one_garbled_column(path, frame, layout, span)
    return frame, layout


def _quoted_decimal_commas(frame):
    """Text columns whose every value is a number with a decimal comma become numbers."""
    import pandas as pd

    for col in frame.columns:
        s = frame[col]
        if pd.api.types.is_numeric_dtype(s) or pd.api.types.is_bool_dtype(s):
            continue
        values = s.dropna().astype(str).str.strip()
        if len(values) and values.str.match(_COMMA_NUMBER.pattern).all():
            frame[col] = pd.to_numeric(s.astype(str).str.strip()
                                       .str.replace(".", "", regex=False)
                                       .str.replace(",", ".", regex=False), errors="coerce")
            frame.loc[s.isna(), col] = float("nan")
    return frame


def _refuse_one_garbled_column(path, frame, layout, span):
    header = str(frame.columns[0])
    others = [d for d in CANDIDATES if d != layout.delimiter and d in header]
    if others:
        d = others[0]
        raise DataError(f"'{path.name}' reads as one column named '{header[:40]}' with the "
                        f"delimiter {NAMES[layout.delimiter]}, yet its first line holds {NAMES[d]}",
                        span,
                        hint=f'name the delimiter: load "{path.name}" delimiter '
                             f'"{"tab" if d == chr(9) else d}"')
