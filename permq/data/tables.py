"""Loading data files into named tables, and describing them.

Files are read by extension: .csv, .tsv/.tab/.txt (tab-separated), .parquet, .xlsx/.xls.
Nothing is changed on load; missing values are kept and counted when a statement uses them.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from ..lazy import pandas as pd

from ..errors import DataError, Span

READERS = {
    ".csv": lambda p: pd.read_csv(p),
    ".tsv": lambda p: pd.read_csv(p, sep="\t"),
    ".tab": lambda p: pd.read_csv(p, sep="\t"),
    ".txt": lambda p: pd.read_csv(p, sep=None, engine="python"),
    ".parquet": lambda p: pd.read_parquet(p),
    ".xlsx": lambda p: pd.read_excel(p),
    ".xls": lambda p: pd.read_excel(p),
}


@dataclass
class Table:
    name: str
    frame: pd.DataFrame
    source: str = ""

    @property
    def shape(self) -> tuple[int, int]:
        return self.frame.shape


def default_name(path: str) -> str:
    stem = Path(path).stem
    name = re.sub(r"[^A-Za-z0-9_]", "_", stem)
    return name if re.match(r"[A-Za-z_]", name) else "t_" + name


def load_table(path: str, name: str, base_dir: Path | None = None, span: Span | None = None) -> Table:
    p = Path(path).expanduser()
    if not p.is_absolute() and base_dir is not None:
        p = base_dir / p
    if not p.exists():
        raise DataError(f"no file '{path}'", span, hint=_nearby_files(p))
    reader = READERS.get(p.suffix.lower())
    if reader is None:
        raise DataError(f"cannot read '{path}': unknown file type '{p.suffix}'", span,
                        hint="use .csv, .tsv, .parquet or .xlsx")
    try:
        frame = reader(p)
    except ImportError as exc:
        raise DataError(f"cannot read '{path}': {exc}", span) from None
    except Exception as exc:  # noqa: BLE001 - any reader failure is the user's file
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise DataError(f"cannot read '{path}': {first}", span) from None
    if frame.shape[1] == 0:
        raise DataError(f"'{path}' has no columns", span)
    return Table(name, frame, str(p))


def _nearby_files(p: Path) -> str | None:
    import difflib

    folder = p.parent if p.parent.exists() else None
    if folder is None:
        return f"the folder '{p.parent}' does not exist"
    names = [f.name for f in folder.iterdir() if f.is_file()]
    close = difflib.get_close_matches(p.name, names, n=1, cutoff=0.6)
    return f"did you mean '{close[0]}'?" if close else None


def describe(table: Table, max_levels: int = 8) -> list[dict]:
    rows = []
    for col in table.frame.columns:
        s = table.frame[col]
        numeric = pd.api.types.is_numeric_dtype(s) and not pd.api.types.is_bool_dtype(s)
        levels = s.dropna().unique()
        row = {"column": str(col), "type": "number" if numeric else "text",
               "missing": int(s.isna().sum()), "distinct": int(len(levels))}
        if not numeric or len(levels) <= max_levels:
            shown = sorted(map(str, levels))[:max_levels]
            row["levels"] = shown + (["..."] if len(levels) > max_levels else [])
        if numeric and s.notna().any():
            row["min"] = float(s.min())
            row["max"] = float(s.max())
        rows.append(row)
    return rows
