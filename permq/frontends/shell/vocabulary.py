"""The shell's words, all read from the grammar (one source of truth).

- verbs: the keywords a statement may start with (what the parser accepts first);
- options: the first keyword of each alternative of the grammar's `option` rule;
- connectors: the other keywords (by, vs, to, of, as, for ...);
- values: the words of keyword-set terminals (test families, alternatives, settings ...).

`accepted(prefix)` runs lark's interactive parser over a statement prefix and says which
terminals may come next; the completer and the highlighter both build on these sets.
"""
from __future__ import annotations

from functools import lru_cache
from typing import Optional

from lark.exceptions import LarkError

from ...syntax.grammar import RunTogether, alternatives_of, keyword_of, parser
from ...syntax.messages import fitting


def accepted(prefix: str) -> Optional[tuple[list, set]]:
    """(tokens of the prefix, terminal names that may follow), or None if the prefix is wrong."""
    try:
        ip = parser().parse_interactive(prefix)
        tokens = ip.exhaust_lexer()
        return tokens, fitting(ip.accepts(), prefix)
    except (LarkError, RunTogether):
        return None


def words_of(terminal: str) -> list[str]:
    """The words a terminal stands for: a keyword, the members of a keyword set, or none."""
    if terminal.startswith("$"):
        return []
    kw = keyword_of(terminal)
    if kw is not None:
        return [kw] if _is_word(kw) else []
    try:
        return [w for w in alternatives_of(terminal) if _is_word(w)]
    except KeyError:
        return []


def _is_word(text: str) -> bool:
    return bool(text) and text[0].isalpha()


@lru_cache(maxsize=1)
def verbs() -> tuple[str, ...]:
    found = accepted("")
    names = found[1] if found else set()
    return tuple(sorted(w for t in names for w in words_of(t)))


@lru_cache(maxsize=1)
def option_terminals() -> frozenset[str]:
    """The terminals that open an option (first symbol of each `option` alternative)."""
    return frozenset(rule.expansion[0].name for rule in parser().rules
                     if rule.origin.name == "option" and rule.expansion)


def is_option(terminal: str) -> bool:
    return terminal in option_terminals()


@lru_cache(maxsize=1)
def options() -> tuple[str, ...]:
    return tuple(sorted(w for t in option_terminals() for w in words_of(t)))


@lru_cache(maxsize=1)
def keyword_terminals() -> tuple[str, ...]:
    """Terminals that are one literal word (LOAD, BY, __ANON_0 for 'alternative' ...)."""
    return tuple(t.name for t in parser().terminals
                 if t.pattern.type == "str" and _is_word(t.pattern.value))


@lru_cache(maxsize=1)
def connectors() -> tuple[str, ...]:
    words = {keyword_of(t) for t in keyword_terminals()}
    return tuple(sorted(words - set(verbs()) - set(options())))


@lru_cache(maxsize=1)
def value_sets() -> dict[str, tuple[str, ...]]:
    """Keyword-set terminals and their words, e.g. FAMILY -> (means, ranks, ...)."""
    out = {}
    for t in parser().terminals:
        if t.pattern.type == "re":
            words = words_of(t.name)
            if len(words) > 1:
                out[t.name] = tuple(sorted(words))
    return out


@lru_cache(maxsize=1)
def values() -> tuple[str, ...]:
    return tuple(sorted({w for ws in value_sets().values() for w in ws}))


def all_words() -> set[str]:
    return set(verbs()) | set(options()) | set(connectors()) | set(values())
