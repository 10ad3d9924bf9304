"""Source text -> typed statements.

`parse_script` splits a file into statements (line ends outside brackets, or ';'), parses each
one with the lark grammar and turns the tree into syntax nodes. lark's exceptions are
translated (syntax/messages.py) into `QuerySyntaxError` with a span and a message in the user's
words.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional

from lark import Token, Transformer, v_args
from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedToken, VisitError

from ..errors import PermqError, QuerySyntaxError, Span
from . import nodes as n
from .grammar import RunTogether, parser
from .messages import run_together, translate


@dataclass(frozen=True)
class SourceStatement:
    """One statement of a script: its text and position, and the node or the error."""

    text: str
    line: int
    column: int
    node: Optional[object] = None
    error: Optional[PermqError] = None


# ---------------------------------------------------------------- splitting

def split_statements(source: str) -> list[tuple[str, int, int, int]]:
    """Cut a script into (text, line, column, offset) chunks, one statement each.

    A statement ends at a line end outside brackets and quotes, unless the line ends with a
    backslash, or at ';'. Comments run from '#' to the end of the line.
    """
    chunks = []
    depth = 0
    quote = None
    start = 0
    line, col = 1, 1
    start_line, start_col = 1, 1
    i = 0
    in_comment = False

    def flush(end: int):
        text = source[start:end]
        if _has_content(text):
            chunks.append((text, start_line, start_col, start))

    while i < len(source):
        ch = source[i]
        if in_comment:
            if ch == "\n":
                in_comment = False
                continue  # handle the newline below
        elif quote:
            if ch == quote or ch == "\n":
                quote = None if ch == quote else None
        elif ch == "#":
            in_comment = True
        elif ch in "\"'`":
            quote = ch
        elif ch == "[":
            depth += 1
        elif ch == "]":
            depth = max(0, depth - 1)
        if not in_comment and ch in "\n;" and depth == 0 and quote is None:
            continuation = ch == "\n" and source[start:i].rstrip(" \t").endswith("\\")
            if not continuation:
                flush(i)
                start = i + 1
                start_line, start_col = (line + 1, 1) if ch == "\n" else (line, col + 1)
        if ch == "\n":
            line, col = line + 1, 1
            if depth and quote is None:
                pass
        else:
            col += 1
        i += 1
    flush(len(source))
    return chunks


def _has_content(text: str) -> bool:
    for raw in text.splitlines() or [text]:
        stripped = raw.split("#", 1)[0].strip().strip("\\").strip()
        if stripped:
            return True
    return False


# ---------------------------------------------------------------- parsing

def parse_script(source: str) -> list[SourceStatement]:
    out = []
    for text, line, col, offset in split_statements(source):
        out.append(_parse_chunk(text, line, col, offset))
    return out


def parse_statement(text: str):
    """Parse one statement; raise QuerySyntaxError on a mistake."""
    stmts = parse_script(text)
    if not stmts:
        raise QuerySyntaxError("the statement is empty", Span(1, 1, 1, 1, 0, 0))
    first = stmts[0]
    if first.error:
        raise first.error
    if len(stmts) > 1:
        extra = stmts[1]
        raise QuerySyntaxError("expected one statement, found more",
                               Span(extra.line, extra.column, extra.line, extra.column + 1))
    return first.node


def _parse_chunk(text: str, line: int, col: int, offset: int) -> SourceStatement:
    clean = text.replace("\\\n", " \n")   # keep the line break: positions stay true
    # Pad so that lark's positions are positions in the whole script.
    pad = "\n" * (line - 1) + " " * (col - 1)
    padded = pad + clean
    shown = text.strip()
    col += len(text) - len(text.lstrip(" \t"))
    try:
        tree = parser().parse(padded)
        node = _ToNodes(offset - len(pad)).transform(tree)
        return SourceStatement(shown, line, col, node=node)
    except RunTogether as exc:
        err = run_together(exc)
        err.span = err.span.shifted(0, offset - len(pad))
        return SourceStatement(shown, line, col, error=err)
    except (UnexpectedToken, UnexpectedCharacters, UnexpectedEOF) as exc:
        err = translate(exc, padded)
        if err.span:
            err.span = err.span.shifted(0, offset - len(pad))
        return SourceStatement(shown, line, col, error=err)
    except VisitError as exc:
        inner = exc.orig_exc
        if isinstance(inner, PermqError):
            return SourceStatement(shown, line, col, error=inner)
        raise


# ---------------------------------------------------------------- tree -> nodes

_DELTA = [0]  # offset correction for the statement being transformed (padding removed)


def _span(meta) -> Span:
    d = _DELTA[0]
    return Span(meta.line, meta.column, meta.end_line, meta.end_column, meta.start_pos + d,
                meta.end_pos + d)


def _tspan(tok: Token) -> Span:
    d = _DELTA[0]
    return Span(tok.line, tok.column, tok.end_line, tok.end_column, tok.start_pos + d,
                tok.end_pos + d)


@dataclass(frozen=True)
class _Lit:
    span: Span
    value: object


@v_args(meta=True)
class _ToNodes(Transformer):
    def __init__(self, delta: int = 0):
        super().__init__()
        _DELTA[0] = delta
    # terminals ---------------------------------------------------------------
    def __default_token__(self, tok):
        return _Lit(_tspan(tok), str(tok))

    def NAME(self, tok):
        return n.Name(_tspan(tok), str(tok))

    def QUOTED_NAME(self, tok):
        return n.Name(_tspan(tok), str(tok)[1:-1])

    def STRING(self, tok):
        return _Lit(_tspan(tok), str(tok)[1:-1])

    def SIGNED_NUMBER(self, tok):
        return _Lit(_tspan(tok), float(tok))

    def INT(self, tok):
        return _Lit(_tspan(tok), int(tok))

    def DECIMAL(self, tok):
        return _Lit(_tspan(tok), float(tok))

    def PERCENT(self, tok):
        return _Lit(_tspan(tok), n.Percent(float(str(tok)[:-1])))

    # statements --------------------------------------------------------------
    def start(self, meta, children):
        return children[0]

    def load(self, meta, ch):
        alias = next((c for c in ch[1:] if isinstance(c, n.Name)), None)
        options = tuple(c for c in ch[1:] if isinstance(c, n.Option))
        return n.Load(_span(meta), ch[0].value, alias, options)

    def delimiter(self, meta, ch):
        return self._opt(meta, "delimiter", (ch[0].value, ch[0].span))

    def decimal(self, meta, ch):
        return self._opt(meta, "decimal", (ch[0].value, ch[0].span))

    def sheet(self, meta, ch):
        return self._opt(meta, "sheet", (ch[0].value, ch[0].span))

    def use(self, meta, ch):
        return n.Use(_span(meta), ch[0])

    def explain(self, meta, ch):
        return n.Explain(_span(meta), ch[0])

    def robustness(self, meta, ch):
        return n.Robustness(_span(meta), ch[0])

    def power(self, meta, ch):
        return n.Power(_span(meta), ch[0])

    def _layout(self, meta, ch, shape):
        sizes = tuple(int(c.value) for c in ch if not isinstance(c, n.Option))
        options = tuple(c for c in ch if isinstance(c, n.Option))
        return n.Layout(_span(meta), shape, sizes, options)

    def layout_groups(self, meta, ch):
        return self._layout(meta, ch, "groups")

    def layout_pairs(self, meta, ch):
        return self._layout(meta, ch, "pairs")

    def layout_sample(self, meta, ch):
        return self._layout(meta, ch, "sample")

    def _count_layout(self, meta, ch, shape):
        values = tuple(float(c.value) for c in ch if not isinstance(c, n.Option))
        options = tuple(c for c in ch if isinstance(c, n.Option))
        return n.Layout(_span(meta), shape, (), options, values)

    def layout_proportions(self, meta, ch):
        return self._count_layout(meta, ch, "proportions")

    def layout_proportion(self, meta, ch):
        return self._count_layout(meta, ch, "proportion")

    def set_stmt(self, meta, ch):
        value = ch[1]
        v = value.value
        return n.SetStatement(_span(meta), ch[0].value, v, value.span)

    def show(self, meta, ch):
        return n.Show(_span(meta), ch[0].value)

    def describe(self, meta, ch):
        return n.Describe(_span(meta), ch[0])

    def help(self, meta, ch):
        return n.Help(_span(meta), ch[0] if ch else None)

    def topic(self, meta, ch):
        return ch[0].value

    def save(self, meta, ch):
        return n.Save(_span(meta), ch[0].value)

    def save_report(self, meta, ch):
        return n.Save(_span(meta), ch[0].value, "report")

    def copy(self, meta, ch):
        return n.Copy(_span(meta))

    def quit(self, meta, ch):
        return n.Quit(_span(meta))

    # compare -----------------------------------------------------------------
    def compare(self, meta, ch):
        return n.Compare(_span(meta), ch[0], tuple(ch[1:]))

    def grouped(self, meta, ch):
        return n.Grouped(_span(meta), ch[0], ch[1])

    def crossed(self, meta, ch):
        return n.Crossed(_span(meta), ch[0], ch[1], ch[2])

    def response_list(self, meta, ch):
        return n.Responses(_span(meta), tuple(ch))

    def every_numeric(self, meta, ch):
        return n.Responses(_span(meta), (), True, tuple(ch))

    def versus(self, meta, ch):
        return n.Versus(_span(meta), tuple(ch))

    def column_operand(self, meta, ch):
        return n.ColumnOperand(_span(meta), ch[0])

    def value_operand(self, meta, ch):
        return n.ValueOperand(_span(meta), ch[0].value)

    def list_operand(self, meta, ch):
        lst = ch[0]
        return n.ListOperand(lst.span, lst.value)

    def number_list(self, meta, ch):
        return _Lit(_span(meta), tuple(c.value for c in ch))

    # relate, count -----------------------------------------------------------
    def relate(self, meta, ch):
        return n.Relate(_span(meta), ch[0], ch[1], tuple(ch[2:]))

    def count(self, meta, ch):
        return n.Count(_span(meta), ch[0], tuple(ch[1:]))

    def count_by(self, meta, ch):
        return n.CountBy(_span(meta), ch[0], ch[1])

    def count_versus(self, meta, ch):
        return n.CountVersus(_span(meta), ch[0], ch[1], tuple(ch[2:]))

    def count_inline(self, meta, ch):
        return n.CountInline(_span(meta), ch[0].value)

    def table_literal(self, meta, ch):
        return _Lit(_span(meta), tuple(c.value for c in ch))

    def count_proportion(self, meta, ch):
        value = float(ch[2].value) if len(ch) > 2 else None
        return n.CountProportion(_span(meta), ch[0].value, ch[1].value, value)

    def count_two_proportions(self, meta, ch):
        return n.CountTwoProportions(_span(meta), (ch[0].value, ch[1].value),
                                     (ch[2].value, ch[3].value))

    def count_rate(self, meta, ch):
        ch = [c for c in ch if not isinstance(c.value, str)]      # the word 'events'
        reference = float(ch[2].value) if len(ch) > 2 else None
        return n.CountRates(_span(meta), (ch[0].value,), (float(ch[1].value),), reference)

    def count_two_rates(self, meta, ch):
        ch = [c for c in ch if not isinstance(c.value, str)]
        return n.CountRates(_span(meta), (ch[0].value, ch[2].value),
                            (float(ch[1].value), float(ch[3].value)))

    # options -----------------------------------------------------------------
    def _opt(self, meta, key, value=True):
        return n.Option(_span(meta), key, value)

    def using(self, meta, ch):
        return self._opt(meta, "using", ch[0].value)

    def alternative(self, meta, ch):
        return self._opt(meta, "alternative", ch[0].value)

    def confidence(self, meta, ch):
        return self._opt(meta, "confidence", ch[0].value)

    def exact(self, meta, ch):
        return self._opt(meta, "exact")

    def sampled(self, meta, ch):
        return self._opt(meta, "sampled", ch[0].value)

    def seed(self, meta, ch):
        return self._opt(meta, "seed", ch[0].value)

    def seed_fresh(self, meta, ch):
        return self._opt(meta, "seed", "fresh")

    def levels(self, meta, ch):
        return self._opt(meta, "levels", tuple((c.value, c.span) for c in ch))

    def row_labels(self, meta, ch):
        return self._opt(meta, "rows", tuple((c.value, c.span) for c in ch))

    def column_labels(self, meta, ch):
        return self._opt(meta, "columns", tuple((c.value, c.span) for c in ch))

    def within(self, meta, ch):
        return self._opt(meta, "within", ch[0])

    def event_column(self, meta, ch):
        # (the event column, the value that marks an event or None)
        name = next(c for c in ch if isinstance(c, n.Name))
        marks = [c for c in ch if isinstance(c, _Lit) and c.span.start > name.span.start]
        return self._opt(meta, "event", (name, (marks[0].value, marks[0].span) if marks else None))
    def units(self, meta, ch):
        return self._opt(meta, "units", ch[0])

    def ordered(self, meta, ch):
        return self._opt(meta, "ordered", tuple((c.value, c.span) for c in ch))

    def scores(self, meta, ch):
        return self._opt(meta, "scores", tuple((float(c.value), c.span) for c in ch))

    def paired(self, meta, ch):
        return self._opt(meta, "paired")

    def in_table(self, meta, ch):
        return self._opt(meta, "in", ch[0])

    def adjusting(self, meta, ch):
        return self._opt(meta, "adjusting", tuple(ch))

    def datasets(self, meta, ch):
        return self._opt(meta, "datasets", ch[0].value)

    def shift(self, meta, ch):
        # (size, in standard deviations?)
        return self._opt(meta, "shift", (ch[0].value, len(ch) > 1))

    def significance(self, meta, ch):
        return self._opt(meta, "significance", ch[0].value)

    def picture(self, meta, ch):
        return self._opt(meta, "picture", ch[0].value)

    def adjust(self, meta, ch):
        # (method, step) with step "step-down", "single-step" or None
        return self._opt(meta, "adjust", (ch[0].value, ch[1].value if len(ch) > 1 else None))

    def pairwise(self, meta, ch):
        return self._opt(meta, "pairwise")

    def for_each(self, meta, ch):
        return self._opt(meta, "for_each", ch[0])

    def top(self, meta, ch):
        return self._opt(meta, "top", ch[0].value)

    def below(self, meta, ch):
        return self._opt(meta, "below", ch[0].value)

    def sizes(self, meta, ch):
        return self._opt(meta, "sizes", tuple(int(c.value) for c in ch))

    def law(self, meta, ch):
        return self._opt(meta, "law", ch[0].value)

    def target(self, meta, ch):
        return self._opt(meta, "target", ch[0].value)

    def margin(self, meta, ch):
        return self._opt(meta, "margin", ch[0].value)
    def against(self, meta, ch):
        # (level, its span): the control level the other levels are compared with
        return self._opt(meta, "against", (ch[0].value, ch[0].span))


def one_line(statement: str) -> str:
    """A statement as one line (for headings and saved sessions): backslash-continued lines
    joined, runs of spaces closed up."""
    return " ".join(statement.replace("\\\n", " ").split())
