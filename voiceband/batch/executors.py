"""Where tasks run: a pool of local processes, or a Dask cluster (``dask.distributed``, imported only here when used).

Both adapters offer the same four operations to the runner: ``submit``, ``wait_any``,
``worker_lost`` (did this future fail because its worker process died?) and ``close``.
"""

from __future__ import annotations

import os
from typing import Any, Callable, Iterable

from ..errors import VoicebandError

__all__ = ["LocalPool", "DaskPool", "open_executor", "default_workers", "ClusterError"]


class ClusterError(VoicebandError, RuntimeError):
    """The Dask extra is missing or the scheduler cannot be reached."""


class WorkerStartError(VoicebandError, RuntimeError):
    """The local worker processes cannot be started."""


def default_workers() -> int:
    """Worker processes by default: the CPUs this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not on Linux
        return max(1, os.cpu_count() or 1)


#: Modules the fork server imports before forking workers (warmup runs one short analysis).
_PRELOAD = ("voiceband.batch.warmup",)


class LocalPool:
    """Worker processes on this machine (``concurrent.futures``, forkserver start on Linux).

    A worker that dies (killed, out of memory) breaks the whole pool; the pool is then rebuilt
    and :meth:`worker_lost` tells the runner which futures were lost that way.
    """

    def __init__(self, workers: int):
        self.workers = int(workers)
        self.window = 2 * self.workers
        self._pool = None

    def _ensure(self):
        from concurrent.futures import ProcessPoolExecutor
        import multiprocessing as mp

        if self._pool is None:
            if "forkserver" in mp.get_all_start_methods():
                ctx = mp.get_context("forkserver")
                # workers fork from a server that has imported the analysis once, so they start at once
                ctx.set_forkserver_preload(list(_PRELOAD))
            else:  # pragma: no cover - not on Linux
                ctx = mp.get_context("spawn")
            self._pool = ProcessPoolExecutor(max_workers=self.workers, mp_context=ctx)
        return self._pool

    def submit(self, fn: Callable, *args: Any):
        from concurrent.futures.process import BrokenProcessPool

        try:
            try:
                return self._ensure().submit(fn, *args)
            except BrokenProcessPool:
                self._restart()
                return self._ensure().submit(fn, *args)
        except OSError as exc:
            # the fork server or a worker could not start (no Python to run, no room for a process, ...);
            # said as such, not as the broken pipe or refused connection it shows up as
            self._restart()
            reason = os.strerror(exc.errno).lower() if exc.errno else str(exc) or type(exc).__name__
            raise WorkerStartError(f"cannot start the batch's worker processes ({reason}).") from None

    def _restart(self) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=False, cancel_futures=True)
        self._pool = None

    def wait_any(self, futures: Iterable) -> tuple[set, set]:
        from concurrent.futures import FIRST_COMPLETED, wait

        done, not_done = wait(list(futures), return_when=FIRST_COMPLETED)
        return set(done), set(not_done)

    def worker_lost(self, exc: BaseException) -> bool:
        from concurrent.futures.process import BrokenProcessPool

        if isinstance(exc, BrokenProcessPool):
            self._restart()
            return True
        return False

    def close(self, *, cancel: bool = False) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=not cancel, cancel_futures=cancel)
            self._pool = None


class DaskPool:
    """Tasks submitted to a Dask scheduler: a running one at ``address``, or a LocalCluster for ``"local"``.

    Dask re-runs the task of a lost worker elsewhere by itself; a file whose task keeps killing
    workers ends as ``KilledWorker``, which the runner records as that file's failure.
    """

    def __init__(self, address: str, workers: int):
        try:
            from dask.distributed import Client, LocalCluster
        except ImportError:
            raise ClusterError(
                "--scheduler needs Dask, which is not installed; install it with: pip install 'voiceband[cluster]'."
            ) from None
        self._cluster = None
        try:
            if address == "local":
                self._cluster = LocalCluster(n_workers=int(workers), threads_per_worker=1, processes=True,
                                             dashboard_address=None)
                self.client = Client(self._cluster)
            else:
                _check_reachable(address)
                self.client = Client(address, timeout="30s")
        except (OSError, TimeoutError) as exc:
            self.close()
            raise ClusterError(f"cannot reach the Dask scheduler at '{address}' ({exc}).") from None
        threads = sum(self.client.nthreads().values()) or int(workers)
        self.workers = threads
        self.window = max(4, 2 * threads)

    def submit(self, fn: Callable, *args: Any):
        return self.client.submit(fn, *args, pure=False)

    def wait_any(self, futures: Iterable) -> tuple[set, set]:
        from dask.distributed import wait

        res = wait(list(futures), return_when="FIRST_COMPLETED")
        return set(res.done), set(res.not_done)

    def worker_lost(self, exc: BaseException) -> bool:
        return False

    def close(self, *, cancel: bool = False) -> None:
        client = getattr(self, "client", None)
        if client is not None:
            client.close()
            self.client = None
        if self._cluster is not None:
            self._cluster.close()
            self._cluster = None


def _check_reachable(address: str) -> None:
    """Fail at once, not after the client's timeout, when nothing listens at a TCP scheduler address."""
    import socket

    from distributed.comm import get_address_host_port

    try:
        host, port = get_address_host_port(address)
    except (ValueError, TypeError):
        raise ClusterError(f"'{address}' is not a Dask scheduler address (expected tcp://HOST:PORT, or 'local').") from None
    with socket.create_connection((host, int(port)), timeout=5.0):
        pass


def open_executor(workers: int, scheduler: str | None):
    """A :class:`LocalPool` of ``workers`` processes, or a :class:`DaskPool` when ``scheduler`` is given."""
    if scheduler:
        return DaskPool(scheduler, workers)
    return LocalPool(workers)
