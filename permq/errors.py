"""One error hierarchy for permq: every message the user sees comes from here.

Each error carries structured fields (message, span, hint) rather than a bare string, so that
front ends can point at the spot with a caret, and tests can check each field.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional


@dataclass(frozen=True)
class Span:
    """A stretch of the source text: 1-based line and column of its start and end, and offsets."""

    line: int
    column: int
    end_line: int
    end_column: int
    start: int = 0
    end: int = 0

    def shifted(self, line_offset: int, char_offset: int) -> "Span":
        return Span(self.line + line_offset, self.column, self.end_line + line_offset,
                    self.end_column, self.start + char_offset, self.end + char_offset)


class PermqError(Exception):
    """Base of every error permq reports to its user."""

    kind = "error"

    def __init__(self, message: str, span: Optional[Span] = None, hint: Optional[str] = None):
        super().__init__(message)
        self.message = message
        self.span = span
        self.hint = hint

    def __str__(self) -> str:
        where = f"line {self.span.line}, column {self.span.column}: " if self.span else ""
        hint = f" ({self.hint})" if self.hint else ""
        return f"{where}{self.message}{hint}"


class QuerySyntaxError(PermqError):
    kind = "syntax error"


class BindError(PermqError):
    """A name, level or value in the statement does not fit the data."""

    kind = "error"


class DataError(PermqError):
    """A file or a column cannot be used as it is."""

    kind = "data error"


class PlanError(PermqError):
    """The requested method cannot be carried out within its limits."""

    kind = "plan error"


class Cancelled(PermqError):
    """The user interrupted a running statement."""

    kind = "cancelled"


class MultipleErrors(PermqError):
    """Several name errors in one statement, reported together, sorted by position."""

    def __init__(self, errors: list[PermqError], cap: int = 5):
        errors = sorted(errors, key=lambda e: (e.span.start if e.span else 0))
        shown = errors[:cap]
        more = len(errors) - len(shown)
        text = "; ".join(str(e.message) + (f" ({e.hint})" if e.hint else "") for e in shown)
        if more:
            text += f"; ... and {more} more"
        super().__init__(text, shown[0].span if shown else None)
        self.errors = errors
