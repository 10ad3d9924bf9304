"""The grammar is data: `grammar/permq.lark`, shipped inside the wheel as `permq/_grammar`.

Loaded once, behind a cache. In a source checkout the top-level `grammar/` folder is used;
in an installed wheel, the copy inside the package.
"""
from __future__ import annotations

from functools import lru_cache
from importlib import resources
from pathlib import Path

from lark import Lark

GRAMMAR_FILE = "permq.lark"


def grammar_text() -> str:
    packaged = resources.files("permq").joinpath("_grammar").joinpath(GRAMMAR_FILE)
    if packaged.is_file():
        return packaged.read_text(encoding="utf-8")
    checkout = Path(__file__).resolve().parents[2] / "grammar" / GRAMMAR_FILE
    return checkout.read_text(encoding="utf-8")


def build_parser(strict: bool = False) -> Lark:
    return Lark(grammar_text(), parser="lalr", propagate_positions=True,
                maybe_placeholders=False, strict=strict)


@lru_cache(maxsize=1)
def parser() -> Lark:
    return build_parser()


def keyword_of(terminal_name: str) -> str | None:
    """The literal text of a keyword terminal (e.g. 'BY' -> 'by'), or None for patterns."""
    try:
        term = parser().get_terminal(terminal_name)
    except KeyError:
        return None
    if term.pattern.type == "str":
        return term.pattern.value
    return None


def alternatives_of(terminal_name: str) -> list[str]:
    """The words a keyword-set terminal (FAMILY, ALTERNATIVE, SETTING ...) accepts."""
    import re

    try:
        term = parser().get_terminal(terminal_name)
    except KeyError:   # '$END' and other names that are not terminals of the grammar
        return []
    if term.pattern.type == "str":
        return [term.pattern.value]
    body = term.pattern.value
    if body.startswith("(?:") and body.endswith(")"):
        body = body[3:-1]
    words = [w for w in body.split("|")]
    if all(re.fullmatch(r"[A-Za-z0-9\\\-]+", w) for w in words):
        return [w.replace("\\", "") for w in words]
    return []
