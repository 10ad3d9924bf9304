"""Loading data files into named tables, and describing them.

Files are read by extension: .csv and .txt (delimiter and decimal mark found from the file, or
named in `load`; see delimited.py), .tsv/.tab (tab-separated), .parquet (needs pyarrow),
.xlsx (needs openpyxl; `sheet "name"` picks a sheet, else the first), .xls (needs xlrd). The
optional readers come with `pip install "permq[files]"`. Nothing is changed on load; missing
values are kept and counted when a statement uses them.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from ..lazy import pandas as pd

from ..errors import DataError, Span
from . import delimited
from .order import natural_sorted

DELIMITED = {".csv": ",", ".txt": ",", ".tsv": "\t", ".tab": "\t"}
WORKBOOKS = (".xlsx", ".xls")
READERS = tuple(DELIMITED) + (".parquet",) + WORKBOOKS     # the extensions `load` can read
NEEDS = {".parquet": ("pyarrow", "Parquet files"), ".xlsx": ("openpyxl", "Excel workbooks (.xlsx)"),
         ".xls": ("xlrd", "old Excel workbooks (.xls)")}


@dataclass
class Table:
    name: str
    frame: pd.DataFrame
    source: str = ""
    read_as: str = ""        # how it was read, when not plainly ("read with delimiter ';' ...")

    @property
    def shape(self) -> tuple[int, int]:
        return self.frame.shape


def default_name(path: str) -> str:
    stem = Path(path).stem
    name = re.sub(r"[^A-Za-z0-9_]", "_", stem)
    return name if re.match(r"[A-Za-z_]", name) else "t_" + name


def load_table(path: str, name: str, base_dir: Path | None = None, span: Span | None = None,
               options: tuple = ()) -> Table:
    """Read a file; `options` are the `load` statement's (delimiter, decimal, sheet)."""
    p = Path(path).expanduser()
    if not p.is_absolute() and base_dir is not None:
        p = base_dir / p
    if not p.exists():
        raise DataError(f"no file '{path}'", span, hint=_nearby_files(p))
    suffix = p.suffix.lower()
    if suffix not in READERS:
        raise DataError(f"cannot read '{path}': unknown file type '{p.suffix}'", span,
                        hint="use .csv, .txt, .tsv, .parquet, .xlsx or .xls")
    opts = {o.key: o.value for o in options}
    _check_options(opts, suffix, path)
    try:
        frame, how = _read(p, suffix, opts, span)
    except DataError:
        raise
    except ImportError:
        raise _missing_reader(path, suffix, span) from None
    except Exception as exc:  # noqa: BLE001 - any reader failure is the user's file
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise DataError(f"cannot read '{path}': {first}", span) from None
    if frame.shape[1] == 0:
        raise DataError(f"'{path}' has no columns", span)
    return Table(name, frame, str(p), how)


def _check_options(opts: dict, suffix: str, path: str) -> None:
    for key in ("delimiter", "decimal"):
        if key in opts and suffix not in DELIMITED:
            raise DataError(f"'{key}' applies to delimited text files, not to '{path}'",
                            opts[key][1])
    if "sheet" in opts and suffix not in WORKBOOKS:
        raise DataError(f"'sheet' applies to workbooks (.xlsx, .xls), not to '{path}'",
                        opts["sheet"][1])
    if "delimiter" in opts:
        d = delimited.delimiter_value(opts["delimiter"][0])
        if len(d) != 1:
            raise DataError(f"a delimiter is one character (or \"tab\"), not '{d}'",
                            opts["delimiter"][1])


def _read(p: Path, suffix: str, opts: dict, span) -> tuple:
    """(frame, how it was read in words, or '')."""
    if suffix in DELIMITED:
        delimiter = delimited.delimiter_value(opts["delimiter"][0]) if "delimiter" in opts else None
        decimal = opts["decimal"][0] if "decimal" in opts else None
        if suffix in (".tsv", ".tab") and delimiter is None:
            delimiter = "\t"
        frame, layout = delimited.read(p, delimiter, decimal, DELIMITED[suffix],
                                       opts.get("decimal", opts.get("delimiter", (None, span)))[1])
        plain = layout.delimiter == DELIMITED[suffix] and layout.decimal == "."
        return frame, "" if plain else f"read with {layout.words()}"
    if suffix == ".parquet":
        return pd.read_parquet(p), ""
    return _read_workbook(p, opts.get("sheet"), span)


def _read_workbook(p: Path, sheet, span) -> tuple:
    names = list(pd.ExcelFile(p).sheet_names)
    if sheet is None:
        others = names[1:]
        how = (f"sheet '{names[0]}' (the first; also {', '.join(repr(n) for n in others)})"
               if others else "")
        return pd.read_excel(p, sheet_name=names[0]), how
    wanted, where = sheet
    if wanted not in names:
        from ..bind.common import suggest

        raise DataError(f"no sheet '{wanted}' in '{p.name}'", where,
                        hint=suggest(wanted, names, "sheets") or
                        "sheets: " + ", ".join(repr(n) for n in names))
    return pd.read_excel(p, sheet_name=wanted), f"sheet '{wanted}'"


def _missing_reader(path: str, suffix: str, span) -> DataError:
    module, what = NEEDS.get(suffix, ("a reader", "this file type"))
    return DataError(f"cannot read '{path}': reading {what} needs the package '{module}', "
                     "which is not installed", span,
                     hint=f'install the optional readers: pip install "permq[files]" '
                          f"(or just: pip install {module})")


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
            shown = natural_sorted(_level_text(v) for v in levels)[:max_levels]
            row["levels"] = shown + (["..."] if len(levels) > max_levels else [])
        if numeric and s.notna().any():
            row["min"] = float(s.min())
            row["max"] = float(s.max())
        rows.append(row)
    return rows


def _level_text(v) -> str:
    """A level as the binder writes it (10.0 in a float column is the level '10')."""
    return str(int(v)) if isinstance(v, float) and v.is_integer() else str(v)
