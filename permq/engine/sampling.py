"""Seeded, reproducible Monte Carlo draws in fixed blocks.

Draws are cut into blocks of BLOCK draws; block i always uses the random stream
SeedSequence(seed, spawn_key=(i,)), so the same seed gives the same draws whatever the batch
size or the number of workers. Block boundaries are where a cancel request takes effect.
"""
from __future__ import annotations

import secrets
from typing import Callable, Iterator, Optional

import numpy as np

from ..errors import Cancelled

BLOCK = 8192


def fresh_seed() -> int:
    """A seed for a run where the user named none (reported, so that the run can be repeated)."""
    return secrets.randbelow(2 ** 31 - 1) + 1


def blocks(seed: int, draws: int, block: int = BLOCK) -> Iterator[tuple[int, int, np.random.Generator]]:
    """Yield (block index, draws in this block, generator) covering `draws` draws."""
    done = 0
    i = 0
    while done < draws:
        size = min(block, draws - done)
        yield i, size, np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed, spawn_key=(i,))))
        done += size
        i += 1


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


def default_workers() -> int:
    import os

    return max(1, min(8, os.cpu_count() or 1))


def map_blocks(seed: int, draws: int, work: Callable, progress: "Progress" = NO_PROGRESS,
               what: str = "sampling", workers: Optional[int] = None) -> list:
    """work(size, rng) on every block, on a pool of threads; results in block order.

    Each block has its own stream, so the results do not depend on the number of workers.
    The compiled loops release the interpreter lock, so the threads share the cores.
    """
    from concurrent.futures import ThreadPoolExecutor

    todo = list(blocks(seed, draws))
    workers = workers or default_workers()
    if workers == 1 or len(todo) == 1:
        out = []
        for i, size, rng in todo:
            out.append(work(size, rng))
            progress.step((i * BLOCK + size) / draws, what)
        return out
    results = [None] * len(todo)
    with ThreadPoolExecutor(max_workers=workers) as pool:
        futures = [pool.submit(work, size, rng) for _, size, rng in todo]
        try:
            for i, fut in enumerate(futures):
                results[i] = fut.result()
                progress.step(min(1.0, (i + 1) * BLOCK / draws), what)
        except BaseException:
            for fut in futures:
                fut.cancel()
            raise
    return results
