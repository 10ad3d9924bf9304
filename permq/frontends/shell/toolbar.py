"""The bottom toolbar: the table in use, its size, and the session's defaults."""
from __future__ import annotations

KEYS = "Tab completes · Ctrl-R history · Ctrl-D leaves"


def table_part(session) -> str:
    cat = session.catalog
    if cat.current is None or cat.current not in cat.tables:
        return 'no table in use (load "file.csv")'
    rows, cols = cat.tables[cat.current].shape
    from ...render.numbers import counted

    return f"{cat.current}  {counted(rows, 'row')} × {counted(cols, 'column')}"


def defaults_part(session) -> str:
    d = session.defaults
    seed = {"fresh": "fresh", None: "from statement"}.get(d.seed, d.seed)
    parts = [f"confidence {d.confidence * 100:g}%", f"seed {seed}", f"budget {d.budget_seconds:g} s"]
    if d.alternative != "two-sided":
        parts.append(f"alternative {d.alternative}")
    if d.format != "text":
        parts.append(f"format {d.format}")
    return " · ".join(parts)


def toolbar_text(session) -> str:
    """The toolbar as plain text (what the tests read)."""
    return f" {table_part(session)} │ {defaults_part(session)} │ {KEYS}"


def toolbar(session, width: int = 0):
    """The toolbar as prompt_toolkit formatted text; the key hints only where they fit."""
    parts = [("class:bottom-toolbar.table", f" {table_part(session)}"),
             ("", f" │ {defaults_part(session)}")]
    if not width or sum(len(t) for _, t in parts) + 3 + len(KEYS) <= width:
        parts += [("", " │ "), ("class:bottom-toolbar.key", KEYS)]
    return parts
