"""The Python front end: `run` for statements, and `compare`, `relate`, `count` for arrays and
DataFrames (names mirroring the language).

Each function writes the statement it stands for (inline lists for arrays, column names for a
DataFrame handed over as the table `data`) and runs it through a `Session`, so the numbers,
the checks and the messages are those of the statement; the result's `statement` is text that
`permq run` replays. A statement that fails raises `StatementFailed` with its message.

    permq.compare(a, b, using="ranks")
    permq.compare(df, "mass", by="recipe", levels=["A", "B"])
    permq.relate(df, "mass", "light", using="kendall")
    permq.count([[9, 1], [3, 7]], rows=["treated", "control"], columns=["better", "same"])
"""
from __future__ import annotations

import math
import re
from numbers import Number

from .pipeline import Session
from .result import Failure

TABLE = "data"
NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_.]*$")
KEYWORDS = {"by", "vs", "to", "of", "in", "as", "using", "for", "every", "numeric", "except"}


class StatementFailed(ValueError):
    """The statement a function wrote could not run; `.failure` holds the details."""

    def __init__(self, failure: Failure):
        super().__init__(f"{failure.message}" + (f" ({failure.hint})" if failure.hint else "")
                         + f"\n  in: {failure.statement}")
        self.failure = failure


class Results(list):
    """What `permq.run` gives: a list of outputs (Result, ManyResult, RobustnessResult, Note,
    Failure), one per statement that prints, with table, JSON, sentence and report views."""

    def __init__(self, outputs=(), session=None):
        super().__init__(outputs)
        self.session = session

    def records(self) -> list:
        from .render.jsonout import records

        return records(self)

    def to_frame(self):
        """A pandas DataFrame, one row per test (several-test rows too), the JSON fields as
        columns (nested fields with dotted names)."""
        import pandas as pd

        from .render.frame import rows

        return pd.DataFrame(rows(self.records()))

    def to_json(self) -> str:
        from .render.jsonout import render

        return render(self)

    def sentences(self) -> list:
        from .render.sentences import sentence

        return [s for s in (sentence(r) for r in self.records()) if s]

    def save_report(self, path) -> str:
        """Write the HTML report of the session these results came from."""
        from pathlib import Path

        from .report import write

        if self.session is None:
            raise ValueError("these results carry no session to report on")
        return write(self.session, Path(path))

    def __str__(self) -> str:
        from .render.text import render

        return render(self)

    def _repr_html_(self) -> str:
        from .render.html import STYLE, section

        return f"<style>{STYLE}</style>" + "".join(section(r) for r in self.records())


def run(text: str, tables: dict | None = None, base_dir=None, cluster=None,
        workers: int | None = None) -> Results:
    """Run statements; one Result, ManyResult, Note or Failure per statement that prints.

    `tables` maps names to pandas DataFrames (or dicts of columns). `cluster` (a Dask
    scheduler address such as "tcp://127.0.0.1:8786", or a dask.distributed Client) runs
    several-response statements there; `workers` sets the number of local workers for them
    (default: every core). Either way the numbers are the same.
    """
    session = Session(tables=tables, base_dir=base_dir, cluster=cluster, workers=workers)
    return Results(session.run(text), session)


# ---------------------------------------------------------------- the functions

def compare(first, *rest, by=None, paired: bool = False, **options):
    """Two samples, paired samples, one sample, or groups, as `compare` does.

    compare(a, b)                       inline samples: effect a - b
    compare(a, b, c)                    three or more samples
    compare(a, 12.5)                    one sample against a value
    compare(after, before, paired=True) paired samples
    compare(values, by=labels)          values and their group labels
    compare(df, "mass", by="recipe")    columns of a DataFrame (or a dict of columns)
    compare(df, ["mass", "light"], by="recipe")        several responses at once
    compare(df, "after", "before", paired=True)         paired columns
    Options: using, levels, within, ordered, alternative, confidence, exact, sampled, seed,
    adjust, pairwise, picture.
    """
    if paired:
        options["paired"] = True
    if _is_table(first):
        frame = _frame(first)
        if not rest:
            raise TypeError("name the response column: compare(df, 'mass', by='recipe')")
        response = rest[0]
        if by is not None:
            if len(rest) != 1:
                raise TypeError("with by=, name one response (or a list of responses)")
            subject = f"{_responses(response)} by {_name(by)}"
        else:
            subject = " vs ".join(_column_or_value(v) for v in rest)
            if len(rest) < 2:
                raise TypeError("give by='group column', a second column, or a value")
        return _one(f"compare {subject}", options, frame)
    if by is not None:
        import pandas as pd

        values, labels = _array(first, "the values"), list(by)
        if len(labels) != len(values):
            raise ValueError(f"{len(values)} values but {len(labels)} group labels")
        frame = pd.DataFrame({"value": values, "group": [str(v) for v in labels]})
        return _one("compare value by group", options, frame)
    if not rest:
        raise TypeError("compare(a, b) needs a second sample or a value")
    operands, dropped = [], []
    for i, v in enumerate((first,) + rest):
        if _is_number(v):
            operands.append(_number(v))
        else:
            text, missing = _inline(v, _ordinal(i))
            operands.append(text)
            dropped += missing
    return _one("compare " + " vs ".join(operands), options, None, dropped)


def relate(first, *rest, **options):
    """Association and slopes, as `relate` does.

    relate(y, x)                          two arrays (names from pandas Series, else y and x)
    relate(df, "mass", "light", using="kendall")
    relate(df, "mass", "light", using="slope", adjusting=["bench"])
    Options: using, adjusting, alternative, confidence, exact, sampled, seed, picture.
    """
    if _is_table(first):
        if len(rest) != 2:
            raise TypeError("relate(df, 'response', 'predictor')")
        frame, (y, x) = _frame(first), rest
    else:
        import pandas as pd

        if len(rest) != 1:
            raise TypeError("relate(y, x) takes two arrays")
        y = getattr(first, "name", None) or "y"
        x = getattr(rest[0], "name", None) or ("x" if y != "x" else "x2")
        frame = pd.DataFrame({y: _array(first, "y"), x: _array(rest[0], "x")})
    return _one(f"relate {_name(y)} to {_name(x)}", options, frame)


def count(first=None, *rest, by=None, paired: bool = False, of=None, vs=None, successes=None,
          trials=None, **options):
    """Tables, paired outcomes and one proportion, as `count` does.

    count([[9, 1], [3, 7]], rows=["treated", "control"], columns=["better", "same"])
    count(crosstab_frame)                 a DataFrame of counts: its index and columns label it
    count(df, "sprouted", by="dose", levels=["40", "0"])   a table from two columns
    count(outcome, by=arm)                two arrays of labels
    count(df, "first", "second", paired=True)               paired outcomes
    count(7, of=20, vs=0.5)               one proportion (or successes=7, trials=20)
    Options: using, levels, ordered, rows, columns, alternative, confidence, exact, sampled,
    seed.
    """
    if successes is not None or of is not None or trials is not None:
        k = successes if successes is not None else first
        n = trials if trials is not None else of
        text = f"count {_whole(k, 'successes')} of {_whole(n, 'trials')}"
        if vs is not None:
            text += f" vs {_number(vs)}"
        return _one(text, options)
    if paired:
        options["paired"] = True
    if _is_table(first) and (rest or by is not None):
        frame = _frame(first)
        if by is not None:
            return _one(f"count {_name(rest[0])} by {_name(by)}", options, frame)
        if len(rest) != 2:
            raise TypeError("count(df, 'first', 'second', paired=True) or count(df, 'y', by='g')")
        return _one(f"count {_name(rest[0])} vs {_name(rest[1])}", options, frame)
    if by is not None:
        import pandas as pd

        frame = pd.DataFrame({"outcome": [str(v) for v in first], "arm": [str(v) for v in by]})
        return _one("count outcome by arm", options, frame)
    import pandas as pd

    if isinstance(first, pd.DataFrame):           # a table of counts, labelled
        options.setdefault("rows", [str(v) for v in first.index])
        options.setdefault("columns", [str(v) for v in first.columns])
        first = first.to_numpy()
    return _one("count " + _table_literal(first), options)


# ---------------------------------------------------------------- writing the statement

def _one(subject: str, options: dict, frame=None, dropped=()):
    text = subject + _options(options) + (f" in {TABLE}" if frame is not None else "")
    session = Session(tables={TABLE: frame} if frame is not None else None)
    outputs = session.run(text)
    out = outputs[-1] if outputs else None
    if isinstance(out, Failure):
        raise StatementFailed(out)
    for note in dropped:
        out.warnings.append(note)
    return out


OPTION_ORDER = ("using", "levels", "within", "ordered", "paired", "adjusting", "rows", "columns",
                "alternative", "confidence", "exact", "sampled", "seed", "adjust", "pairwise",
                "picture")


def _options(options: dict) -> str:
    unknown = sorted(set(options) - set(OPTION_ORDER))
    if unknown:
        raise TypeError(f"unknown option {', '.join(unknown)}; options: "
                        + ", ".join(OPTION_ORDER))
    parts = []
    for key in OPTION_ORDER:
        if key not in options or options[key] is None or options[key] is False:
            continue
        v = options[key]
        if key in ("levels", "rows", "columns"):
            parts.append(f"{key} " + ", ".join(_string(x) for x in _listed(v)))
        elif key == "ordered":
            parts.append("ordered" if v is True else
                         "ordered " + " < ".join(_string(x) for x in _listed(v)))
        elif key == "adjusting":
            parts.append("adjusting for " + ", ".join(_name(c) for c in _listed(v)))
        elif key == "within":
            parts.append(f"within {_name(v)}")
        elif key == "confidence":
            level = float(v)
            parts.append(f"confidence {_number(level * 100 if level < 1 else level)}%")
        elif key in ("sampled", "seed"):
            parts.append(f"{key} {_whole(v, key)}")
        elif key in ("picture",):
            parts.append(f"picture {_string(v)}")
        elif v is True:
            parts.append(key)
        else:
            parts.append(f"{key} {v}")
    return "".join(" " + p for p in parts)


def _listed(v) -> list:
    return [v] if isinstance(v, str) else list(v)


def _string(v) -> str:
    text = str(v)
    if "\n" in text or ('"' in text and "'" in text):
        raise ValueError(f"cannot write {text!r} in a statement (a line break, or both kinds "
                         "of quote)")
    return f"'{text}'" if '"' in text else f'"{text}"'


def _name(v) -> str:
    text = str(v)
    if NAME.match(text) and text not in KEYWORDS:
        return text
    if "`" in text or "\n" in text:
        raise ValueError(f"cannot name the column {text!r} in a statement")
    return f"`{text}`"


def _responses(v) -> str:
    return _name(v) if isinstance(v, str) else ", ".join(_name(c) for c in v)


def _column_or_value(v) -> str:
    return _number(v) if _is_number(v) else _name(v)


def _is_number(v) -> bool:
    return isinstance(v, Number) and not isinstance(v, bool) or (
        hasattr(v, "dtype") and getattr(v, "ndim", 1) == 0)


def _number(v) -> str:
    f = float(v)            # numpy scalars too: never their repr
    if not math.isfinite(f):
        raise ValueError(f"{f} is not a value a statement can hold")
    if f.is_integer() and abs(f) < 1e15:
        return str(int(f))
    return repr(f)


def _whole(v, what: str) -> str:
    f = float(v)
    if not f.is_integer() or f < 0:
        raise ValueError(f"{what} is a whole number, 0 or more (got {v!r})")
    return str(int(f))


def _array(v, what: str) -> list:
    import numpy as np

    try:
        a = np.asarray(v, dtype=float).ravel()
    except (TypeError, ValueError):
        raise TypeError(f"{what}: expected numbers, got {type(v).__name__}") from None
    return a.tolist()


def _inline(v, which: str):
    values = _array(v, f"the {which} sample")
    kept = [x for x in values if not math.isnan(x)]
    dropped = len(values) - len(kept)
    notes = ([f"dropped {dropped} missing value{'s' if dropped != 1 else ''} from the {which} "
              "sample"] if dropped else [])
    return "[" + ", ".join(_number(x) for x in kept) + "]", notes


def _ordinal(i: int) -> str:
    return ("first", "second", "third")[i] if i < 3 else f"{i + 1}th"


def _table_literal(t) -> str:
    import numpy as np

    a = np.asarray(t)
    if a.ndim != 2:
        raise ValueError("a table of counts is a list of rows, e.g. [[9, 1], [3, 7]]")
    return "[" + ", ".join("[" + ", ".join(_whole(x, "a count") for x in row) + "]"
                           for row in a.tolist()) + "]"


def _is_table(v) -> bool:
    import pandas as pd

    return isinstance(v, (pd.DataFrame, dict))


def _frame(v):
    from .pipeline import as_frame

    return as_frame(TABLE, v)
