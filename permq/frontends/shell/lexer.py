"""Highlighting: a pygments lexer built from the grammar's word sets, and the shell's colours."""
from __future__ import annotations

from functools import lru_cache

from pygments.lexer import RegexLexer, words
from pygments.token import (Comment, Keyword, Name, Number, Operator, Punctuation, String,
                            Text, Error)

from . import vocabulary as vocab

_BEFORE = r"(?<![\w.\-`])"
_AFTER = r"(?![\w.\-])"


def _words(items):
    # longest first, so that 'normal-scores' wins over a shorter word that starts it
    return words(sorted(items, key=len, reverse=True), prefix=_BEFORE, suffix=_AFTER)


@lru_cache(maxsize=1)
def lexer_class() -> type:
    """A RegexLexer class for the permq language (built once, from the grammar)."""
    tokens = {
        "root": [
            (r"#[^\n]*", Comment.Single),
            (r'"[^"\n]*"?', String),
            (r"'[^'\n]*'?", String),
            (r"`[^`\n]*`?", Name.Variable),
            (r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?%", Number),
            (r"\d+(\.\d+)?(ms|s|min)\b", Number),
            (r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?", Number),
            (_words(vocab.verbs()), Keyword),
            (_words(vocab.options()), Keyword.Pseudo),
            (_words(vocab.connectors()), Operator.Word),
            (_words(vocab.values()), Name.Constant),
            (r"[A-Za-z_][A-Za-z0-9_.\-]*", Name),
            (r"[\[\],<;]", Punctuation),
            (r"\\\n|\s+", Text),
            (r".", Error),
        ]
    }
    return type("PermqLexer", (RegexLexer,), {
        "name": "permq", "aliases": ["permq"], "filenames": ["*.pq"], "tokens": tokens,
    })


STYLE = {
    "pygments.keyword": "bold #5fafff",
    "pygments.keyword.pseudo": "#87afd7",
    "pygments.operator.word": "#af87d7",
    "pygments.name.constant": "#5fd7af",
    "pygments.name": "",
    "pygments.name.variable": "",
    "pygments.string": "#d7af5f",
    "pygments.number": "#d78787",
    "pygments.comment": "italic #808080",
    "pygments.error": "#ff5f5f underline",
    "prompt": "bold #5fafff",
    "continuation": "#808080",
    "bottom-toolbar": "noreverse bg:#262626 #bcbcbc",
    "bottom-toolbar.table": "bold #5fd7af",
    "bottom-toolbar.key": "#808080",
    "completion-menu": "bg:#303030 #d0d0d0",
    "completion-menu.completion.current": "bg:#5fafff #000000",
    "completion-menu.meta.completion": "bg:#262626 #9e9e9e",
    "completion-menu.meta.completion.current": "bg:#87afd7 #000000",
}


def style():
    from prompt_toolkit.styles import Style

    return Style.from_dict(STYLE)


def prompt_lexer():
    from prompt_toolkit.lexers import PygmentsLexer

    return PygmentsLexer(lexer_class())


def deferred_lexer():
    """prompt_lexer, built when there is text to colour or when `build()` is called (the shell
    calls it once its first prompt is on the screen): building it reads the grammar and every
    family's words, which need not hold up the prompt."""
    from prompt_toolkit.lexers import Lexer

    class Deferred(Lexer):
        def __init__(self):
            self._built = None

        def build(self, *_):
            if self._built is None:
                self._built = prompt_lexer()
            return self._built

        def lex_document(self, document):
            if self._built is None and not document.text:
                return lambda lineno: []                 # an empty line: nothing to colour
            return self.build().lex_document(document)

        def invalidation_hash(self):
            return self._built is not None

    return Deferred()
