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


FAMILY_PLACEHOLDER = '"<families from the registry>"'


def grammar_file_text() -> str:
    """The grammar as shipped (with the placeholder for the family words)."""
    packaged = Path(__file__).resolve().parents[1] / "_grammar" / GRAMMAR_FILE   # in a wheel
    if not packaged.is_file() and not Path(__file__).is_file():   # a zipped install
        packaged = resources.files("permq").joinpath("_grammar").joinpath(GRAMMAR_FILE)
    if packaged.is_file():
        return packaged.read_text(encoding="utf-8")
    checkout = Path(__file__).resolve().parents[2] / "grammar" / GRAMMAR_FILE
    return checkout.read_text(encoding="utf-8")


def grammar_text() -> str:
    """The grammar the parser is built from: the file, with the registry's family words."""
    from ..families.registry import keywords

    text = grammar_file_text()
    if FAMILY_PLACEHOLDER not in text:
        raise RuntimeError("the grammar has lost its placeholder for the family words")
    return text.replace(FAMILY_PLACEHOLDER, " | ".join(f'"{w}"' for w in keywords()))


class RunTogether(Exception):
    """Two tokens written without space between them where the eye reads one word
    ('withinblock', 'usingranks', 'sampled100seed'): the lexer would split them silently."""

    def __init__(self, first, second):
        super().__init__(f"{first}{second}")
        self.first, self.second = first, second


class WholeWords:
    """Post-lexer: a word or number may not run straight into the next word or number.

    The contextual lexer, where only keywords can follow, matches a keyword at the start of a
    longer word ('within' in 'withinblock'); this refuses that instead of reading a statement
    the user did not write."""

    always_accept = ()

    def process(self, stream):
        prev = None
        for tok in stream:
            if (prev is not None and prev.end_pos == tok.start_pos and _wordlike(str(prev)[-1])
                    and _wordlike(str(tok)[0])):
                raise RunTogether(prev, tok)
            prev = tok
            yield tok


def _wordlike(ch: str) -> bool:
    return ch.isalnum() or ch == "_"


def build_parser(strict: bool = False, cache: bool = True) -> Lark:
    """The LALR parser. Its tables are kept in lark's cache file (in the temporary folder,
    keyed by the grammar's text, the options and lark's version), which takes a start from
    about 0.3 s to a few ms; where the cache cannot be written or read, it is built afresh."""
    options = dict(parser="lalr", propagate_positions=True, maybe_placeholders=False,
                   strict=strict, postlex=WholeWords())
    if cache:
        try:
            return Lark(grammar_text(), cache=True, **options)
        except Exception:  # noqa: BLE001 - a cache problem must never stop the parser
            pass
    return Lark(grammar_text(), **options)


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
