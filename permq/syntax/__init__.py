"""Text to typed statements: the grammar, the statement splitter and the syntax nodes."""
from .parser import parse_script, parse_statement, SourceStatement  # noqa: F401
