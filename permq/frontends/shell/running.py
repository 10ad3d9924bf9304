"""Running one statement so that Ctrl-C stops it and the session stays as it was.

The statement runs in a worker thread while the main thread waits. Ctrl-C (KeyboardInterrupt
in the main thread) asks the engine to stop: the session's `should_stop` turns true and the
engine raises Cancelled at its next progress step, after cancelling its pending blocks.
A second Ctrl-C raises KeyboardInterrupt inside the worker itself, for work that has no
progress steps; the session reports either as a "cancelled" failure.

(KeyboardInterrupt raised straight into the engine from the main thread can land between a
thread pool's start and its try block, and then the pool finishes all its work first.)
"""
from __future__ import annotations

import ctypes
import threading
from typing import Callable, Optional


class StopFlag:
    """The session's should_stop: set by Ctrl-C, cleared before each statement."""

    def __init__(self):
        self._event = threading.Event()

    def __call__(self) -> bool:
        return self._event.is_set()

    def set(self) -> None:
        self._event.set()

    def clear(self) -> None:
        self._event.clear()


def run_stoppable(job: Callable[[], object], stop: StopFlag,
                  on_stopping: Optional[Callable[[int], None]] = None, poll: float = 0.1):
    """job() in a worker thread; returns what it returned (or raises what it raised)."""
    box: dict = {}
    done = threading.Event()

    def work():
        try:
            box["value"] = job()
        except BaseException as exc:  # noqa: BLE001 - handed back to the caller below
            box["error"] = exc
        finally:
            done.set()

    stop.clear()
    worker = threading.Thread(target=work, name="permq-statement", daemon=True)
    worker.start()
    presses = 0
    # wait on an Event, not on join(): a KeyboardInterrupt inside Thread.join can leave the
    # thread marked as finished while it still runs
    while not done.is_set():
        try:
            done.wait(poll)
        except KeyboardInterrupt:
            presses += 1
            stop.set()
            if presses >= 2:
                _raise_in(worker, KeyboardInterrupt)
            if on_stopping is not None:
                on_stopping(presses)
    stop.clear()
    if "error" in box:
        raise box["error"]
    return box.get("value")


def _raise_in(thread: threading.Thread, exc_type) -> None:
    """Raise exc_type in another thread at its next Python instruction."""
    if thread.ident is None:
        return
    ctypes.pythonapi.PyThreadState_SetAsyncExc(ctypes.c_ulong(thread.ident),
                                               ctypes.py_object(exc_type))
