"""The pipeline in one place: parse, bind, plan, execute; and the session that runs it.

    statement text -> syntax node -> design -> plan -> result

The shell, the file runner and the Python API are thin front ends over `Session`.
"""
from __future__ import annotations

import dataclasses
import warnings
from pathlib import Path
from typing import Callable, Iterable, Optional

import numpy as np

from .bind.binder import bind
from .bind.common import Catalog, Defaults
from .data import decimals
from .errors import Cancelled, PermqError
from .families.registry import family_for
from .engine.core.progress import Progress
from .engine.core.limits import using_memory
from .engine.montecarlo.sampling import using_workers
from .plan import seeds, smallest
from .plan import statement as statement_costs
from .result import Failure, Note
from .robustness import diagnostics
from .syntax import nodes as n
from .syntax.parser import SourceStatement, parse_script
from . import effects, statements


def seed_for(node, text: str, defaults: Defaults) -> seeds.SeedChoice:
    """The statement's Monte Carlo seed, decided here once and handed down (see plan/seeds.py)."""
    inner = node.analysis if isinstance(node, (n.Explain, n.Robustness, n.Power)) else node
    if isinstance(inner, n.Robustness):
        inner = inner.analysis
    opt = n.options_of(inner).get("seed")
    return seeds.choose(text, opt.value if opt is not None else None, defaults.seed)


def bind_seeded(node, text: str, catalog: Catalog, defaults: Defaults):
    """Bind the statement and give its settings the seed of `seed_for`."""
    choice = seed_for(node, text, defaults)
    design = bind(node, catalog, defaults)
    settings = dataclasses.replace(design.settings, seed=choice.seed)
    return dataclasses.replace(design, settings=settings), choice


def analyse(node, text: str, catalog: Catalog, defaults: Defaults, progress: Progress):
    """One analysis statement, end to end."""
    with using_memory(defaults.memory_bytes):        # engines whose peak the data decide read it
        return _analyse(node, text, catalog, defaults, progress)


def _analyse(node, text: str, catalog: Catalog, defaults: Defaults, progress: Progress):
    from . import margins

    design, choice = bind_seeded(node, text, catalog, defaults)
    margin_opt = n.options_of(node).get("margin")
    margin = None if margin_opt is None else margins.check(design, margin_opt)
    handler = family_for(design)
    the_plan = whole_plan(handler, design, node)
    result = handler.execute(design, the_plan, progress, text)
    result.seed_source = choice.source
    if hasattr(result, "extra"):          # a two-factor result keeps its own terms
        if getattr(design, "units", None) is not None:     # the randomised unit (bind/units.py)
            result.extra["units"] = design.units.to_dict()
        result.extra["estimated_seconds"] = round(the_plan.seconds, 4)   # what explain said
    if not hasattr(result, "outcome"):      # several tests at once: rows, no single outcome
        return result
    if margin is not None:
        margins.attach(design, result, margin, handler, progress)
    if result.summary_decimals is None:      # a family may set its own (proportions)
        result.summary_decimals = decimals.for_design(design)
    result.design = design            # kept for the report's pictures (not in the JSON)
    diagnostics.attach(design, result)
    effects.attach(design, result)
    smallest.attach(design, result)
    if "picture" in n.options_of(node):
        from .robustness import pictures

        pictures.attach(design, result)
    return result


def explain(node, text: str, catalog: Catalog, defaults: Defaults) -> Note:
    design, _ = bind_seeded(node, text, catalog, defaults)
    the_plan = whole_plan(family_for(design), design, node)
    line, record = smallest.plan_words(design, the_plan)
    shown = str(the_plan) + (f"\n{line}" if line else "")
    return Note(text, shown, {"plan": shown, "method": the_plan.method,
                              "algorithm": the_plan.chosen.description,
                              "estimated_seconds": the_plan.seconds,
                              "estimated_bytes": the_plan.memory,
                              "smallest_p": record})


def whole_plan(handler, design, node):
    """The family's plan with the statement's other work priced beside the test."""
    the_plan = handler.plan(design)
    if not hasattr(the_plan, "with_parts"):
        return the_plan
    picture = "picture" in n.options_of(node)
    return the_plan.with_parts(statement_costs.parts(design, the_plan.chosen, picture))


class Session:
    """Tables, defaults and the statements that ran; shared by every front end."""

    def __init__(self, tables: Optional[dict] = None, base_dir: Optional[Path] = None,
                 on_progress: Optional[Callable[[float, str], None]] = None,
                 should_stop: Optional[Callable[[], bool]] = None,
                 cluster=None, workers: Optional[int] = None):
        from .data.tables import Table

        self.catalog = Catalog()
        self.defaults = Defaults(workers=workers, cluster=cluster)
        self.base_dir = Path(base_dir) if base_dir else Path.cwd()
        self.progress = Progress(on_progress, should_stop)
        self.history: list[str] = []     # statements that ran, replayable (seeds pinned)
        self.ran: list[tuple] = []       # (statement text, output) in order, for the report
        self.files: list[dict] = []      # data files read (SHA-256, rows), for the report
        self.quit_requested = False
        for name, frame in (tables or {}).items():
            frame = as_frame(name, frame)
            self.catalog.tables[name] = Table(name, frame, "(given)")
            self.catalog.current = self.catalog.current or name
            self.files.append({"table": name, "frame": frame})   # hashed when a report is written

    def run(self, source: str) -> list:
        """Run a script; one output (Result, Note or Failure) per statement that prints."""
        outputs = []
        for st in parse_script(source):
            out = self.run_statement(st)
            if out is not None:
                outputs.append(out)
            if self.quit_requested:
                break
        return outputs

    def run_statement(self, st: SourceStatement):
        out = self._run_statement(st)
        if out is not None and not (isinstance(out, Note) and out.data.get("kind") == "copy"):
            self.ran.append((st.text, out))
        return out

    def last_result(self):
        """The latest output that has a sentence (a result, several tests, a check)."""
        for _, out in reversed(self.ran):
            if hasattr(out, "sentence") and not isinstance(out, Failure):
                return out
        return None

    def _run_statement(self, st: SourceStatement):
        if st.error is not None:
            return failure(st, st.error)
        try:
            # overflow in a textbook formula shows as "-"; library warnings stay off the screen
            with np.errstate(all="ignore"), warnings.catch_warnings(), \
                    using_workers(self.defaults.workers):
                warnings.simplefilter("ignore")
                return self._dispatch(st)
        except Cancelled as exc:
            return failure(st, exc)
        except PermqError as exc:
            return failure(st, exc)
        except KeyboardInterrupt:
            return failure(st, Cancelled("cancelled; no result kept for this statement"))
        except (MemoryError, RecursionError) as exc:
            what = "memory" if isinstance(exc, MemoryError) else "recursion depth"
            return failure(st, PermqError(f"ran out of {what}; try 'sampled N' for Monte Carlo"))
        except Exception as exc:  # noqa: BLE001 - a bug must still not end the session
            return failure(st, PermqError(f"internal error ({type(exc).__name__}: {exc}); "
                                          "please report this statement"))

    def _dispatch(self, st: SourceStatement):
        node = st.node
        if isinstance(node, (n.Compare, n.Relate, n.Count)):
            result = analyse(node, st.text, self.catalog, self.defaults, self.progress)
            result.line = st.line
            self._picture_file(node, result)
            self.history.append(statements.replayable(st.text, result))
            return result
        if isinstance(node, n.Robustness):
            from .robustness import executor as robustness

            choice = seed_for(node, st.text, self.defaults)
            check = robustness.run(node, st.text, self.catalog, self.defaults, self.progress,
                                   choice.seed)
            check.line, check.seed_source = st.line, choice.source
            self._picture_file(node.analysis, check)
            self.history.append(robustness.replayable(st.text, check))
            return check
        if isinstance(node, n.Power):
            from .power import executor as power

            choice = seed_for(node, st.text, self.defaults)
            result = power.run(node, st.text, self.catalog, self.defaults, self.progress,
                               choice.seed)
            result.line, result.seed_source = st.line, choice.source
            self._picture_file(node.analysis, result)
            self.history.append(seeds.pinned(st.text, result.seed))
            return result
        if isinstance(node, n.Explain):
            if isinstance(node.analysis, n.Robustness):
                from .robustness import executor as robustness

                note = robustness.explain(node.analysis, st.text, self.catalog, self.defaults,
                                          seed_for(node, st.text, self.defaults).seed)
            elif isinstance(node.analysis, n.Power):
                from .power.explain import explain as explain_power

                note = explain_power(node.analysis, st.text, self.catalog, self.defaults,
                                     seed_for(node, st.text, self.defaults).seed)
            else:
                note = explain(node.analysis, st.text, self.catalog, self.defaults)
            note.line = st.line
            return note
        note = statements.run_session_statement(node, st.text, self)
        if note is not None:
            note.line = st.line
        return note

    def _picture_file(self, node, output) -> None:
        """`picture "file.png"`: write the picture beside the query (a sentence says how it went)."""
        opt = n.options_of(node).get("picture")
        if opt is not None:
            from .render import figures

            output.warnings.append(figures.save(output, self.base_dir / opt.value))

    def run_many(self, sources: Iterable[str]) -> list:
        out = []
        for s in sources:
            out.extend(self.run(s))
        return out


def as_frame(name: str, value):
    """A table handed over from Python: a DataFrame, or a dict of equal-length columns."""
    import pandas as pd

    if isinstance(value, pd.DataFrame):
        return value
    if isinstance(value, dict):
        try:
            return pd.DataFrame({str(k): list(v) if not hasattr(v, "__array__") else v
                                 for k, v in value.items()})
        except (TypeError, ValueError) as exc:
            raise TypeError(f"tables['{name}']: a dict of columns needs one list or array per "
                            f"column, all of the same length ({exc})") from None
    raise TypeError(f"tables['{name}'] is a {type(value).__name__}; give a pandas DataFrame "
                    "or a dict of columns, e.g. {'mass': [12.1, 11.8], 'recipe': ['A', 'B']}")


def failure(st: SourceStatement, exc: PermqError) -> Failure:
    span = exc.span
    line = span.line if span else st.line
    col = span.column if span else st.column
    return Failure(st.text, exc.message, line, col, exc.kind, exc.hint,
                   caret=caret_lines(st, span))


def caret_lines(st: SourceStatement, span) -> str:
    """The statement's line with carets under the spot (a pure function of text and span)."""
    lines = st.text.splitlines() or [st.text]
    if span is None:
        return lines[0]
    index = span.line - st.line
    if not 0 <= index < len(lines):
        return lines[0]
    text = lines[index]
    # columns count from the start of the source line; the first line starts at st.column
    lead = (st.column - 1) if index == 0 else 0
    start = max(0, span.column - 1 - lead)
    end_col = span.end_column if span.end_line == span.line else span.column + 1
    width = max(1, min(end_col - span.column, len(text) - start))
    return text + "\n" + " " * start + "^" * width
