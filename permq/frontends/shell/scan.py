"""Small pure scans of the text being typed: the statement at the cursor, the word being
typed, and whether the input goes on to another line.

A statement ends at ';' or at a line end outside brackets and quotes, unless the line ends
with a backslash (the rule of permq.syntax.parser.split_statements).
"""
from __future__ import annotations

from dataclasses import dataclass

DELIMITERS = set(" \t\r\n,[]<;")
QUOTES = "\"'`"


@dataclass(frozen=True)
class Scan:
    statement: str        # the statement the cursor is in, from its start to the cursor
    word: str             # the word being typed (with its opening quote, if any)
    in_comment: bool
    depth: int            # open '[' count
    in_quote: bool


def scan(text: str) -> Scan:
    depth, quote, quote_at, comment, start = 0, None, 0, False, 0
    for i, ch in enumerate(text):
        if comment:
            if ch == "\n":
                comment = False
            else:
                continue
        if quote:
            if ch == quote or ch == "\n":
                quote = None
            continue
        if ch == "#":
            comment = True
        elif ch in QUOTES:
            quote, quote_at = ch, i
        elif ch == "[":
            depth += 1
        elif ch == "]":
            depth = max(0, depth - 1)
        elif ch == ";" or (ch == "\n" and depth == 0 and not _continued(text, start, i)):
            start = i + 1
    statement = text[start:]
    if quote:
        word = text[quote_at:]
    else:
        j = len(text)
        while j > start and text[j - 1] not in DELIMITERS:
            j -= 1
        word = text[j:]
    return Scan(statement, word, comment, depth, quote is not None)


def _continued(text: str, start: int, newline_at: int) -> bool:
    return text[start:newline_at].rstrip(" \t").endswith("\\")


def one_line(text: str) -> str:
    """Join the lines of each statement spread over lines (trailing backslash, open '['),
    dropping comments inside it, so that results and saved files show it on one line.
    Line ends between statements stay."""
    out, depth, joining = [], 0, False
    for line in text.split("\n"):
        line = line.lstrip(" \t") if joining else line
        code, depth = _code_of(line, depth)
        stripped = code.rstrip(" \t")
        joining = stripped.endswith("\\") or depth > 0
        if stripped.endswith("\\"):
            out.append(stripped[:-1].rstrip(" \t") + " ")
        elif depth > 0:
            out.append(stripped + " ")
        else:
            out.append(line + "\n")
    return "".join(out)[:-1]


def _code_of(line: str, depth: int) -> tuple[str, int]:
    """The line without its comment, and the bracket depth after it."""
    quote = None
    for i, ch in enumerate(line):
        if quote:
            quote = None if ch == quote else quote
        elif ch in QUOTES:
            quote = ch
        elif ch == "#":
            return line[:i], depth
        elif ch == "[":
            depth += 1
        elif ch == "]":
            depth = max(0, depth - 1)
    return line, depth


def current_word(text: str) -> str:
    return scan(text).word


def needs_more(text: str) -> bool:
    """True while the input is unfinished: a trailing backslash or an open '['."""
    s = scan(text)
    if s.in_comment and s.depth == 0:
        # a comment on the last line: continued only if the code before it ends with '\'
        last = text.rsplit("\n", 1)[-1].split("#", 1)[0]
        return last.rstrip(" \t").endswith("\\")
    return s.depth > 0 or text.rstrip(" \t").endswith("\\")
