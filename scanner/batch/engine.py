"""The boards' tasks on Dask: a local cluster of worker processes, or an existing scheduler's workers."""
from __future__ import annotations

import logging
import os
import queue
import traceback
import uuid
from contextlib import contextmanager
from dataclasses import dataclass, replace

from scanner.batch.rows import BoardRow
from scanner.batch.task import BoardJob, error_row, run_job
from scanner.errors import InputError

#: seconds to wait for an existing scheduler to answer
CONNECT_TIMEOUT_S = 20
#: the progress display is refreshed at least this often (seconds) while boards run
REFRESH_S = 0.5


@dataclass(frozen=True)
class Cluster:
    """A connected Dask client and what it runs on."""

    client: object  # distributed.Client
    description: str
    workers: int


def default_workers() -> int:
    """One worker process per core this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:
        return max(1, os.cpu_count() or 1)


@contextmanager
def connect(scheduler: str | None, workers: int | None):
    """A :class:`Cluster`: a new local cluster of ``workers`` single-threaded processes (default one per
    core), closed on exit; or a client of the scheduler at ``scheduler`` (``tcp://host:port``)."""
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise InputError("nearfar batch needs Dask: pip install 'nearfar[batch]'") from None
    if scheduler is None:
        n = workers or default_workers()
        # processes, not threads: a scan holds the GIL most of the time. No dashboard, and the scheduler's
        # small HTTP server on a free port rather than the usual one, which another cluster may hold.
        # Dask's own log stays quiet (it reports, say, heartbeats lost while the cluster closes): what
        # matters to the user comes back as the boards' rows.
        with LocalCluster(n_workers=n, threads_per_worker=1, processes=True, host="127.0.0.1",
                          dashboard_address=None, scheduler_kwargs={"dashboard_address": ":0"},
                          silence_logs=logging.CRITICAL) as local, Client(local) as client:
            yield Cluster(client, f"local cluster of {n} worker process{'es' * (n != 1)}", n)
        return
    try:
        client = Client(scheduler, timeout=CONNECT_TIMEOUT_S)
    except (OSError, TimeoutError, ValueError, TypeError) as exc:
        raise InputError(f"cannot reach the Dask scheduler: {' '.join(str(exc).split())}", path=scheduler) from None
    with client:
        n = len(client.scheduler_info().get("workers", {}))
        yield Cluster(client, f"Dask scheduler {scheduler} ({n} worker{'s' * (n != 1)} at the start)", n)


def run_jobs(cluster: Cluster, jobs: list[BoardJob], progress) -> list[BoardRow]:
    """Every job's row, in the order they finish; ``progress`` hears ``started(folder)`` and ``finished(folder, row)``
    and is ``tick``-ed while waiting."""
    client = cluster.client
    token = uuid.uuid4().hex[:12]
    topic = f"nearfar-batch-{token}"
    events: queue.Queue = queue.Queue()
    client.subscribe_topic(topic, lambda event: events.put(("started", event[1]["started"])))
    submitted = {}
    for job in jobs:
        job = replace(job, topic=topic)
        future = client.submit(run_job, job, key=f"nearfar-{job.folder}-{token}", pure=False)
        submitted[future.key] = (future, job)
        future.add_done_callback(lambda f: events.put(("done", f.key)))
    rows = []
    try:
        while submitted:
            try:
                kind, key = events.get(timeout=REFRESH_S)
            except queue.Empty:
                progress.tick()
                continue
            if kind == "started":
                progress.started(key)
            elif key in submitted:
                future, job = submitted.pop(key)
                row = _row(future, job)
                future.release()
                rows.append(row)
                progress.finished(job.folder, row)
    finally:
        client.unsubscribe_topic(topic)
        for future, _ in submitted.values():
            future.cancel()
    return rows


def _row(future, job: BoardJob) -> BoardRow:
    """The task's own row, or an error row when the task itself failed (worker died, nearfar missing there)."""
    if future.status == "finished":
        return future.result()
    from distributed import KilledWorker

    exc = future.exception() if future.status == "error" else None
    details = "".join(traceback.format_exception(exc)) if exc is not None else f"task {future.status}"
    if isinstance(exc, KilledWorker):
        exc = RuntimeError("the worker process died while scanning this board, on every attempt "
                           "(out of memory, or a crash)")
    elif isinstance(exc, ModuleNotFoundError) and (exc.name or "").split(".")[0] == "scanner":
        exc = RuntimeError("the worker cannot import nearfar: install nearfar on every worker")
    elif exc is None:
        exc = RuntimeError(f"the cluster dropped the task ({future.status})")
    return error_row(job, exc, details, 0.0)
