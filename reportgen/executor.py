"""Executors: one function over many small tasks, in this process, in worker processes or on a Dask cluster.

Every executor has the same ``map``: it takes a function of one task (a module-level function,
so that it can be sent to another process) and a sequence of tasks, and yields the results in
task order, whatever order they complete in; ``done(index, result)`` is called as each one
completes, for progress displays. Only a bounded window of tasks is in flight or waiting to be
yielded at any time (:data:`WINDOW_PER_WORKER` per worker), so memory does not grow with the
number of tasks, and a result is handed over as soon as the tasks before it are.

- :class:`SerialExecutor` runs each task here, in order (``--jobs 1``).
- :class:`ProcessExecutor` runs them in worker processes started with the ``spawn`` method
  (a fresh interpreter, so no thread of a BLAS library is ever forked), ``workers`` at a time.
  Stages with fewer than ``minimum_tasks`` tasks run here instead, where starting the workers
  would cost more than the work.
- :class:`DaskExecutor` runs them on a Dask cluster: an existing scheduler's address, or a
  cluster of local worker processes it starts and stops itself. Dask is imported only here and
  only when asked for; before any task is sent, the workers' versions of reportgen and the
  numerical packages are compared with this machine's (:func:`check_worker_versions`).

Every task computes with one BLAS/OpenMP thread per process (:func:`limit_threads`): workers run
side by side, and a serial run and a parallel run use the same arithmetic, so their results are
identical to the last bit.
"""

from __future__ import annotations

import contextlib
import os
import platform
import signal
from collections.abc import Callable, Iterator, Sequence
from typing import Any, Protocol, TypeVar

from reportgen.errors import ClusterMismatchError, ClusterUnreachableError, DaskMissingError

T = TypeVar("T")
R = TypeVar("R")

#: Tasks in flight or finished but not yet yielded, per worker.
WINDOW_PER_WORKER = 4
#: Seconds to wait for a Dask scheduler to answer.
CLUSTER_CONNECT_TIMEOUT = 10.0
#: Environment variables that cap the threads of BLAS and OpenMP libraries loaded after they are set.
THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "BLIS_NUM_THREADS",
                    "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")
#: Packages whose versions must agree between this machine and a cluster's workers (with Python and reportgen).
CHECKED_PACKAGES = ("numpy", "pandas", "scipy", "statsmodels", "arch")

Done = Callable[[int, Any], None]


def available_cores() -> int:
    """The cores this process may use (``os.process_cpu_count`` where it exists, else ``os.cpu_count``)."""
    count = getattr(os, "process_cpu_count", None)
    if count is None and hasattr(os, "sched_getaffinity"):
        return max(1, len(os.sched_getaffinity(0)))
    return max(1, (count() if count is not None else os.cpu_count()) or 1)


class Executor(Protocol):
    """Runs a function over tasks and yields the results in task order."""

    #: "serial", "processes" or "dask", for messages.
    kind: str
    #: How many tasks run at once.
    workers: int

    def map(self, function: Callable[[T], R], tasks: Sequence[T], done: Done | None = None) -> Iterator[R]:
        """The results of ``function`` on each task, in task order; ``done(index, result)`` on each completion."""
        ...

    def close(self) -> None:
        """Stop the workers (if any); the executor cannot be used afterwards."""
        ...

    def __enter__(self) -> Executor: ...

    def __exit__(self, *exc: object) -> None: ...


_LIMITED = False


def limit_threads() -> None:
    """Cap this process at one BLAS/OpenMP thread: for libraries already loaded and those loaded later."""
    global _LIMITED
    if _LIMITED:
        return
    for name in THREAD_VARIABLES:
        os.environ[name] = "1"
    from threadpoolctl import threadpool_limits

    threadpool_limits(limits=1)
    _LIMITED = True


def _start_worker() -> None:
    """Initialiser of a worker process: one thread for numerical libraries; Ctrl-C is the parent's to handle."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    limit_threads()


def _call(function: Callable[[T], R], task: T) -> R:
    """Run one task in a worker that reportgen did not start (a Dask worker), with the thread cap."""
    limit_threads()
    return function(task)


class _Reorder:
    """Results arriving in any order, handed out in task order; never more than ``window`` ahead.

    A task's error is raised when its turn comes, as a serial run would raise it: after the
    results of the tasks before it.
    """

    def __init__(self, count: int, window: int, done: Done | None) -> None:
        self.count = count
        self.window = window
        self.done = done
        self.next_submit = 0
        self.next_yield = 0
        self.finished: dict[int, Any] = {}  # index -> the completed future

    def may_submit(self) -> bool:
        return self.next_submit < self.count and self.next_submit < self.next_yield + self.window

    def complete(self, index: int, future: Any) -> None:
        self.finished[index] = future
        if self.done is not None and future.exception() is None:
            self.done(index, future.result())

    def ready(self) -> Iterator[Any]:
        while self.next_yield in self.finished:
            future = self.finished.pop(self.next_yield)
            self.next_yield += 1
            yield future.result()


class SerialExecutor:
    """Every task here, one after another, in order."""

    kind = "serial"
    workers = 1

    def map(self, function: Callable[[T], R], tasks: Sequence[T], done: Done | None = None) -> Iterator[R]:
        from threadpoolctl import threadpool_limits

        with threadpool_limits(limits=1):
            for index, task in enumerate(tasks):
                result = function(task)
                if done is not None:
                    done(index, result)
                yield result

    def close(self) -> None:
        return None

    def __enter__(self) -> SerialExecutor:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


class ProcessExecutor:
    """Tasks in ``workers`` processes of a fresh interpreter each (started on first use, kept until closed)."""

    kind = "processes"

    def __init__(self, workers: int, *, minimum_tasks: int = 2, start_method: str = "spawn") -> None:
        self.workers = max(1, workers)
        self.minimum_tasks = minimum_tasks
        self.start_method = start_method
        self._pool: Any = None
        self._serial = SerialExecutor()

    def _executor(self) -> Any:
        if self._pool is None:
            import multiprocessing
            from concurrent.futures import ProcessPoolExecutor

            self._pool = ProcessPoolExecutor(max_workers=self.workers,
                                             mp_context=multiprocessing.get_context(self.start_method),
                                             initializer=_start_worker)
        return self._pool

    def map(self, function: Callable[[T], R], tasks: Sequence[T], done: Done | None = None) -> Iterator[R]:
        minimum = 2 if self._pool is not None else max(self.minimum_tasks, 2)  # workers already started: use them
        if len(tasks) < minimum or self.workers == 1:
            yield from self._serial.map(function, tasks, done)
            return
        from concurrent.futures import FIRST_COMPLETED, wait

        pool = self._executor()
        order = _Reorder(len(tasks), WINDOW_PER_WORKER * self.workers, done)
        pending: dict[Any, int] = {}
        try:
            while order.next_yield < order.count:
                while order.may_submit():
                    pending[pool.submit(function, tasks[order.next_submit])] = order.next_submit
                    order.next_submit += 1
                finished, _ = wait(pending, return_when=FIRST_COMPLETED)
                for future in finished:
                    order.complete(pending.pop(future), future)
                yield from order.ready()
        finally:
            for future in pending:
                future.cancel()

    def close(self) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None

    def __enter__(self) -> ProcessExecutor:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def _import_distributed() -> Any:
    try:
        import distributed
    except ImportError as error:
        raise DaskMissingError(problem=str(error)) from None
    return distributed


def local_versions() -> dict[str, str]:
    """This process's versions of Python, reportgen (and its source) and the numerical packages.

    The source is the SHA-256 of reportgen's own files (its first 16 digits), so that two copies
    of one version that were edited differently are told apart.
    """
    import importlib.metadata

    from reportgen import __version__
    from reportgen.cache import software_fingerprint

    versions = {"python": ".".join(platform.python_version_tuple()[:2]), "reportgen": __version__,
                "reportgen source": str(software_fingerprint()["source"])[:16]}
    for name in CHECKED_PACKAGES:
        try:
            versions[name] = importlib.metadata.version(name)
        except importlib.metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions


def check_worker_versions(address: str, here: dict[str, str], workers: dict[str, Any]) -> None:
    """Raise :class:`ClusterMismatchError` unless every worker reports ``here``'s versions."""
    if not workers:
        raise ClusterMismatchError(address=address,
                                   problem="the scheduler has no workers")
    for worker, versions in sorted(workers.items()):
        if isinstance(versions, BaseException) or not isinstance(versions, dict):
            raise ClusterMismatchError(address=address,
                                       problem=f"worker {worker} cannot run reportgen ({versions})")
        differ = [f"{name} {versions.get(name, 'not installed')} (here {wanted})" for name, wanted in here.items()
                  if versions.get(name) != wanted]
        if differ:
            raise ClusterMismatchError(address=address,
                                       problem=f"worker {worker} has {', '.join(differ)}")


class _Settled:
    """A finished Dask future's outcome, fetched once, so that the future can be released at once."""

    def __init__(self, future: Any) -> None:
        self._error: BaseException | None = None
        self._result: Any = None
        try:
            self._result = future.result()
        except Exception as error:
            self._error = error

    def exception(self) -> BaseException | None:
        return self._error

    def result(self) -> Any:
        if self._error is not None:
            raise self._error
        return self._result


class DaskExecutor:
    """Tasks on a Dask cluster: the scheduler at ``address``, or ``workers`` local processes started here."""

    kind = "dask"

    def __init__(self, address: str | None = None, *, workers: int = 2) -> None:
        distributed = _import_distributed()
        self.address = address
        self._cluster: Any = None
        if address is None:
            self._cluster = distributed.LocalCluster(n_workers=max(1, workers), threads_per_worker=1, processes=True,
                                                     dashboard_address=None)
            self._client = distributed.Client(self._cluster)
        else:
            try:
                self._client = distributed.Client(address, timeout=CLUSTER_CONNECT_TIMEOUT)
            except (OSError, TimeoutError, ValueError) as error:
                raise ClusterUnreachableError(address=address,
                                              reason=str(error) or type(error).__name__) from None
        try:
            self.workers = max(1, sum(self._client.nthreads().values()))
            if address is not None:
                try:
                    reported = self._client.run(local_versions, on_error="return")
                except Exception as error:  # the workers could not even load the probe
                    raise ClusterMismatchError(address=address,
                                               problem=f"the workers cannot run reportgen ({error})") from None
                check_worker_versions(address, local_versions(), reported)
        except BaseException:
            self.close()
            raise

    def map(self, function: Callable[[T], R], tasks: Sequence[T], done: Done | None = None) -> Iterator[R]:
        distributed = _import_distributed()
        order = _Reorder(len(tasks), WINDOW_PER_WORKER * self.workers, done)
        running = distributed.as_completed()
        indices: dict[str, int] = {}
        pending: dict[str, Any] = {}

        def submit() -> None:
            while order.may_submit():
                future = self._client.submit(_call, function, tasks[order.next_submit], pure=False)
                indices[future.key] = order.next_submit
                pending[future.key] = future
                running.add(future)
                order.next_submit += 1

        try:
            submit()
            while order.next_yield < order.count:
                future = next(running)
                pending.pop(future.key, None)
                order.complete(indices.pop(future.key), _Settled(future))
                future.release()
                yield from order.ready()
                submit()
        finally:
            for future in pending.values():
                with contextlib.suppress(Exception):
                    future.cancel()

    def close(self) -> None:
        client, self._client = getattr(self, "_client", None), None
        if client is not None:
            with contextlib.suppress(Exception):
                client.close()
        cluster, self._cluster = self._cluster, None
        if cluster is not None:
            with contextlib.suppress(Exception):
                cluster.close()

    def __enter__(self) -> DaskExecutor:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def make_executor(jobs: int | None = None, *, cluster: str | None = None, dask: bool = False,
                  auto_minimum: int = 64) -> Executor:
    """The executor for the command line's ``--jobs`` and ``--cluster`` (and ``settings.executor``).

    ``cluster`` (a scheduler address) or ``dask`` (start a local Dask cluster, or use the
    scheduler of Dask's configuration when it names one) run on Dask. Otherwise ``jobs`` 1 runs
    here, ``jobs`` N in N worker processes; ``jobs`` None means every core, with stages of fewer
    than ``auto_minimum`` tasks run here.
    """
    if cluster is not None:
        return DaskExecutor(cluster)
    if dask:
        _import_distributed()
        import dask as dask_package

        configured = dask_package.config.get("scheduler-address", None)
        return DaskExecutor(configured, workers=jobs or available_cores())
    if jobs == 1:
        return SerialExecutor()
    if jobs is None:
        return ProcessExecutor(available_cores(), minimum_tasks=auto_minimum)
    return ProcessExecutor(jobs)
