"""Seeded, reproducible Monte Carlo draws in fixed blocks.

Draws are cut into blocks of BLOCK draws; block i always uses the random stream
SeedSequence(seed, spawn_key=(i,)), so the same seed gives the same draws whatever the batch
size or the number of workers. Block boundaries are where a cancel request takes effect.
"""
from __future__ import annotations

import secrets
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Callable, Iterator, Optional

import numpy as np

from ..core.limits import INTERVAL_DRAWS
from ..core.progress import NO_PROGRESS, Progress

STREAM_UNIT = 8192   # draws per random stream: part of what a seed means; never changes
BLOCK = STREAM_UNIT  # default batch size (how many draws are handled at once)
PARALLEL_GAIN = 0.7     # what each worker thread past the first adds (measured)
PER_DRAW_BYTES = 32.0  # a block's statistics and its tail tests' temporaries, a draw (measured)


def c_loops_present() -> bool:
    """Whether the C loops will run (their library is there; checked without loading it).
    They step the generator themselves, so no block of random integers is held."""
    import os

    from .native import LIBRARY

    return LIBRARY.exists() and not os.environ.get("PERMQ_NO_C_LOOPS")


def sampled_bytes(draws: int, items: float, item_bytes: float, draw_bytes: float = 0.0,
                  kept: int = INTERVAL_DRAWS, workers: Optional[int] = None) -> float:
    """Peak bytes of a Monte Carlo run, for the planner: one block of draws over `items` (its
    random integers or shuffled copies, `item_bytes` an item a draw) and the block's
    statistics and tail tests (about 32 bytes a draw), on each worker thread that has a stream
    unit of its own (iter_blocks), and what is kept for each of the first `kept` draws (an
    interval's jumps, `draw_bytes` each)."""
    block = min(draws, BLOCK)
    return (concurrent_units(draws, workers) * block * (items * item_bytes + PER_DRAW_BYTES)
            + min(draws, kept) * draw_bytes)


def concurrent_units(draws: int, workers: Optional[int] = None) -> int:
    """How many stream units iter_blocks works on at once: one a worker thread, at most as
    many as the draws fill."""
    return max(1, min(-(-int(draws) // STREAM_UNIT), workers or default_workers()))


def parallel_ops(ops: float, draws: int, workers: Optional[int] = None) -> float:
    """The share of `ops` one core sees when iter_blocks spreads the draws' stream units over
    the worker threads: each thread past the first adds about 0.7 of a core (measured at 2
    workers: 1.4-1.9 times faster than one, `bench/calibrate.py`); one unit runs on one."""
    return ops / (1.0 + PARALLEL_GAIN * (concurrent_units(draws, workers) - 1))


def fresh_seed() -> int:
    """A new seed, for `seed fresh` (reported, so that the run can be repeated). Only
    plan/seeds.py calls it: a statement's seed is decided once, before it is planned."""
    return secrets.randbelow(2 ** 31 - 1) + 1


def require_seed(seed) -> int:
    """The seed an engine was handed; engines never draw one of their own."""
    if seed is None:
        raise ValueError("Monte Carlo needs a seed; the pipeline decides it (plan/seeds.py)")
    return int(seed)


def blocks(seed: int, draws: int, block: int = BLOCK) -> Iterator[tuple[int, int, np.random.Generator]]:
    """Yield (stream index, draws in this batch, generator) covering `draws` draws.

    The random streams come in fixed units of STREAM_UNIT draws: unit i always uses
    SeedSequence(seed, spawn_key=(i,)). `block` is only the batch size: a smaller batch splits a
    unit into several batches that share its generator, in order, so an engine that takes the
    same amount of randomness for each draw gets the same draws whatever the batch size.
    """
    seed = require_seed(seed)
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




# `set workers N` for the statement being run (None: every core, up to 8)
_WORKERS: ContextVar = ContextVar("permq_workers", default=None)


def default_workers() -> int:
    chosen = _WORKERS.get()
    if chosen:
        return int(chosen)
    import os

    return max(1, min(8, os.cpu_count() or 1))


@contextmanager
def using_workers(workers: Optional[int]):
    """Run the statements inside on `workers` threads (None: every core)."""
    token = _WORKERS.set(workers)
    try:
        yield
    finally:
        _WORKERS.reset(token)


def iter_blocks(seed: int, draws: int, work: Callable, progress: "Progress" = NO_PROGRESS,
                what: str = "sampling", workers: Optional[int] = None) -> Iterator:
    """work(size, rng) on every batch, on a pool of threads; yields results in batch order.

    Each stream unit has its own generator, so the results do not depend on the number of
    workers; batches of one unit run in order, in one task. At most two units per worker are
    in flight, so memory stays bounded whatever the number of draws, and a cancel (at each
    progress step) stops the pool at once. The compiled loops release the interpreter lock,
    so the threads share the cores.
    """
    from collections import deque
    from concurrent.futures import ThreadPoolExecutor
    from itertools import groupby

    units = ((unit, [(size, rng) for _, size, rng in group])
             for unit, group in groupby(blocks(seed, draws), key=lambda b: b[0]))

    def run_unit(batches):
        return [work(size, rng) for size, rng in batches], sum(size for size, _ in batches)

    workers = workers or default_workers()
    done = 0
    if workers == 1:
        for _, batches in units:
            results, size = run_unit(batches)
            yield from results
            done += size
            progress.step(done / draws, what)
        return
    pool = ThreadPoolExecutor(max_workers=workers)
    pending: deque = deque()
    try:
        for _, batches in units:
            pending.append(pool.submit(run_unit, batches))
            while len(pending) >= 2 * workers:
                results, size = pending.popleft().result()
                yield from results
                done += size
                progress.step(done / draws, what)
        while pending:
            results, size = pending.popleft().result()
            yield from results
            done += size
            progress.step(done / draws, what)
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def map_blocks(seed: int, draws: int, work: Callable, progress: "Progress" = NO_PROGRESS,
               what: str = "sampling", workers: Optional[int] = None) -> list:
    """The results of iter_blocks as a list (for results that are small)."""
    return list(iter_blocks(seed, draws, work, progress, what, workers))
