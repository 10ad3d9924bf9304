"""Where the shell keeps its history of typed statements.

PERMQ_HISTORY names the file outright (tests use it). Otherwise the platform's folder for
per-user state: $XDG_STATE_HOME/permq/history or ~/.local/state/permq/history on Linux and
other Unix systems, ~/Library/Application Support/permq/history on macOS,
%LOCALAPPDATA%\\permq\\history on Windows.
"""
from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import Mapping, Optional


def history_path(environ: Optional[Mapping[str, str]] = None, platform: Optional[str] = None,
                 home: Optional[Path] = None) -> Path:
    env = os.environ if environ is None else environ
    plat = sys.platform if platform is None else platform
    home = Path.home() if home is None else Path(home)
    if env.get("PERMQ_HISTORY"):
        return Path(env["PERMQ_HISTORY"]).expanduser()
    if plat.startswith("win"):
        base = Path(env["LOCALAPPDATA"]) if env.get("LOCALAPPDATA") else home / "AppData" / "Local"
    elif plat == "darwin":
        base = home / "Library" / "Application Support"
    else:
        state = env.get("XDG_STATE_HOME", "")
        base = Path(state) if state and Path(state).is_absolute() else home / ".local" / "state"
    return base / "permq" / "history"


def open_history(path: Optional[Path] = None):
    """A prompt_toolkit history on disk; in memory (with the reason) if the folder is not writable."""
    from prompt_toolkit.history import FileHistory, InMemoryHistory

    path = history_path() if path is None else Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        path.touch(exist_ok=True)
    except OSError as exc:
        return InMemoryHistory(), f"history is not kept: cannot write {path} ({exc.strerror})"
    return FileHistory(str(path)), None
