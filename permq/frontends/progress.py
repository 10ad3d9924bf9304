"""A one-line progress indicator on standard error, shown only after half a second."""
from __future__ import annotations

import sys
import time


class ProgressLine:
    def __init__(self, stream=None, delay: float = 0.5):
        self.stream = stream or sys.stderr
        self.delay = delay
        self.started = None
        self.shown = False

    def start(self):
        self.started = time.monotonic()
        self.shown = False

    def __call__(self, fraction: float, what: str) -> None:
        if self.started is None:
            self.start()
        if time.monotonic() - self.started < self.delay:
            return
        bar = "█" * int(fraction * 20)
        self.stream.write(f"\r  {what:<12} {bar:<20} {fraction * 100:5.1f}%  (Ctrl-C cancels)")
        self.stream.flush()
        self.shown = True

    def clear(self):
        if self.shown:
            self.stream.write("\r" + " " * 70 + "\r")
            self.stream.flush()
        self.started = None
        self.shown = False
