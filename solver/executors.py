"""Executors that run study points: one interface, three back ends.

    SerialExecutor()                       in this process, one point at a time
    ProcessExecutor(workers=None)          local process pool (all cores by default)
    DaskExecutor(address=None, workers=2)  Dask distributed: a scheduler at `address`,
                                           or a LocalCluster on 127.0.0.1 only

All follow concurrent.futures: `submit(fn, *args)` returns a future with
`result()`, `exception()`, `done()`, `cancel()`; `wait(futures, timeout)`
returns (done, not done) as soon as one finishes; `cancel_pending(futures)` drops those not yet
started; `abandon()` stops running work at once (a second Ctrl-C);
`close()` shuts down. Executors are context managers.

Warm-up: `warm_ups` is a tuple of top-level callables run once in every
worker before its first point (numba kernels compile or load their cache
there, not per point). Functions sent to a worker must be top-level and
importable (picklable by reference).

Workers ignore SIGINT: Ctrl-C reaches the whole process group, and only the
coordinating process decides what to stop, so a finished point is never lost
to a worker dying mid-return. Dask is imported only by DaskExecutor and is
an optional extra (`pip install tunnelstack[cluster]`).
"""
from __future__ import annotations

import concurrent.futures as cf
import multiprocessing
import os
import signal
from typing import Callable, Iterable, Sequence

from solver.errors import CaseError

__all__ = [
    "Executor",
    "SerialExecutor",
    "ProcessExecutor",
    "DaskExecutor",
    "make_executor",
    "run_warm_ups",
]


def run_warm_ups(warm_ups: Sequence[Callable[[], object]]) -> None:
    """Run each warm-up hook once (errors propagate: a broken kernel shows at once)."""
    for hook in warm_ups:
        hook()


def _worker_init(warm_ups: Sequence[Callable[[], object]]) -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    run_warm_ups(warm_ups)


class Executor:
    """Base class: the interface a study drives."""

    name = "executor"
    workers = 1

    def submit(self, fn, *args):  # pragma: no cover - interface
        raise NotImplementedError

    def wait(self, futures: Sequence, timeout: float | None = None) -> tuple[list, list]:
        """Block until at least one of `futures` is done or `timeout` s pass;
        returns (done, not done)."""
        done, rest = cf.wait(list(futures), timeout=timeout, return_when=cf.FIRST_COMPLETED)
        return list(done), list(rest)

    def cancel_pending(self, futures: Iterable) -> int:
        """Cancel the futures that have not started; returns how many were cancelled."""
        return sum(1 for f in futures if f.cancel())

    def abandon(self) -> None:
        """Stop running work now (results in flight are lost)."""

    def close(self) -> None:
        pass

    def describe(self) -> str:
        return f"{self.name}, {self.workers} worker{'s' if self.workers != 1 else ''}"

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False


class SerialExecutor(Executor):
    """Runs each point in this process when it is submitted."""

    name = "serial"

    def __init__(self, warm_ups: Sequence[Callable[[], object]] = ()):
        self.workers = 1
        self._warm_ups = tuple(warm_ups)
        self._warmed = False

    def submit(self, fn, *args):
        if not self._warmed:
            run_warm_ups(self._warm_ups)
            self._warmed = True
        future: cf.Future = cf.Future()
        future.set_running_or_notify_cancel()
        try:
            future.set_result(fn(*args))
        except Exception as err:  # noqa: BLE001 - handed to the caller via the future
            future.set_exception(err)
        return future


class ProcessExecutor(Executor):
    """A local process pool (concurrent.futures.ProcessPoolExecutor).

    workers : number of processes, default os.cpu_count()
    start_method : multiprocessing start method, "spawn" by default (safe with
        threads and numba; workers import what they need once)
    """

    name = "process pool"

    def __init__(
        self,
        workers: int | None = None,
        warm_ups: Sequence[Callable[[], object]] = (),
        start_method: str = "spawn",
    ):
        if workers is None:
            workers = os.cpu_count() or 1
        if not isinstance(workers, int) or workers < 1:
            raise CaseError(f"workers: must be an integer >= 1, got {workers!r}")
        self.workers = workers
        self._pool = cf.ProcessPoolExecutor(
            max_workers=workers,
            mp_context=multiprocessing.get_context(start_method),
            initializer=_worker_init,
            initargs=(tuple(warm_ups),),
        )

    def submit(self, fn, *args):
        return self._pool.submit(fn, *args)

    def abandon(self) -> None:
        # Terminate only the pool's own worker processes.
        processes = getattr(self._pool, "_processes", None) or {}
        for proc in list(processes.values()):
            try:
                proc.terminate()
            except (OSError, AttributeError):
                pass
        self._pool.shutdown(wait=False, cancel_futures=True)

    def close(self) -> None:
        self._pool.shutdown(wait=True, cancel_futures=True)


def _import_distributed():
    try:
        import distributed
    except ImportError:
        raise CaseError(
            "Dask executor: the 'distributed' package is not installed; "
            "install the optional extra with `pip install tunnelstack[cluster]` "
            "or run with local processes (--workers N)"
        ) from None
    return distributed


class DaskExecutor(Executor):
    """Dask distributed: `address` of a running scheduler ("tcp://host:8786"), or,
    with address None, a LocalCluster of `workers` processes (one thread each)
    listening on 127.0.0.1 only, without a dashboard."""

    name = "dask"

    def __init__(
        self,
        address: str | None = None,
        workers: int = 2,
        warm_ups: Sequence[Callable[[], object]] = (),
        timeout_s: float = 30.0,
    ):
        distributed = _import_distributed()
        self._distributed = distributed
        self._cluster = None
        if address is None:
            if not isinstance(workers, int) or workers < 1:
                raise CaseError(f"local cluster workers: must be an integer >= 1, got {workers!r}")
            self._cluster = distributed.LocalCluster(
                n_workers=workers,
                threads_per_worker=1,
                processes=True,
                host="127.0.0.1",
                dashboard_address=None,
                silence_logs=50,  # logging.CRITICAL: worker chatter stays off the terminal
            )
            self._client = distributed.Client(self._cluster, timeout=timeout_s)
            self.name = "dask local cluster"
        else:
            try:
                self._client = distributed.Client(address, timeout=timeout_s)
            except (OSError, TimeoutError) as err:
                raise CaseError(
                    f"--scheduler {address}: cannot reach a Dask scheduler there ({err})"
                ) from None
            self.name = f"dask at {address}"
        self.workers = max(1, len(self._client.scheduler_info().get("workers", {})))
        if warm_ups:
            # once on every worker present now; a worker joining later compiles
            # (or loads its numba cache) on its first point, still once per worker
            self._client.run(run_warm_ups, tuple(warm_ups))

    def submit(self, fn, *args):
        # pure=False: every point runs even if its arguments hash alike
        return self._client.submit(fn, *args, pure=False)

    def wait(self, futures: Sequence, timeout: float | None = None) -> tuple[list, list]:
        futures = list(futures)
        try:
            self._distributed.wait(futures, timeout=timeout, return_when="FIRST_COMPLETED")
        except TimeoutError:
            pass
        except Exception as err:  # distributed's own TimeoutError in older releases
            if "Timeout" not in type(err).__name__:
                raise
        done = [f for f in futures if f.done()]
        return done, [f for f in futures if not f.done()]

    def cancel_pending(self, futures: Iterable) -> int:
        pending = [f for f in futures if not f.done()]
        if pending:
            self._client.cancel(pending)
        return len(pending)

    def abandon(self) -> None:
        self.close()

    def close(self) -> None:
        client, cluster = getattr(self, "_client", None), self._cluster
        self._client = None
        self._cluster = None
        if client is not None:
            client.close()
        if cluster is not None:
            cluster.close()


def make_executor(
    *,
    workers: int | None = 1,
    scheduler: str | None = None,
    local_cluster: int | None = None,
    warm_ups: Sequence[Callable[[], object]] = (),
) -> Executor:
    """The executor for the command-line options: --scheduler ADDRESS,
    --local-cluster N, --workers N (1 = serial, 0 or None = all cores)."""
    if scheduler is not None and local_cluster is not None:
        raise CaseError("--scheduler and --local-cluster: give one of them, not both")
    if scheduler is not None:
        return DaskExecutor(address=scheduler, warm_ups=warm_ups)
    if local_cluster is not None:
        return DaskExecutor(workers=local_cluster, warm_ups=warm_ups)
    if workers is not None and workers < 0:
        raise CaseError(f"--workers: must be >= 0 (0 = all cores), got {workers}")
    if workers == 1:
        return SerialExecutor(warm_ups=warm_ups)
    return ProcessExecutor(workers=workers or None, warm_ups=warm_ups)
