"""permq's interactive shell: completion and highlighting from the grammar, a toolbar with
the table in use and the defaults, persistent searchable history, multi-line statements.

    start_shell(files) -> exit status
"""
from __future__ import annotations

import os
import sys
from pathlib import Path

from ... import __version__
from ...pipeline import Session
from ..progress import ProgressLine
from .completion import ShellCompleter
from .history import open_history
from .lexer import deferred_lexer, style
from .repl import CONTINUATION, PROMPT, Shell, unfinished
from .running import StopFlag
from .toolbar import toolbar

BANNER = (f"permq {__version__}: exact permutation and rank tests beside their "
          "normal-theory counterparts\n"
          "Type a statement, 'help' for the language; Tab completes, Ctrl-D or 'quit' leaves.\n")


def make_prompt_session(session: Session, history, input=None, output=None):
    """The prompt_toolkit side of the shell (tests pass a pipe input and a dummy output)."""
    from prompt_toolkit import PromptSession
    from prompt_toolkit.auto_suggest import AutoSuggestFromHistory
    from prompt_toolkit.shortcuts import CompleteStyle

    holder = {}
    lexer = deferred_lexer()
    ps = PromptSession(
        message=[("class:prompt", PROMPT)],
        prompt_continuation=lambda width, line, wrap: [("class:continuation", CONTINUATION)],
        multiline=unfinished(lambda: holder["ps"].default_buffer.text),
        completer=ShellCompleter(session),
        complete_while_typing=False,
        complete_style=CompleteStyle.COLUMN,
        auto_suggest=AutoSuggestFromHistory(),
        history=history,
        lexer=lexer,
        style=style(),
        include_default_pygments_style=False,
        bottom_toolbar=lambda: toolbar(session, _columns(holder["ps"])),
        search_ignore_case=True,
        input=input,
        output=output,
    )
    holder["ps"] = ps
    ps.app.after_render += lexer.build      # the prompt is on the screen: now the highlighter
    return ps


def _columns(prompt_session) -> int:
    try:
        return prompt_session.app.output.get_size().columns
    except Exception:  # noqa: BLE001 - no size known: show everything
        return 0


def start_shell(files=(), input=None, output=None, write=None, history_file=None) -> int:
    tty = sys.stdout.isatty() and output is None
    color = tty and not os.environ.get("NO_COLOR")
    progress = ProgressLine() if sys.stderr.isatty() and output is None else None
    stop = StopFlag()
    session = Session(base_dir=Path.cwd(), on_progress=progress, should_stop=stop)
    shell = Shell(session, write=write, color=color, progress=progress, stop=stop)
    history, problem = open_history(history_file)
    shell.write(BANNER + (f"({problem})\n" if problem else "") + "\n")
    try:
        for name in files:
            shell.open_file(name)
    except KeyboardInterrupt:
        shell.write("stopped reading the files named on the command line\n\n")
    if session.quit_requested:
        return 0
    return shell.loop(make_prompt_session(session, history, input=input, output=output))
