"""End to end: the real `permq` shell in a terminal (tmux), read off the screen.

A new user's path: Tab completes a column, a comparison prints its p-values, Ctrl-C stops a
long Monte Carlo run and the prompt works again, and `save` writes a file that `permq run`
replays to the same numbers. The command is `python -m permq` with this checkout on
PYTHONPATH; PERMQ_SHELL_CMD replaces it (e.g. an installed console script).
"""
from __future__ import annotations

import os
import re
import shlex
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest

pytestmark = pytest.mark.terminal

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo"
TMUX = shutil.which("tmux")


def shell_command() -> str:
    return os.environ.get("PERMQ_SHELL_CMD") or f"{shlex.quote(sys.executable)} -m permq"


class Terminal:
    """One tmux window on a private server, 120 x 40."""

    def __init__(self, workdir: Path, command: str):
        self.socket = f"permq-test-{os.getpid()}"
        self.target = "shell"
        env = {"PYTHONPATH": str(ROOT), "PERMQ_HISTORY": str(workdir / "history"),
               "NO_COLOR": "1"}
        exports = " ".join(f"{k}={shlex.quote(v)}" for k, v in env.items())
        script = (f"cd {shlex.quote(str(workdir))} && env {exports} {command}; "
                  f"echo \"[shell exited $?]\"; sleep 120")
        self.tmux("new-session", "-d", "-s", self.target, "-x", "120", "-y", "40", script)

    def tmux(self, *args) -> str:
        done = subprocess.run([TMUX, "-L", self.socket, *args], capture_output=True,
                              text=True, timeout=20)
        return done.stdout

    def type(self, text: str) -> None:
        self.tmux("send-keys", "-t", self.target, "-l", text)

    def key(self, *names: str) -> None:
        self.tmux("send-keys", "-t", self.target, *names)

    def screen(self) -> str:
        return self.tmux("capture-pane", "-p", "-J", "-S", "-", "-t", self.target)

    def wait_for(self, pattern: str, timeout: float = 20.0, times: int = 1) -> str:
        """Wait until the regex appears `times` times on the screen (scrollback included)."""
        end = time.monotonic() + timeout
        while True:
            text = self.screen()
            if len(re.findall(pattern, text, re.M)) >= times:
                return text
            if time.monotonic() > end:
                raise AssertionError(f"never saw {pattern!r}; the screen was:\n{text}")
            time.sleep(0.1)

    def close(self) -> None:
        subprocess.run([TMUX, "-L", self.socket, "kill-server"], capture_output=True)


def p_lines(text: str) -> list[str]:
    return [ln.strip() for ln in text.splitlines() if ln.strip().startswith("p (")]


@pytest.mark.skipif(TMUX is None, reason="tmux is not installed (CI installs it: apt-get install tmux)")
def test_the_shell_in_a_terminal(tmp_path):
    # the last table loaded is the one in use
    files = f"shell {shlex.quote(str(DEMO / 'seedlings.csv'))} {shlex.quote(str(DEMO / 'trays.csv'))}"
    term = Terminal(tmp_path, f"{shell_command()} {files}")
    try:
        term.wait_for(r"^permq> ", timeout=90)          # imports are slow on a busy machine

        # Tab completes a column name of the table in use
        term.type("compare ma")
        term.key("Tab")
        term.wait_for(r"^permq> compare mass\s*$")
        term.type(' by recipe levels "A", "B"')
        term.key("Enter")
        screen = term.wait_for(r"^\s*method\s+exact")
        assert re.search(r"^\s*p \(two-sided\)\s+0\.\d+\s+0\.\d+", screen, re.M), screen

        # a Monte Carlo run with no seed: the saved file must pin the one it used
        term.type('compare mass by recipe levels "A", "C" sampled 5000')
        term.key("Enter")
        term.wait_for(r"Monte Carlo: 5,000 draws, [0-9,]+ as extreme as the observed; seed \d+")

        # Ctrl-C stops a long run; the prompt works again with the session intact
        term.type('compare mass by recipe levels "A","B" sampled 200000000')
        term.key("Enter")
        term.wait_for(r"Ctrl-C cancels")
        term.key("C-c")
        term.wait_for(r"cancelled; no result kept", timeout=10)
        term.type("show tables")
        term.key("Enter")
        term.wait_for(r"^  seedlings\s+10 rows .*\n\* trays\s+19 rows")

        term.type('save "session.pq"')
        term.key("Enter")
        term.wait_for(r"saved \d+ statements")
        term.type("quit")
        term.key("Enter")
        screen = term.wait_for(r"\[shell exited 0\]", timeout=10)
    finally:
        term.close()

    shown = p_lines(screen)
    assert len(shown) == 2, screen
    replay = subprocess.run(shlex.split(shell_command()) + ["run", "session.pq"], cwd=tmp_path,
                            capture_output=True, text=True, timeout=120,
                            env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert replay.returncode == 0, replay.stdout + replay.stderr
    assert p_lines(replay.stdout) == shown
