"""Independent tasks on a Dask cluster, results handed back in the order of the tasks.

The embedded default starts a local cluster (``distributed.LocalCluster``) with one worker
process per core and one thread per worker; ``scheduler`` connects to an existing cluster
instead (``tcp://host:8786``). Results come back in task order whatever order the workers
finish in, so a caller that folds them (merging audit summaries) gets the same answer on
any cluster. Each result is released once handed over, so the client holds one finished
result at a time beyond the ones still running.

Needs the optional packages ``dask`` and ``distributed`` (``pip install
'shufflecheck[dask]'``).

References
----------
.. [1] M. Rocklin, "Dask: Parallel computation with blocked algorithms and task
       scheduling", Proceedings of the 14th Python in Science Conference (2015) 130-136.
"""

from __future__ import annotations

import contextlib
import logging
import os
import warnings
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from typing import Any

from shufflecheck.common.errors import InputError

__all__ = ["Cluster", "Session", "available", "peak_memory_mb", "run_in_order", "session"]


def peak_memory_mb() -> float:
    """Peak resident memory of this process in MB (Linux ``VmHWM``; else ``ru_maxrss``)."""
    try:
        with open("/proc/self/status", encoding="ascii") as handle:
            for line in handle:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 1024
    except OSError:
        pass
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def available() -> bool:
    """Whether dask and distributed can be imported."""
    try:
        import dask  # noqa: F401
        import distributed  # noqa: F401
    except ImportError:
        return False
    return True


@dataclass(frozen=True)
class Cluster:
    """Where tasks ran: ``address`` of the scheduler, ``workers`` and whether the cluster
    was started here (``local``)."""

    address: str
    workers: int
    local: bool

    def describe(self) -> str:
        where = "local cluster" if self.local else f"cluster at {self.address}"
        return f"dask, {where}, {self.workers} worker{'s' if self.workers != 1 else ''}"


@contextlib.contextmanager
def _client(
    scheduler: str | None, workers: int | None, processes: bool
) -> Iterator[tuple[Any, Cluster]]:
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise InputError(
            "the Dask engine needs the packages dask and distributed "
            "(pip install 'shufflecheck[dask]')",
            argument="engine",
        ) from None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        if scheduler is not None:
            try:
                client = Client(scheduler, timeout="10s")
            except (OSError, TimeoutError, ValueError) as exc:
                raise InputError(
                    f"cannot reach the Dask scheduler at {scheduler} ({exc})",
                    argument="scheduler",
                ) from None
            count = len(client.scheduler_info().get("workers", {}))
            try:
                yield client, Cluster(scheduler, count, local=False)
            finally:
                client.close()
            return
        count = (os.cpu_count() or 1) if workers is None else workers
        if count < 1:
            raise InputError(f"workers must be at least 1, got {count}", argument="workers")
        import dask

        # Two of distributed's defaults cost the numpy work of these tasks dearly (measured
        # on the 2-core machine, the monitoring update of 50,000 decks): worker processes
        # start with MALLOC_TRIM_THRESHOLD_=65536, which also switches off glibc's adaptive
        # mmap threshold, so every large temporary array is mapped and faulted in afresh
        # (7x slower); and the statistical profiler samples each task's stack every 10 ms
        # (a third slower). Local clusters here start without both.
        environ = dict(dask.config.get("distributed.nanny.pre-spawn-environ", {}))
        environ.pop("MALLOC_TRIM_THRESHOLD_", None)
        settings = {
            "distributed.nanny.pre-spawn-environ": environ,
            "distributed.worker.profile.enabled": False,
        }
        with dask.config.set(settings):
            cluster = LocalCluster(
                n_workers=count,
                threads_per_worker=1,
                processes=processes,
                dashboard_address=":0",
                silence_logs=logging.ERROR,
            )
        client = Client(cluster)
        try:
            yield client, Cluster(cluster.scheduler_address, count, local=True)
        finally:
            client.close()
            cluster.close()


def run_in_order(
    function: Callable[[Any], Any],
    items: Sequence[Any],
    *,
    scheduler: str | None = None,
    workers: int | None = None,
    processes: bool = True,
    on_cluster: Callable[[Cluster], None] | None = None,
    report: dict[str, Any] | None = None,
) -> Iterator[Any]:
    """``function(item)`` for every item on a Dask cluster, yielded in the order of ``items``.

    Parameters
    ----------
    function : callable
        A module-level function (it is sent to the workers by reference).
    items : sequence
        One task per item.
    scheduler : str, optional
        Address of an existing scheduler; default: start a local cluster.
    workers : int, optional
        Workers of a local cluster (default: one per core).
    processes : bool
        Local workers as processes (default) or as threads of this process.
    on_cluster : callable, optional
        Called once with the :class:`Cluster` before the first result.
    report : dict, optional
        Filled after the last result with ``worker_peak_mb``: each worker's peak resident
        memory in MB (the memory a task needed, with the worker's own).
    """
    with _client(scheduler, workers, processes) as (client, cluster):
        if on_cluster is not None:
            on_cluster(cluster)
        futures = client.map(function, list(items), pure=False)
        try:
            for future in futures:
                yield future.result()
                future.release()
            if report is not None:
                report["worker_peak_mb"] = client.run(peak_memory_mb)
        finally:
            client.cancel([f for f in futures if not f.done()])


class Session:
    """Tasks with dependencies on one cluster (see :func:`session`).

    ``submit(function, *args)`` starts ``function(*args)`` on a worker and returns a future;
    a future among ``args`` is replaced by its result on the worker, so a chain of tasks
    (each taking the one before) runs in order while independent chains run side by side.
    """

    def __init__(self, client: Any, cluster: Cluster) -> None:
        self._client = client
        self.cluster = cluster

    def submit(self, function: Callable[..., Any], *args: Any) -> Any:
        """``function(*args)`` on a worker (a module-level function); returns a future."""
        return self._client.submit(function, *args, pure=False)

    @staticmethod
    def result(future: Any) -> Any:
        """The result of a future, waiting for it (a task's exception is raised here)."""
        return future.result()

    @staticmethod
    def done(future: Any) -> bool:
        """Whether a future has finished (successfully or not)."""
        return bool(future.done())

    def worker_peak_mb(self) -> dict[str, float]:
        """Each worker's peak resident memory in MB so far."""
        return dict(self._client.run(peak_memory_mb))


@contextlib.contextmanager
def session(
    scheduler: str | None = None, workers: int | None = None, processes: bool = True
) -> Iterator[Session]:
    """A :class:`Session` on a Dask cluster: an existing one at ``scheduler``, else a local
    cluster of ``workers`` workers (default one per core; as processes unless
    ``processes`` is False) started here and closed on leaving. Futures still running on
    leaving are cancelled."""
    with _client(scheduler, workers, processes) as (client, cluster):
        yield Session(client, cluster)
