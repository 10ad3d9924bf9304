"""Where the tasks of a many-response statement run: local threads, or a Dask cluster.

A pool maps a task function over argument tuples, with one shared object (the reference set and
the tests) that every task reads, and returns the results in task order. The tasks and their
boundaries are fixed by the data alone, never by the number of workers, and each returns exact
integer counts, so any pool gives the same numbers.

- `LocalPool(workers)`: threads on this machine (the compiled loops release the interpreter
  lock); one worker runs the tasks in turn.
- `DaskPool(client)`: a dask.distributed `Client`; the shared object is scattered once to every
  worker, the tasks are submitted and gathered in order. The workers need permq installed.

`pool_for(workers, cluster)` picks one: a cluster (an address, or a Client) wins over workers.
"""
from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from typing import Callable, Optional, Sequence

from ...errors import PermqError
from ..core.progress import NO_PROGRESS, Progress
from ..montecarlo.sampling import default_workers

_CLIENTS: dict = {}
CONNECT_SECONDS = 10


class LocalPool:
    def __init__(self, workers: Optional[int] = None):
        self.workers = max(1, int(workers or default_workers()))

    @property
    def where(self) -> str:
        return f"{self.workers} local worker{'s' if self.workers != 1 else ''}"

    def map(self, fn: Callable, shared, arguments: Sequence[tuple],
            progress: Progress = NO_PROGRESS, what: str = "computing") -> list:
        total = max(1, len(arguments))
        if self.workers == 1 or len(arguments) <= 1:
            out = []
            for i, args in enumerate(arguments):
                out.append(fn(shared, *args))
                progress.step((i + 1) / total, what)
            return out
        results = [None] * len(arguments)
        with ThreadPoolExecutor(max_workers=self.workers) as pool:
            futures = [pool.submit(fn, shared, *args) for args in arguments]
            try:
                for i, fut in enumerate(futures):
                    results[i] = fut.result()
                    progress.step((i + 1) / total, what)
            except BaseException:
                for fut in futures:
                    fut.cancel()
                raise
        return results


class DaskPool:
    def __init__(self, client, address: str = ""):
        self.client = client
        self.address = address or str(getattr(client, "scheduler", "") and
                                      getattr(client.scheduler, "address", "")) or "cluster"

    @property
    def where(self) -> str:
        return f"the Dask cluster at {self.address}"

    def map(self, fn: Callable, shared, arguments: Sequence[tuple],
            progress: Progress = NO_PROGRESS, what: str = "computing") -> list:
        total = max(1, len(arguments))
        if not arguments:
            return []
        try:
            big = self.client.scatter(shared, broadcast=True, hash=False)
            futures = [self.client.submit(fn, big, *args, pure=False) for args in arguments]
        except OSError as exc:
            raise PermqError(f"the cluster at {self.address} did not take the work: "
                             f"{exc}") from None
        results = []
        try:
            for i, fut in enumerate(futures):
                results.append(fut.result())
                progress.step((i + 1) / total, what)
        except ImportError as exc:
            self.client.cancel(futures)
            raise PermqError(f"a worker of the cluster at {self.address} cannot run permq: "
                             f"{exc}", hint="install the same permq on every worker") from None
        except BaseException:
            self.client.cancel(futures)
            raise
        finally:
            self.client.cancel(big)
        return results


def connect(address: str):
    """A Client for this scheduler address, kept for the next statement."""
    client = _CLIENTS.get(address)
    if client is not None and getattr(client, "status", "") == "running":
        return client
    try:
        from distributed import Client
    except ImportError:
        raise PermqError("a cluster needs dask.distributed, which is not installed",
                         hint='pip install "permq[dask]"') from None
    try:
        client = Client(address, timeout=CONNECT_SECONDS, set_as_default=False)
    except (OSError, TimeoutError) as exc:
        raise PermqError(f"cannot reach the cluster at {address}: {exc}",
                         hint="check the address, or 'set cluster none' to run here") from None
    _CLIENTS[address] = client
    return client


def pool_for(workers: Optional[int] = None, cluster=None):
    if cluster is None:
        return LocalPool(workers)
    if isinstance(cluster, str):
        return DaskPool(connect(cluster), cluster)
    return DaskPool(cluster)
