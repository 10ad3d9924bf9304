"""Progress and cancellation for long work, exact or sampled."""
from __future__ import annotations

from typing import Callable, Optional

from ...errors import Cancelled


class Progress:
    """Progress and cancellation for long work: the engine calls `step`, a front end listens."""

    def __init__(self, callback: Optional[Callable[[float, str], None]] = None,
                 should_stop: Optional[Callable[[], bool]] = None):
        self.callback = callback
        self.should_stop = should_stop

    def step(self, fraction: float, what: str = "") -> None:
        if self.should_stop is not None and self.should_stop():
            raise Cancelled("cancelled; no result kept for this statement")
        if self.callback is not None:
            self.callback(min(1.0, max(0.0, fraction)), what)


NO_PROGRESS = Progress()
