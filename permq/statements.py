"""Session statements: load, use, set, show, describe, help, save, quit."""
from __future__ import annotations

import re
from pathlib import Path

from .data.tables import default_name, describe, load_table
from .errors import BindError
from .help import help_text
from .plan import seeds
from .render.numbers import counted
from .report import file_record
from .result import Note
from .syntax import nodes as n

FORMATS = ("text", "json", "csv", "markdown", "sentences")


def run_session_statement(node, text: str, session):
    if isinstance(node, n.Load):
        return _load(node, text, session)
    if isinstance(node, n.Use):
        return _use(node, text, session)
    if isinstance(node, n.SetStatement):
        return _set(node, text, session)
    if isinstance(node, n.Show):
        return _show(node, text, session)
    if isinstance(node, n.Describe):
        return _describe(node, text, session)
    if isinstance(node, n.Help):
        return Note(text, help_text(node.topic))
    if isinstance(node, n.Save):
        return _save_report(node, text, session) if node.what == "report" else \
            _save(node, text, session)
    if isinstance(node, n.Copy):
        return _copy(text, session)
    if isinstance(node, n.Quit):
        session.quit_requested = True
        return None
    raise BindError("this statement cannot run here", getattr(node, "span", None))


def _load(node: n.Load, text, session):
    name = node.alias.text if node.alias else default_name(node.path)
    table = load_table(node.path, name, session.base_dir, node.span, node.options)
    session.catalog.tables[name] = table
    session.catalog.current = name
    rows, cols = table.shape
    written = "".join(f' {o.key} "{o.value[0]}"' for o in node.options)
    session.history.append(f'load "{table.source}" as {_quote_name(name)}{written}')
    session.files.append(file_record(name, table.source, rows, cols))
    how = f"; {table.read_as}" if table.read_as else ""
    return Note(text, f"loaded '{name}': {counted(rows, 'row')}, {counted(cols, 'column')} "
                      f"(now in use){how}",
                {"table": name, "rows": rows, "columns": cols, "read_as": table.read_as})


def _quote_name(name: str) -> str:
    return name if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_.]*", name) else f"`{name}`"


def _use(node: n.Use, text, session):
    name = node.table.text
    if name not in session.catalog.tables:
        from .bind.common import suggest

        raise BindError(f"no table named '{name}'", node.table.span,
                        hint=suggest(name, list(session.catalog.tables), "tables") or "load one first")
    session.catalog.current = name
    session.history.append(f"use {_quote_name(name)}")
    rows, cols = session.catalog.tables[name].shape
    return Note(text, f"using '{name}': {counted(rows, 'row')}, {counted(cols, 'column')}")


def _set(node: n.SetStatement, text, session):
    from .bind.common import confidence_value

    d = session.defaults
    key, value, span = node.key, node.value, node.value_span
    if key == "seed":
        d.seed, shown = _seed(value, span)
    elif key == "confidence":
        d.confidence = confidence_value(value, span)
        shown = f"{d.confidence:.4g}"
    elif key == "alternative":
        if value not in ("two-sided", "higher", "lower"):
            raise BindError(f"'{value}' is not an alternative", span,
                            hint="choose two-sided, higher or lower")
        d.alternative = value
        shown = value
    elif key == "budget":
        d.budget_seconds = _duration(value, span)
        shown = f"{d.budget_seconds:g} s"
    elif key == "workers":
        d.workers, shown = _workers(value, span)
    elif key == "cluster":
        d.cluster, shown = _cluster(value, span)
    elif key == "memory":
        d.memory_bytes = _size(value, span)
        shown = f"{d.memory_bytes / 1e9:g} GB"
    else:  # format
        if value not in FORMATS:
            raise BindError(f"'{value}' is not an output format", span,
                            hint="choose " + ", ".join(FORMATS))
        d.format = value
        shown = value
    session.history.append(text)
    return Note(text, f"{key} set to {shown}")


def _seed(value, span):
    """`set seed 11`; `set seed fresh` for a new seed each run; `set seed statement` for the
    default, a seed derived from each statement's text (plan/seeds.py)."""
    if value == seeds.FRESH:
        return seeds.FRESH, "fresh (a new seed on every run)"
    if value == "statement":
        return seeds.FROM_STATEMENT, "each statement's own, derived from its text (the default)"
    if not isinstance(value, float) or not value.is_integer() or value < 0:
        raise BindError("a seed is a whole number, 0 or more", span,
                        hint="or 'fresh' (a new seed each run), or 'statement' (the default)")
    return int(value), str(int(value))


def _workers(value, span):
    """`set workers 2`; `set workers all` for every core."""
    if value == "all":
        return None, "all cores"
    if not isinstance(value, float) or not value.is_integer() or value < 1:
        raise BindError("workers is a whole number, 1 or more (or 'all')", span)
    return int(value), str(int(value))


def _cluster(value, span):
    """`set cluster "tcp://host:8786"`; `set cluster none` to run here again."""
    if value in ("none", "local"):
        return None, "none (runs here)"
    if not isinstance(value, str) or ":" not in value:
        raise BindError(f"'{value}' is not a scheduler address", span,
                        hint='write e.g. set cluster "tcp://127.0.0.1:8786", or set cluster none')
    return value, value


def _duration(value, span) -> float:
    if isinstance(value, float):
        seconds = value
    else:
        m = re.fullmatch(r"([0-9.]+)(ms|s|min)", str(value))
        if not m:
            raise BindError(f"'{value}' is not a duration", span, hint="write e.g. 5s or 2min")
        seconds = float(m.group(1)) * {"ms": 1e-3, "s": 1.0, "min": 60.0}[m.group(2)]
    if not seconds > 0:
        raise BindError("the budget must be more than zero", span)
    return seconds


def _size(value, span) -> float:
    m = re.fullmatch(r"([0-9.]+)(kB|MB|GB)", str(value))
    if not m:
        raise BindError(f"'{value}' is not an amount of memory", span, hint="write e.g. 500MB or 2GB")
    size = float(m.group(1)) * {"kB": 1e3, "MB": 1e6, "GB": 1e9}[m.group(2)]
    if not size > 0:
        raise BindError("the memory budget must be more than zero", span)
    return size


def _show(node: n.Show, text, session):
    if node.what == "settings":
        d = session.defaults
        body = (f"confidence {d.confidence:.4g}, alternative {d.alternative}, "
                f"seed {seeds.setting_words(d.seed)}, "
                f"budget {d.budget_seconds:g} s, memory {d.memory_bytes / 1e9:g} GB, "
                f"format {d.format}, workers {d.workers or 'all cores'}, "
                f"cluster {d.cluster if d.cluster is not None else 'none'}")
        return Note(text, body)
    tables = session.catalog.tables
    if not tables:
        return Note(text, "no tables loaded")
    lines = []
    for name, t in tables.items():
        mark = "*" if name == session.catalog.current else " "
        rows, cols = t.shape
        lines.append(f"{mark} {name:<16} {counted(rows, 'row'):>11} {counted(cols, 'column'):>12}  "
                     f"{t.source}")
    return Note(text, "\n".join(lines), {"tables": list(tables)})


def _describe(node: n.Describe, text, session):
    name = node.table.text
    if name not in session.catalog.tables:
        from .bind.common import suggest

        raise BindError(f"no table named '{name}'", node.table.span,
                        hint=suggest(name, list(session.catalog.tables), "tables"))
    rows = describe(session.catalog.tables[name])
    lines = [f"{'column':<18} {'type':<7} {'missing':>7} {'distinct':>8}  levels / range"]
    for r in rows:
        if "levels" in r:
            extra = ", ".join(r["levels"])
        else:
            extra = f"{r.get('min', float('nan')):g} .. {r.get('max', float('nan')):g}"
        lines.append(f"{r['column']:<18} {r['type']:<7} {r['missing']:>7} {r['distinct']:>8}  {extra}")
    return Note(text, "\n".join(lines), {"columns": rows})


def _save(node: n.Save, text, session):
    path = _target(node, session)
    body = "# saved permq session: replay with  permq run " + path.name + "\n"
    body += "\n".join(session.history) + "\n"
    try:
        path.write_text(body, encoding="utf-8")
    except OSError as exc:
        raise BindError(f"cannot write '{node.path}': {exc.strerror}", node.span) from None
    return Note(text, f"saved {len(session.history)} statements to {path}")


def _target(node, session) -> Path:
    path = Path(node.path).expanduser()
    return path if path.is_absolute() else session.base_dir / path


def _save_report(node: n.Save, text, session):
    """`save report "analysis.html"`: the HTML report of everything that ran so far."""
    from .errors import PermqError
    from .report import write

    path = _target(node, session)
    if path.suffix.lower() not in (".html", ".htm"):
        raise BindError(f"a report is an HTML page: '{node.path}' does not end in .html",
                        node.span, hint=f'write: save report "{path.stem}.html"')
    try:
        said = write(session, path)
    except PermqError as exc:
        raise BindError(exc.message, node.span) from None
    return Note(text, said, {"report": str(path)})


def _copy(text, session):
    """`copy`: the last result's sentence, plain (the shell also puts it on its clipboard)."""
    last = session.last_result()
    if last is None:
        raise BindError("nothing to copy yet: run a compare, relate or count statement first")
    line = last.sentence()
    return Note(text, line, {"kind": "copy", "sentence": line})


def replayable(text: str, result) -> str:
    """The statement as it ran, with the Monte Carlo seed pinned so a replay matches
    (`seed fresh` becomes the seed it drew)."""
    o = getattr(result, "outcome", result)     # several-test results carry method and seed
    return seeds.pinned(text, o.seed) if o.method == "monte-carlo" else text
