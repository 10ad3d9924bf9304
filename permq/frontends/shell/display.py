"""How the shell prints what a statement gave: result blocks, notes, and errors.

Results use the renderers (the text renderer's aligned block, or the session's format).
An error on a one-line input puts the caret right under the typed line, which is still on
the screen above; otherwise the renderer's block repeats the line with the caret.
"""
from __future__ import annotations

from ...render import render
from ...render.text import RED, RESET
from ...result import Failure, Result

YELLOW = "\x1b[33m"


def output_text(out, fmt: str = "text", color: bool = False) -> str:
    """Results in the session's format; notes and errors always as text."""
    if fmt == "text" or not isinstance(out, Result):
        return render([out], "text", color=color)
    return render([out], fmt)


def caret_under_prompt(f: Failure, typed: str, prompt_width: int, color: bool = False):
    """The error drawn under the typed line, or None if it cannot point there."""
    if "\n" in typed.strip() or f.line not in (None, 1) or not f.column:
        return None
    lines = (f.caret or "").splitlines()
    if len(lines) < 2 or "^" not in lines[1]:
        return None
    width = lines[1].count("^")
    kind = f"{RED}{f.kind}{RESET}" if color else f.kind
    out = [" " * (prompt_width + f.column - 1) + "^" * width, f"{kind}: {f.message}"]
    if f.hint:
        out.append(f"  hint: {f.hint}")
    return "\n".join(out) + "\n"


def cancelled_text(f: Failure, color: bool = False) -> str:
    text = f"{f.message}; the session is as it was"
    return (f"{YELLOW}{text}{RESET}" if color else text) + "\n\n"


def copied_text(sentence: str, where: str) -> str:
    """The sentence alone on its lines, uncoloured, ready to select; then where it was put."""
    tail = f"(copied to {where})" if where else "(select it above to copy it)"
    return f"{sentence}\n{tail}\n\n"
