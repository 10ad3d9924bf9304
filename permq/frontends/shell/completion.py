"""Completion: what may come next, from the grammar, filled in with the session's names.

`suggest(text_before_cursor, catalog)` is pure (it reads the file system only for paths
after `load` and `save`). It lexes the statement up to the word being typed with lark's
interactive parser, asks which terminals the parser accepts next, and turns each into words:
keywords and keyword sets from the grammar, table names, the columns of the table in use
(or the one named by `in`), the levels of the group column after `levels` / `ordered` / `against`,
file paths after `load`. Each suggestion replaces the word being typed.
"""
from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Optional

from prompt_toolkit.completion import Completer, Completion

from ...data.tables import READERS
from ...data.order import natural_key
from ...render.numbers import counted
from . import notes, vocabulary as vocab
from .scan import current_word, scan  # noqa: F401 - current_word is part of the API

Suggestion = tuple[str, str]
NAME_RE = re.compile(r"[A-Za-z_][A-Za-z0-9_.]*")
TABLE_FILES = tuple(READERS)            # the extensions `load` can read
MAX_FILES = 200


def suggest(text: str, catalog, base_dir=None, text_after: str = "") -> list[Suggestion]:
    """Completions for the word before the cursor: (replacement, description) pairs.

    `text_after` (the rest of the line, optional) lets `in TABLE` typed later count."""
    s = scan(text)
    if s.in_comment:
        return []
    prefix = s.statement[:len(s.statement) - len(s.word)].replace("\\\n", "  ")
    found = vocab.accepted(prefix)
    if found is None:
        return []
    tokens, terminals = found
    ctx = _Context(tokens, terminals, catalog, Path(base_dir) if base_dir else Path.cwd(),
                   s.word, _rest_tokens(s.statement, text_after))
    out: list[Suggestion] = []
    for make in (ctx.keywords, ctx.names, ctx.strings, ctx.words, ctx.numbers):
        out.extend(make())
    return _matching(_unique(out), s.word)


def _rest_tokens(statement: str, text_after: str) -> list:
    """Tokens of the rest of the statement after the cursor (for a later `in TABLE`)."""
    rest = text_after.split(";", 1)[0].split("\n", 1)[0]
    if not rest.strip():
        return []
    found = vocab.accepted((statement + rest).replace("\\\n", "  "))
    if found is None:
        return []
    return [t for t in found[0] if t.start_pos >= len(statement)]


def _matching(items: list[Suggestion], word: str) -> list[Suggestion]:
    w = word.lower()
    bare = w.lstrip("\"'`")
    out = []
    for text, desc in items:
        t = text.lower()
        if t.startswith(w) or (bare and t.lstrip("\"'`").startswith(bare)) or not w:
            out.append((text, desc))
    return out


def _unique(items: list[Suggestion]) -> list[Suggestion]:
    seen, out = set(), []
    for text, desc in items:
        if text not in seen:
            seen.add(text)
            out.append((text, desc))
    return out


def _exposure_in(tokens, i) -> bool:
    """`in` before a number is a rate's exposure (7 events in 120.5), not the `in TABLE` option."""
    return (tokens[i].type == "IN" and i + 1 < len(tokens)
            and tokens[i + 1].type in ("INT", "DECIMAL"))


class _Context:
    """What the tokens so far say about the spot being completed."""

    def __init__(self, tokens, terminals, catalog, base_dir: Path, word: str, rest=()):
        self.tokens = list(tokens)      # before the word being typed
        self.rest = list(rest)          # after the cursor, in the same statement
        self.word = word
        self.terminals = terminals
        self.catalog = catalog
        self.base_dir = base_dir
        self.prev = self.tokens[-1] if self.tokens else None

    def prev_type(self) -> Optional[str]:
        return self.prev.type if self.prev is not None else None

    def verb(self) -> Optional[str]:
        """The analysis verb (compare, relate, count), also after explain and the like."""
        for t in self.tokens[:3]:
            if str(t) in notes.ANALYSIS_VERBS:
                return str(t)
        return None

    # -- keywords and keyword sets ----------------------------------------------------------
    def keywords(self) -> list[Suggestion]:
        out = []
        used = {t.type for i, t in enumerate(self.tokens) if not _exposure_in(self.tokens, i)}
        for term in self.terminals:
            if term in vocab.value_sets():
                words = self._filtered_values(term)
                out += [(w, notes.value_note(term, w)) for w in words]
            elif not (term in used and vocab.is_option(term)):
                out += [(w, notes.keyword_note(w)) for w in vocab.words_of(term)]
        return sorted(out)

    def _filtered_values(self, term: str) -> tuple:
        words = vocab.value_sets()[term]
        if term == "FAMILY":
            fit = notes.families_for(self.verb())
            if fit:
                words = tuple(w for w in words if w in fit or not notes.family_known(w))
        return words

    # -- names: tables and columns ----------------------------------------------------------
    def names(self) -> list[Suggestion]:
        if "NAME" not in self.terminals and "QUOTED_NAME" not in self.terminals:
            return []
        prev = self.prev_type()
        if prev in ("USE", "DESCRIBE", "IN"):
            return self.table_names()
        if prev == "AS":
            return self.alias_for_load()
        return self.columns()

    def table_names(self) -> list[Suggestion]:
        out = []
        for name, table in self.catalog.tables.items():
            rows, cols = table.shape
            mark = " (in use)" if name == self.catalog.current else ""
            out.append((quote_name(name), f"table · {counted(rows, 'row')} × {counted(cols, 'column')}{mark}"))
        return out

    def alias_for_load(self) -> list[Suggestion]:
        from ...data.tables import default_name

        paths = [t for t in self.tokens if t.type == "STRING"]
        if not paths:
            return []
        return [(default_name(str(paths[-1])[1:-1]), "name for the table")]

    def table_in_use(self):
        both = self.tokens + self.rest
        for a, b in zip(both, both[1:]):
            if a.type == "IN" and _name_text(b) in self.catalog.tables:
                return self.catalog.tables[_name_text(b)]
        if self.catalog.current in self.catalog.tables:
            return self.catalog.tables[self.catalog.current]
        return None

    def columns(self) -> list[Suggestion]:
        table = self.table_in_use()
        if table is None:
            return []
        return [(quote_name(str(c)), notes.column_note(table.frame[c], table.name))
                for c in table.frame.columns]

    # -- quoted texts: levels and file paths ------------------------------------------------
    def strings(self) -> list[Suggestion]:
        if "STRING" not in self.terminals:
            return []
        prev = self.prev_type()
        if prev == "LOAD":
            return self.paths(TABLE_FILES)
        if prev == "SAVE":
            return self.paths((".pq",)) or [('"session.pq"', "query file to write")]
        if prev == "REPORT":
            return self.paths((".html",)) or [('"report.html"', "report page to write")]
        if prev in ("ROWS", "COLUMNS"):
            return []
        if prev in ("LEVELS", "ORDERED", "COMMA", "LESSTHAN", "AGAINST"):
            return self.levels()
        if prev == "SETTING":
            return []                   # setting values are offered by words()
        return self.paths(("",))

    def levels(self) -> list[Suggestion]:
        from ...bind.common import level_text

        group = None
        for a, b in zip(self.tokens, self.tokens[1:]):
            if a.type == "BY" and b.type in ("NAME", "QUOTED_NAME"):
                group = _name_text(b)
        table = self.table_in_use()
        if group is None or table is None or group not in table.frame.columns:
            return []
        given = {str(t)[1:-1] for t in self.tokens if t.type == "STRING"}
        col = table.frame[group].dropna().map(level_text)
        counts = col.value_counts()
        out = []
        for lev in sorted(counts.index, key=natural_key):
            if lev not in given:
                out.append((_quote_text(lev), f"level of {group} · {counted(counts[lev], 'row')}"))
        return out

    def paths(self, suffixes: tuple) -> list[Suggestion]:
        return list_paths(self.base_dir, self.word, suffixes)

    # -- bare words: help topics and setting values -----------------------------------------
    def words(self) -> list[Suggestion]:
        if "WORD" not in self.terminals:
            return []
        prev = self.prev_type()
        if prev == "HELP":
            from ...help import topics

            return [(t, "help topic") for t in topics()]
        if prev == "SETTING":
            return notes.setting_values(str(self.prev))
        return []

    # -- numbers: a few examples where the form is not obvious ------------------------------
    def numbers(self) -> list[Suggestion]:
        if self.prev_type() == "SETTING":
            if str(self.prev) == "confidence":
                return notes.examples("PERCENT")
            if str(self.prev) == "budget":
                return notes.examples("DURATION")
            return []
        if "PERCENT" in self.terminals:
            return notes.examples("PERCENT")
        return []


def list_paths(base_dir: Path, typed: str, suffixes: tuple) -> list[Suggestion]:
    """Quoted paths under base_dir that continue `typed` (the text after the opening quote)."""
    opened = typed[:1] in ("\"", "'")
    quote = typed[:1] if opened else '"'
    inner = typed[1:] if opened else typed
    folder_part, _, stem = inner.rpartition("/")
    folder = Path(os.path.expanduser(folder_part + "/" if folder_part else "") or ".")
    if not folder.is_absolute():
        folder = base_dir / folder
    try:
        entries = sorted(os.scandir(folder), key=lambda e: e.name.lower())
    except OSError:
        return []
    out = []
    lead = folder_part + "/" if folder_part else ""
    for e in entries[:MAX_FILES * 5]:
        if e.name.startswith(".") and not stem.startswith("."):
            continue
        try:
            is_dir = e.is_dir()
        except OSError:
            continue
        if is_dir:
            out.append((f"{quote}{lead}{e.name}/", "folder"))
        elif e.name.lower().endswith(suffixes):
            out.append((f"{quote}{lead}{e.name}{quote}", "file"))
        if len(out) >= MAX_FILES:
            break
    return out


def quote_name(name: str) -> str:
    # the contextual lexer reads a keyword as a name where a name is due: no quotes needed
    if NAME_RE.fullmatch(name):
        return name
    return f"`{name}`"


def _quote_text(text: str) -> str:
    return f'"{text}"' if '"' not in text else f"'{text}'"


def _name_text(tok) -> str:
    s = str(tok)
    return s[1:-1] if tok.type == "QUOTED_NAME" else s




class ShellCompleter(Completer):
    """prompt_toolkit's side: the session's catalog, `suggest`, and the word to replace."""

    def __init__(self, session):
        self.session = session

    def get_completions(self, document, complete_event):
        text = document.text_before_cursor
        try:
            items = suggest(text, self.session.catalog, self.session.base_dir,
                            document.text_after_cursor)
        except Exception:  # noqa: BLE001 - a completer must never end the shell
            return
        word = scan(text).word
        after = document.text_after_cursor[:1]
        for value, desc in items:
            # a finished word gets its space, so that the next Tab offers what follows
            done = not value.endswith("/") and after in ("", "\n")
            yield Completion(value + (" " if done else ""), start_position=-len(word),
                             display=value, display_meta=desc)
