"""Execution backends for the sampling engine: executors with an ordered ``.map``.

:func:`uq.sampling.engine.stream` hands its tasks (picklable tuples for the top-level task function)
to any object with ``.map(fn, iterable)`` that returns the results in submission order. This
module provides the executors the tools use; none of them knows about blocks or chunks, so
the engine stays the one place where the plan is split, and every backend gives the same
numbers bit for bit.

* :func:`local_executor` — this process for one worker, a
  :class:`concurrent.futures.ProcessPoolExecutor` otherwise.
* :class:`DaskExecutor` — a ``distributed`` client. The objects every task shares (the model,
  the plan, the reducer) go to the cluster once; every task is submitted up front; results are gathered one future at a time in submission order, so the
  engine's ``progress`` callback advances as results arrive from the cluster. When a worker
  is lost mid-run, the scheduler re-runs its tasks elsewhere; because a task's result depends
  only on the task (the plan's rows are regenerated from the design record), the result is
  unchanged.
* :func:`dask_executor` — context manager that connects to a running scheduler (by address
  or by its scheduler file), or starts a loopback-only ``distributed.LocalCluster`` of
  single-threaded worker processes, and closes what it opened.
* :func:`executor_for` — the one place the command line's choice of where to run becomes
  one of the above.

Dask is an optional dependency, imported only when a Dask backend is asked for.
"""
from __future__ import annotations

from uq.errors import InputError, TransitRiskError

import functools
import logging
import os
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager
from typing import Any, Callable, Iterable, Iterator

import numpy as np
import threadpoolctl

from uq.sampling.allocator import keep_blocks_in_heap, worker_environment

__all__ = [
    "BackendError",
    "DaskUnavailableError",
    "DASK_EXTRA_HINT",
    "local_executor",
    "one_blas_thread",
    "DaskExecutor",
    "dask_executor",
    "executor_for",
]

#: Message of :class:`DaskUnavailableError`.
DASK_EXTRA_HINT = "the Dask backend needs the optional extra: pip install 'transit-risk[dask]'"


class BackendError(InputError):
    """An execution backend was asked for with invalid options."""


class DaskUnavailableError(TransitRiskError, ImportError):
    """The Dask backend was asked for but ``dask`` / ``distributed`` is not installed."""


def one_blas_thread(func: Callable) -> Callable:
    """Run ``func`` with every loaded BLAS library limited to one thread (threadpoolctl).

    The estimators make hundreds of small matrix products (the knowledge band's logistic
    fits, the value-of-information bootstrap, the PCE least squares). A threaded BLAS gains
    nothing on them and, when the cores are busy (other workers, other jobs), its threads
    spin and wait: the default under-ice assessment took 7.2 s instead of 2.5 s with both
    cores loaded (benchmarks/README.md). Parallel work here goes through workers, never
    through BLAS threads. One thread also makes the products the same whatever the machine's
    core count. The limit is lifted when ``func`` returns.
    """
    @functools.wraps(func)
    def limited(*args, **kwargs):
        with threadpoolctl.threadpool_limits(limits=1, user_api="blas"):
            return func(*args, **kwargs)
    return limited


def _check_count(value: Any, name: str) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise BackendError(f"{name} must be an integer >= 1; got {value!r}")
    return int(value)


def _import_distributed():
    try:
        import distributed
    except ImportError as exc:
        raise DaskUnavailableError(DASK_EXTRA_HINT) from exc
    return distributed


@contextmanager
def local_executor(workers: int) -> Iterator[ProcessPoolExecutor | None]:
    """Executor for ``workers`` local processes: None (this process) for one worker.

    Parameters
    ----------
    workers : int
        Number of worker processes [-], >= 1.

    Yields
    ------
    concurrent.futures.ProcessPoolExecutor or None
        Shut down (waiting for its tasks) on leaving the block.

    Raises
    ------
    BackendError
        ``workers`` is not an integer >= 1.
    """
    workers = _check_count(workers, "workers")
    if workers == 1:
        yield None
        return
    with ProcessPoolExecutor(workers, initializer=_start_worker) as pool:
        yield pool


def _start_worker() -> None:
    """Set up a worker process of :func:`local_executor` (the workers are ours): the command
    line's allocator thresholds, and one BLAS thread for the process's life (the workers
    share the cores among themselves; the input model's copula is a matrix product). A
    local Dask cluster's workers get the same through their environment (:func:`dask_executor`;
    Dask itself exports OPENBLAS_NUM_THREADS=1 to them)."""
    keep_blocks_in_heap()
    threadpoolctl.threadpool_limits(limits=1, user_api="blas")


def _identity(obj: Any) -> Any:
    return obj


class DaskExecutor:
    """Ordered ``.map`` over a ``distributed.Client`` for :func:`uq.sampling.engine.stream`.

    Parameters
    ----------
    client : distributed.Client
        A connected client (the caller owns it and closes it).
    retries : int, default 0
        Times the scheduler re-runs a task whose *function raised* [-]. The default is 0: the
        model is deterministic, so a task that raised once raises again; tasks lost with a
        worker are rescheduled by Dask's scheduler regardless of this setting.

    Notes
    -----
    A task of the engine is a tuple (design, model, reducer, input model, first block, last
    block); every task carries the same model and plan objects. ``map`` sends each object that
    all tasks share to the cluster once (as a small task that returns it, so a lost copy is
    recomputed like any lost result) and gives the tasks a reference to it, so a task's
    payload is a few hundred bytes whatever the model's size; later ``map`` calls with the
    same objects reuse those copies. It then submits
    every task with ``client.map(fn, tasks, retries=retries, pure=False)`` — ``pure=False`` so
    that equal-looking tasks are never merged — and yields ``future.result()`` in submission
    order. If the consumer stops early (an error downstream), the futures not yet collected
    are cancelled.
    """

    def __init__(self, client: Any, *, retries: int = 0) -> None:
        if isinstance(retries, bool) or not isinstance(retries, (int, np.integer)) or retries < 0:
            raise BackendError(f"retries must be an integer >= 0; got {retries!r}")
        self.client = client
        self.retries = int(retries)
        self._sent: dict[int, tuple[Any, Any]] = {}  # id -> (object, its cluster copy)

    def map(self, fn: Callable[[Any], Any], iterable: Iterable[Any]) -> Iterator[Any]:
        """Submit ``fn(task)`` for every task now; return an iterator of results in order."""
        tasks = self._scatter_shared_parts(list(iterable))
        futures = self.client.map(fn, tasks, retries=self.retries, pure=False) if tasks else []
        return self._results(futures)

    def _scatter_shared_parts(self, tasks: list) -> list:
        """Tasks with every object that all of them share replaced by one scattered copy.

        A copy is kept for the executor's lifetime and reused by later ``map`` calls that
        pass the same object (a study streams each replicate with its own call, all with
        one model), so the model crosses to the cluster once, not once per call.
        """
        if not tasks or not all(isinstance(t, tuple) for t in tasks):
            return tasks
        width = len(tasks[0])
        shared = [i for i in range(width)
                  if not isinstance(tasks[0][i], (int, float, str, bytes, type(None)))
                  and all(len(t) == width and t[i] is tasks[0][i] for t in tasks)]
        if not shared:
            return tasks
        refs = {i: self._reference(tasks[0][i]) for i in shared}
        return [tuple(refs.get(i, part) for i, part in enumerate(t)) for t in tasks]

    def _reference(self, obj: Any) -> Any:
        """The cluster's copy of ``obj``, sent on first use. Kept with the object itself, so
        its id cannot be reused by another object while the entry lives."""
        entry = self._sent.get(id(obj))
        if entry is None:
            # a task that returns the object (not client.scatter): if the worker holding it
            # is lost, the scheduler recomputes it from the task, as for any lost result
            entry = self._sent[id(obj)] = (obj, self.client.submit(_identity, obj, pure=False))
        return entry[1]

    def _results(self, futures: list) -> Iterator[Any]:
        done = 0
        try:
            for future in futures:
                yield future.result()
                future.release()
                done += 1
        finally:
            pending = futures[done:]
            if pending:
                self.client.cancel(pending)

    def __repr__(self) -> str:
        return f"DaskExecutor({self.client!r}, retries={self.retries})"


@contextmanager
def dask_executor(scheduler: str | None = None, *, scheduler_file: str | os.PathLike | None = None,
                  local_workers: int | None = None, retries: int = 0) -> Iterator[DaskExecutor]:
    """A :class:`DaskExecutor` on a running cluster or on a loopback ``LocalCluster``.

    Parameters
    ----------
    scheduler : str, optional
        Address of a running scheduler, e.g. ``"tcp://10.0.0.5:8786"``.
    scheduler_file : path, optional
        The JSON file a scheduler writes with ``--scheduler-file`` (how HPC batch jobs tell
        their workers and clients where the scheduler runs).
    local_workers : int, optional
        Without a scheduler: number of worker processes of the local cluster [-]
        (default: the number of CPUs). Each worker has one thread; the cluster listens on
        127.0.0.1 only and has no dashboard.
    retries : int, default 0
        See :class:`DaskExecutor`.

    Yields
    ------
    DaskExecutor
        The client (and the local cluster, if one was started) is closed on leaving.

    Raises
    ------
    DaskUnavailableError
        ``distributed`` is not installed.
    BackendError
        More than one of ``scheduler``, ``scheduler_file`` and ``local_workers``; an empty
        address; a scheduler file that is not a readable file; a worker count that is not an
        integer >= 1.

    Notes
    -----
    ``silence_logs=logging.WARNING`` is the ``LocalCluster`` default, stated here: the
    cluster lowers the chatter of its own loggers while it runs and restores their levels on
    close; no logging is configured by this module.
    """
    given = {name: value for name, value in (("scheduler", scheduler),
                                             ("scheduler_file", scheduler_file),
                                             ("local_workers", local_workers))
             if value is not None}
    if len(given) > 1:
        raise BackendError("give one of a scheduler address, a scheduler file or a local "
                           "worker count, not both; got "
                           + ", ".join(f"{k}={v!r}" for k, v in given.items()))
    if scheduler is not None and (not isinstance(scheduler, str) or not scheduler.strip()):
        raise BackendError(f"scheduler must be an address such as 'tcp://host:8786'; "
                           f"got {scheduler!r}")
    if scheduler_file is not None and not os.path.isfile(scheduler_file):
        raise BackendError(f"scheduler file {str(scheduler_file)!r} does not exist or is not a "
                           "file; expected the JSON file written by 'dask scheduler "
                           "--scheduler-file PATH'")
    if not given:
        local_workers = os.cpu_count() or 1
    if scheduler is None and scheduler_file is None:
        local_workers = _check_count(local_workers, "local_workers")
    distributed = _import_distributed()
    if scheduler is not None or scheduler_file is not None:
        target = dict(address=scheduler) if scheduler is not None else \
            dict(scheduler_file=os.fspath(scheduler_file))
        with distributed.Client(**target, set_as_default=False) as client:
            yield DaskExecutor(client, retries=retries)
        return
    import dask

    # the workers are ours: they start with the allocator thresholds of the command line
    # (uq.sampling.allocator), not the nanny's MALLOC_TRIM_THRESHOLD_=65536
    environ = dict(dask.config.get("distributed.nanny.pre-spawn-environ", {}) or {})
    environ.update(worker_environment())
    with dask.config.set({"distributed.nanny.pre-spawn-environ": environ}), \
            distributed.LocalCluster(
                n_workers=local_workers, threads_per_worker=1, processes=True,
                host="127.0.0.1", dashboard_address=None, silence_logs=logging.WARNING,
            ) as cluster, distributed.Client(cluster, set_as_default=False) as client:
        yield DaskExecutor(client, retries=retries)


@contextmanager
def executor_for(*, workers: int = 1, scheduler: str | None = None,
                 scheduler_file: str | os.PathLike | None = None,
                 local_cluster: int | None = None) -> Iterator[Any]:
    """The one place a tool turns "where to run" into an executor for the engine.

    A Dask executor when ``scheduler``, ``scheduler_file`` or ``local_cluster`` is given
    (:func:`dask_executor`), else :func:`local_executor` of ``workers`` processes (None: this
    process). The numbers never depend on the choice.
    """
    if scheduler is None and scheduler_file is None and local_cluster is None:
        with local_executor(workers) as executor:
            yield executor
        return
    with dask_executor(scheduler, scheduler_file=scheduler_file,
                       local_workers=local_cluster) as executor:
        yield executor
