"""The read-run-print loop over one Session.

`Shell.handle(text)` runs what was typed (several statements, or one spread over lines) and
prints each output; `Shell.loop()` reads with prompt_toolkit until Ctrl-D or `quit`.
Given a StopFlag (the session's should_stop), statements run in a worker thread and Ctrl-C
stops them (see running.py); the session reports a "cancelled" failure and stays as it was.
"""
from __future__ import annotations

import sys
from pathlib import Path
from typing import Callable, Optional

from ...data.tables import READERS
from ...result import Failure, Note
from ...syntax.parser import parse_script
from . import display
from .running import StopFlag, run_stoppable
from .scan import needs_more, one_line

PROMPT = "permq> "
CONTINUATION = "  ...> "
# files named on the command line: tables by extension (a .txt is taken for a query file)
TABLE_SUFFIXES = tuple(ext for ext in READERS if ext != ".txt")


class Shell:
    def __init__(self, session, write: Optional[Callable[[str], None]] = None,
                 color: bool = False, progress=None, stop: Optional[StopFlag] = None):
        self.session = session
        self.stop = stop            # the session's should_stop; None: run in this thread
        self.write = write or _stdout_write
        self.color = color
        self.progress = progress    # a ProgressLine (start/clear), or None
        self.clipboard = None       # the prompt's clipboard (set by loop); `copy` fills it

    # -- running what was typed --------------------------------------------------------------
    def handle(self, typed: str) -> bool:
        """Run the typed text; False once the user asked to leave."""
        first = True
        for st in parse_script(one_line(typed)):
            out = self._run(st)
            if out is not None:
                self.show(out, typed, first)
                first = False
            if self.session.quit_requested:
                return False
            if isinstance(out, Failure) and out.kind == "cancelled":
                break
        return True

    def _run(self, st):
        if self.progress is not None:
            self.progress.start()
        try:
            if self.stop is None:
                return self.session.run_statement(st)
            return run_stoppable(lambda: self.session.run_statement(st), self.stop,
                                 self._stopping)
        finally:
            if self.progress is not None:
                self.progress.clear()

    def _stopping(self, presses: int) -> None:
        if self.progress is not None:
            self.progress.clear()
        word = "stopping" if presses == 1 else "interrupting"
        self.write(f"\r{word} the running statement ...\n")

    def show(self, out, typed: str = "", first: bool = False) -> None:
        if isinstance(out, Failure):
            if out.kind == "cancelled":
                self.write(display.cancelled_text(out, self.color))
                return
            under = display.caret_under_prompt(out, typed, len(PROMPT), self.color) if first else None
            self.write((under or display.output_text(out, color=self.color)) + "\n")
            return
        if isinstance(out, Note) and out.data.get("kind") == "copy":
            self.write(display.copied_text(out.data["sentence"], self.copy(out.data["sentence"])))
            return
        self.write(display.output_text(out, self.session.defaults.format, self.color) + "\n")

    def copy(self, text: str) -> str:
        """Put text on the prompt's clipboard (Ctrl-Y pastes it) and, where the pyperclip
        package is installed, on the system clipboard; say where it went."""
        places = []
        if self.clipboard is not None:
            from prompt_toolkit.clipboard import ClipboardData

            self.clipboard.set_data(ClipboardData(text))
            places.append("the shell's clipboard (Ctrl-Y pastes it at the prompt)")
        try:
            import pyperclip

            pyperclip.copy(text)
            places.append("the system clipboard")
        except Exception:  # noqa: BLE001 - no pyperclip, or no clipboard on this machine
            pass
        return " and ".join(places)

    # -- files named on the command line -----------------------------------------------------
    def open_file(self, name: str) -> None:
        path = Path(name).expanduser()
        if path.suffix.lower() in TABLE_SUFFIXES:
            q = "'" if '"' in name else '"'
            self.handle(f"load {q}{name}{q}")
            return
        try:
            source = path.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as exc:
            self.write(f"cannot read query file '{name}': {getattr(exc, 'strerror', exc)}\n\n")
            return
        self.write(f"running {name}\n\n")
        before = self.session.base_dir
        self.session.base_dir = path.resolve().parent
        try:
            self.handle(source)
        finally:
            self.session.base_dir = before

    # -- the loop ----------------------------------------------------------------------------
    def loop(self, prompt_session) -> int:
        self.clipboard = getattr(prompt_session, "clipboard", None)
        while not self.session.quit_requested:
            try:
                typed = prompt_session.prompt()
            except KeyboardInterrupt:
                continue            # Ctrl-C at the prompt: the line is dropped
            except EOFError:
                break               # Ctrl-D
            if not typed.strip():
                continue
            try:
                if not self.handle(typed):
                    break
            except KeyboardInterrupt:
                self.write("cancelled\n\n")
        return 0


def unfinished(get_text: Callable[[], str]):
    """A prompt_toolkit filter: Enter starts a new line while the input is unfinished."""
    from prompt_toolkit.filters import Condition

    return Condition(lambda: needs_more(get_text()))


def _stdout_write(text: str) -> None:
    sys.stdout.write(text)
    sys.stdout.flush()
