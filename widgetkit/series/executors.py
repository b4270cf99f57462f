"""Where the tasks of a series run: in this process, in a local process pool, or on a
``dask.distributed`` cluster.

Every executor has the same small face: ``imap_unordered(fn, tasks, on_error)``
yields ``fn(task)`` as each finishes, with at most about two tasks per worker
in flight (tasks are drawn from the iterator only as slots free up, so a long
series is streamed, never held in memory at once), and ``close(cancel=)``.
An error outside ``fn`` itself (a worker process that died, a lost cluster
worker) becomes ``on_error(task, exc)`` for that task; the others go on.

* :class:`SerialExecutor`: one after the other in the calling process.
* :class:`PoolExecutor`: ``concurrent.futures.ProcessPoolExecutor``; workers
  are forked while the caller runs a single thread, else started from a fork
  server that has imported widgetkit once (a script that starts threads before
  a series then needs the usual ``if __name__ == "__main__":`` guard); they
  ignore Ctrl-C (the caller handles it), and a pool broken by a dying worker is
  replaced, its unfinished tasks given once more.
* :class:`DaskExecutor`: a ``distributed.Client`` (or a scheduler address, for
  which a client is opened and closed here); widgetkit must be importable on
  the workers, and the spectrum files readable there under the same paths.
"""

from __future__ import annotations

import multiprocessing
import os
import signal
import sys
import threading
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from itertools import islice
from typing import Any

from ..errors import SeriesError

__all__ = ["SerialExecutor", "PoolExecutor", "DaskExecutor", "make_executor", "default_workers"]

OnError = Callable[[dict, BaseException], dict]
#: tries of a task whose worker process died before it ends as failed
_MAX_TRIES = 2
_DIED = ("its worker process ended abruptly twice (out of memory, a crash, or a script that "
         "starts threads and then a series without an `if __name__ == '__main__':` guard)")


def default_workers() -> int:
    """The cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not on Linux
        return max(1, os.cpu_count() or 1)


class SerialExecutor:
    """Run tasks one after the other in this process."""

    workers = 1
    kind = "serial"

    def imap_unordered(self, fn, tasks: Iterable[dict], on_error: OnError) -> Iterator[dict]:
        for t in tasks:
            try:
                out = fn(t)
            except Exception as exc:  # noqa: BLE001 - reported on the task's row
                out = on_error(t, exc)
            yield out

    def close(self, *, cancel: bool = False) -> None:
        pass


def _ignore_sigint() -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _context():
    """fork while this process runs one thread (quick, and a script's main module is not
    imported again); else a fork server that has imported widgetkit (forking a process
    with threads can deadlock); spawn where neither exists."""
    methods = multiprocessing.get_all_start_methods()
    if sys.platform.startswith("linux") and threading.active_count() == 1:
        return multiprocessing.get_context("fork")
    if "forkserver" in methods:
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(["widgetkit.series.worker"])
        return ctx
    return multiprocessing.get_context("spawn")  # pragma: no cover - Windows


class PoolExecutor:
    """A local process pool of ``workers`` processes (module notes)."""

    kind = "process pool"

    def __init__(self, workers: int):
        self.workers = int(workers)
        self._pool = self._new_pool()

    def _new_pool(self) -> ProcessPoolExecutor:
        return ProcessPoolExecutor(max_workers=self.workers, mp_context=_context(),
                                   initializer=_ignore_sigint)

    def imap_unordered(self, fn, tasks: Iterable[dict], on_error: OnError) -> Iterator[dict]:
        it = iter(tasks)
        pending: dict[Any, tuple[dict, int]] = {}
        retry: list[tuple[dict, int]] = []

        def submit(task: dict, tries: int) -> None:
            pending[self._pool.submit(fn, task)] = (task, tries)

        try:
            for t in islice(it, 2 * self.workers):
                submit(t, 1)
            while pending:
                done, _ = wait(list(pending), return_when=FIRST_COMPLETED)
                broken = False
                for f in done:
                    task, tries = pending.pop(f)
                    try:
                        out = f.result()
                    except BrokenProcessPool:
                        broken = True
                        if tries < _MAX_TRIES:
                            retry.append((task, tries + 1))
                            continue
                        out = on_error(task, RuntimeError(_DIED))
                    except Exception as exc:  # noqa: BLE001 - e.g. a task that cannot be pickled
                        out = on_error(task, exc)
                    yield out
                if broken:  # every unfinished task of a broken pool fails: run them again
                    retry += list(pending.values())
                    pending.clear()
                    self._pool.shutdown(wait=False, cancel_futures=True)
                    self._pool = self._new_pool()
                while retry:
                    submit(*retry.pop(0))
                for t in islice(it, max(0, 2 * self.workers - len(pending))):
                    submit(t, 1)
        finally:
            for f in pending:
                f.cancel()

    def close(self, *, cancel: bool = False) -> None:
        self._pool.shutdown(wait=not cancel, cancel_futures=True)


class DaskExecutor:
    """Tasks on a ``dask.distributed`` cluster through ``client`` (or a scheduler address)."""

    kind = "dask"

    def __init__(self, client):
        try:
            import distributed
        except ImportError:  # pragma: no cover - it is a dependency
            raise SeriesError("client=: the dask.distributed package is not installed; "
                              "pip install 'dask[distributed]'") from None
        self._own = isinstance(client, str)
        if self._own:
            try:
                client = distributed.Client(client, timeout="20s")
            except (OSError, TimeoutError) as exc:
                raise SeriesError(f"cannot reach the Dask scheduler at {client!r}: {exc}; start "
                                  "it (dask scheduler) or check the address") from None
        elif not isinstance(client, distributed.Client):
            raise SeriesError(f"client must be a dask.distributed.Client or a scheduler address "
                              f"such as 'tcp://10.0.0.5:8786', got {type(client).__name__}")
        self.client = client
        self.workers = max(1, sum(client.nthreads().values()))

    def imap_unordered(self, fn, tasks: Iterable[dict], on_error: OnError) -> Iterator[dict]:
        from distributed import as_completed

        it = iter(tasks)
        task_of: dict = {}

        def submit(task: dict):
            f = self.client.submit(fn, task, pure=False)
            task_of[f] = task
            return f

        ac = as_completed([submit(t) for t in islice(it, 2 * self.workers + 2)])
        try:
            for f in ac:
                task = task_of.pop(f)
                try:
                    out = f.result()
                except Exception as exc:  # noqa: BLE001 - a lost worker, a task error
                    out = on_error(task, exc)
                f.release()
                nxt = next(it, None)
                if nxt is not None:
                    ac.add(submit(nxt))
                yield out
        finally:
            if task_of:
                self.client.cancel(list(task_of))

    def close(self, *, cancel: bool = False) -> None:
        if self._own:
            self.client.close()


def make_executor(workers: int | None, client) -> SerialExecutor | PoolExecutor | DaskExecutor:
    """The executor for ``run_series(workers=, client=)``: Dask when a client (or address) is
    given, else a process pool of ``workers`` (default: every core), serial for 1 worker."""
    if client is not None:
        return DaskExecutor(client)
    if workers is None:
        workers = default_workers()
    if isinstance(workers, bool) or not isinstance(workers, int) or workers < 1:
        raise SeriesError(f"workers must be a whole number >= 1 (or None for every core), "
                          f"got {workers!r}")
    return SerialExecutor() if workers == 1 else PoolExecutor(workers)
