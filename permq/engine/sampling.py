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

STREAM_UNIT = 8192   # draws per random stream: part of what a seed means; never changes
BLOCK = STREAM_UNIT  # default batch size (how many draws are handled at once)


def fresh_seed() -> int:
    """A seed for a run where the user named none (reported, so that the run can be repeated)."""
    return secrets.randbelow(2 ** 31 - 1) + 1


def blocks(seed: int, draws: int, block: int = BLOCK) -> Iterator[tuple[int, int, np.random.Generator]]:
    """Yield (stream index, draws in this batch, generator) covering `draws` draws.

    The random streams come in fixed units of STREAM_UNIT draws: unit i always uses
    SeedSequence(seed, spawn_key=(i,)). `block` is only the batch size: a smaller batch splits a
    unit into several batches that share its generator, in order, so an engine that takes the
    same amount of randomness for each draw gets the same draws whatever the batch size.
    """
    done = 0
    unit = 0
    block = max(1, int(block))
    while done < draws:
        in_unit = min(STREAM_UNIT, draws - done)
        rng = np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed, spawn_key=(unit,))))
        start = 0
        while start < in_unit:
            size = min(block, in_unit - start)
            yield unit, size, rng
            start += size
        done += in_unit
        unit += 1


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
    """work(size, rng) on every batch, on a pool of threads; results in batch order.

    Each stream unit has its own generator, so the results do not depend on the number of
    workers; batches of one unit run in order, in one task. The compiled loops release the
    interpreter lock, so the threads share the cores.
    """
    from concurrent.futures import ThreadPoolExecutor

    units: list[list] = []
    for unit, size, rng in blocks(seed, draws):
        if not units or units[-1][0] != unit:
            units.append([unit, []])
        units[-1][1].append((size, rng))

    def run_unit(batches):
        return [work(size, rng) for size, rng in batches]

    workers = workers or default_workers()
    results = []
    if workers == 1 or len(units) == 1:
        done = 0
        for _, batches in units:
            results.extend(run_unit(batches))
            done += sum(size for size, _ in batches)
            progress.step(done / draws, what)
        return results
    with ThreadPoolExecutor(max_workers=workers) as pool:
        futures = [pool.submit(run_unit, batches) for _, batches in units]
        try:
            done = 0
            for fut, (_, batches) in zip(futures, units):
                results.extend(fut.result())
                done += sum(size for size, _ in batches)
                progress.step(done / draws, what)
        except BaseException:
            for fut in futures:
                fut.cancel()
            raise
    return results
