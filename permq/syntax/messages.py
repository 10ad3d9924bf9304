"""lark's exceptions in the user's words: what was found, what was expected (named as words and
kinds of value, never as terminal names), the options this statement can take, and the nearest
word as a hint ("did you mean 'ranks'?")."""
from __future__ import annotations

import difflib
import re
from typing import Optional

from lark.exceptions import UnexpectedCharacters, UnexpectedToken

from ..errors import QuerySyntaxError, Span
from .grammar import RunTogether, alternatives_of, keyword_of


_DESCRIPTIONS = {
    "NAME": "a name",
    "QUOTED_NAME": "a name",
    "WORD": "a word",
    "STRING": 'a quoted text like "A"',
    "SIGNED_NUMBER": "a number",
    "INT": "a whole number",
    "PERCENT": "a percentage like 95%",
    "DURATION": "a duration like 5s",
    "LSQB": "'['",
    "RSQB": "']'",
    "COMMA": "','",
    "LESSTHAN": "'<'",
    "$END": "the end of the statement",
}


def describe_terminal(name: str) -> str:
    if name in _DESCRIPTIONS:
        return _DESCRIPTIONS[name]
    words = alternatives_of(name) if name.isupper() and not name.startswith("__") else []
    if len(words) > 1:
        return f"{_kind_word(name)} ({', '.join(sorted(words))})"
    kw = keyword_of(name)
    if kw:
        return f"'{kw}'"
    return name.lower()


def _kind_word(name: str) -> str:
    return {"FAMILY": "a test family", "ALTERNATIVE": "an alternative",
            "SETTING": "a setting", "SHOWABLE": "what to show"}.get(name, name.lower())


def expected_words(expected) -> list[str]:
    names = sorted(set(expected))
    described = []
    for name in names:
        text = describe_terminal(name)
        if text not in described:
            described.append(text)
    # keywords first, then kinds of value
    described.sort(key=lambda s: (not s.startswith("'"), s))
    return described


def _candidate_words(expected) -> list[str]:
    words = []
    for name in expected:
        kw = keyword_of(name)
        if kw:
            words.append(kw)
        elif name.isupper() and not name.startswith("__"):
            words.extend(alternatives_of(name))
    return words


# Options the grammar accepts after every analysis but only some statements take (the binder
# refuses them elsewhere): left out of "expected ..." lists where they cannot apply.
_OPTIONS_OF = {"datasets": ("robustness", "power"), "shift": ("robustness", "power"),
               "significance": ("robustness", "power"), "n": ("power",), "law": ("power",), "margin": ("compare",), "adjusting": ("relate", "compare"),
               "adjust": ("compare",), "pairwise": ("compare",), "for": ("compare", "power"),
               "top": ("compare",), "below": ("compare",), "levels": ("compare", "count"),
               "rows": ("count",), "columns": ("count",),
               "within": ("compare", "count"), "ordered": ("compare", "count"),
               "scores": ("compare", "count"),
               "paired": ("compare", "count"), "against": ("compare",)}


def _statement_words(text: str) -> set:
    words = text.split()[:2]
    if words and words[0] == "power" and words[1:] and words[1] in ("groups", "pairs", "sample"):
        return {"power", "compare"}
    return set(words) if words and words[0] in ("robustness", "explain", "power") else set(words[:1])


def fitting(expected, text: str) -> set:
    """The expected terminals less the options this statement cannot take (only at an
    option's place, where 'using' is among the expected words)."""
    expected = set(expected)
    if not any(keyword_of(name) == "using" for name in expected):
        return expected
    heads = _statement_words(text)
    return {name for name in expected
            if not heads.isdisjoint(_OPTIONS_OF.get(keyword_of(name) or "", heads))}


NUMPY_HINT = ("numpy numbers print as np.float64(...): write plain numbers (float(v) for each), "
              "or call permq.compare(a, b) with the arrays")


def translate(exc, text: str) -> QuerySyntaxError:
    err = _translate(exc, text)
    if "np." in text and re.search(r"\bnp\.(float|int|uint)\d*\(", text):
        err.hint = NUMPY_HINT
    return err


def _translate(exc, text: str) -> QuerySyntaxError:
    if isinstance(exc, UnexpectedToken):
        tok = exc.token
        expected = fitting(exc.accepts or exc.expected or set(), text)
        if tok.type == "$END":
            span = _end_span(text)
            return QuerySyntaxError(
                "the statement ends too early; expected " + _join(expected_words(expected)), span)
        span = Span(tok.line, tok.column, tok.end_line or tok.line,
                    tok.end_column or tok.column + len(str(tok)), tok.start_pos or 0,
                    tok.end_pos or 0)
        hint = _suggest(str(tok), _candidate_words(expected))
        return QuerySyntaxError(
            f"unexpected '{tok}'; expected " + _join(expected_words(expected)), span, hint)
    if isinstance(exc, UnexpectedCharacters):
        ch = text[exc.pos_in_stream] if exc.pos_in_stream < len(text) else "?"
        span = Span(exc.line, exc.column, exc.line, exc.column + 1, exc.pos_in_stream,
                    exc.pos_in_stream + 1)
        allowed_names = fitting(exc.allowed or [], text)
        allowed = expected_words(allowed_names)
        word = _word_at(text, exc.pos_in_stream)
        hint = _suggest(word, _candidate_words(allowed_names)) if word else None
        if ch == '"' or ch == "'":
            msg = "a quoted text is not closed on this line"
        else:
            msg = f"unexpected character '{ch}'"
        if allowed:
            msg += "; expected " + _join(allowed)
        return QuerySyntaxError(msg, span, hint)
    span = _end_span(text)
    return QuerySyntaxError("the statement ends too early", span)


def run_together(exc: RunTogether) -> QuerySyntaxError:
    a, b = exc.first, exc.second
    span = Span(a.line, a.column, b.end_line or b.line, b.end_column or b.column + len(str(b)),
                a.start_pos or 0, b.end_pos or 0)
    return QuerySyntaxError(f"unexpected '{a}{b}': two words run together",
                            span, hint=f"did you mean '{a} {b}'?")


def _word_at(text: str, pos: int) -> str:
    end = pos
    while end < len(text) and (text[end].isalnum() or text[end] in "-_"):
        end += 1
    return text[pos:end]


def _end_span(text: str) -> Span:
    body = text.rstrip()
    line = body.count("\n") + 1
    col = len(body) - (body.rfind("\n") + 1) + 1
    return Span(line, col, line, col + 1, len(body), len(body) + 1)


def _join(words: list[str]) -> str:
    if len(words) <= 1:
        return "".join(words) or "something else"
    if len(words) > 8:
        words = words[:8] + ["..."]
    return ", ".join(words[:-1]) + " or " + words[-1]


def _suggest(word: str, candidates: list[str]) -> Optional[str]:
    if not word or not candidates:
        return None
    close = difflib.get_close_matches(word.lower(), candidates, n=1, cutoff=0.6)
    return f"did you mean '{close[0]}'?" if close else None
