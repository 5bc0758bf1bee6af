"""Run independent pieces of a calculation on a local process pool or on a Dask cluster.

Used by the energy stage's sensitivity and uncertainty batches and by ``freerun screen``: the
work is cut into chunks that do not depend on each other, :func:`map_chunks` runs
``fn(context, chunk)`` for every chunk and returns the results in the order of the chunks, so
the numbers are the same however the chunks were run.

Where the chunks run:

* ``scheduler=None`` (default): a local process pool of ``jobs`` workers (default: the CPU
  count); one chunk, or ``jobs=1``, runs in this process. The shared ``context`` is sent to each
  worker once, when it starts.
* ``scheduler="local-cluster"``: a Dask distributed ``LocalCluster`` started on this machine for
  the run and closed after it.
* any other value: the address of a running Dask scheduler (``tcp://host:8786``); the context is
  scattered to the workers once (``broadcast``) and the chunks submitted as tasks.

Dask is the optional ``dask`` extra (``pip install 'freerun[dask]'``), imported only when a
scheduler is named. A build passes its ``--scheduler``/``--jobs`` to the stage kernels through
the environment variables :data:`SCHEDULER_ENV` and :data:`JOBS_ENV` (never through the project
file: where the work runs does not change a result, so it must not change a stage-cache key).
"""

from __future__ import annotations

import multiprocessing
import os
import re
import threading
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor
from typing import Any

from calcs.errors import ProjectError

__all__ = ["JOBS_ENV", "LOCAL_CLUSTER", "SCHEDULER_ENV", "STORE_ENV", "SweepStore", "check_jobs", "check_scheduler",
           "describe", "from_environment", "map_chunks", "store_from_environment"]

#: ``scheduler`` value that starts a Dask LocalCluster on this machine.
LOCAL_CLUSTER = "local-cluster"
#: Environment variables a build sets for its stage kernels.
SCHEDULER_ENV = "FREERUN_SCHEDULER"
JOBS_ENV = "FREERUN_JOBS"
#: Folder of stored price-independent sweep tables (set by a build unless ``--fresh``).
STORE_ENV = "FREERUN_SWEEP_STORE"

_ADDRESS = re.compile(r"^[a-z]+://\S+$|^[\w.-]+:\d+$")
_CONTEXT: Any = None  # the shared context inside a local worker process


def check_scheduler(scheduler: str | None) -> str | None:
    """The scheduler unchanged if it is None, ``local-cluster`` or an address; else ProjectError."""
    if scheduler is None or scheduler == LOCAL_CLUSTER or _ADDRESS.match(scheduler):
        return scheduler
    msg = (f"--scheduler {scheduler!r}: not a scheduler address; allowed: tcp://HOST:PORT, HOST:PORT "
           f"or {LOCAL_CLUSTER}")
    raise ProjectError(msg)


def check_jobs(jobs: int | None) -> int | None:
    """``jobs`` unchanged if None or a whole number ≥ 1; else ProjectError."""
    if jobs is not None and (isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1):
        msg = f"--jobs {jobs!r}: must be a whole number of worker processes, 1 or more"
        raise ProjectError(msg)
    return jobs


def from_environment() -> tuple[str | None, int | None]:
    """(scheduler, jobs) a build passed to this kernel; (None, None) when run on its own."""
    scheduler = os.environ.get(SCHEDULER_ENV) or None
    jobs_text = os.environ.get(JOBS_ENV) or ""
    try:
        jobs = int(jobs_text) if jobs_text else None
    except ValueError:
        msg = f"environment {JOBS_ENV}={jobs_text!r}: must be a whole number of worker processes, 1 or more"
        raise ProjectError(msg) from None
    return check_scheduler(scheduler), check_jobs(jobs)


def describe(scheduler: str | None, jobs: int | None) -> str:
    """Plain words for where the chunks run (for the manifest and the report)."""
    if scheduler is None:
        return f"local process pool ({jobs or os.cpu_count() or 1} workers)"
    if scheduler == LOCAL_CLUSTER:
        return f"Dask LocalCluster on this machine ({jobs or os.cpu_count() or 1} workers)"
    return f"Dask scheduler {scheduler}"


def _init_worker(context: Any) -> None:
    global _CONTEXT
    _CONTEXT = context


def _call(fn: Callable[[Any, Any], Any], chunk: Any) -> Any:
    return fn(_CONTEXT, chunk)


def _pool_context():
    # fork is the cheapest start, but forking a process that runs other threads (a notebook
    # kernel does) can deadlock the child: start those workers from a clean server process.
    if threading.active_count() > 1 and "forkserver" in multiprocessing.get_all_start_methods():
        return multiprocessing.get_context("forkserver")
    return multiprocessing.get_context()


def _run_local(fn, chunks, context, jobs):
    workers = max(1, min(jobs or os.cpu_count() or 1, len(chunks)))
    if workers == 1:
        return [fn(context, chunk) for chunk in chunks]
    with ProcessPoolExecutor(max_workers=workers, mp_context=_pool_context(), initializer=_init_worker,
                             initargs=(context,)) as pool:
        return list(pool.map(_call, [fn] * len(chunks), chunks))


def _run_dask(fn, chunks, context, scheduler, jobs):
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        msg = ("--scheduler needs the optional Dask extra, which is not installed: "
               "pip install 'freerun[dask]' (or run without --scheduler for the local process pool)")
        raise ProjectError(msg) from None
    cluster = None
    if scheduler == LOCAL_CLUSTER:
        workers = max(1, min(jobs or os.cpu_count() or 1, len(chunks)))
        try:
            cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=None)
        except Exception as exc:  # the cluster's own start-up failure, in one line
            msg = f"--scheduler {LOCAL_CLUSTER}: could not start a Dask cluster here ({type(exc).__name__}: {exc})"
            raise ProjectError(" ".join(msg.split())) from None
        address: Any = cluster
    else:
        address = scheduler
    try:
        try:
            client = Client(address, timeout="10s")
        except (OSError, TimeoutError) as exc:
            msg = f"--scheduler {scheduler}: cannot connect to a Dask scheduler ({type(exc).__name__}: {exc})"
            raise ProjectError(" ".join(msg.split())) from None
        with client:
            shared = client.scatter(context, broadcast=True) if context is not None else None
            futures = [client.submit(fn, shared, chunk, pure=False) for chunk in chunks]
            return client.gather(futures)
    finally:
        if cluster is not None:
            cluster.close()


def map_chunks(fn: Callable[[Any, Any], Any], chunks: Sequence[Any], *, context: Any = None,
               scheduler: str | None = None, jobs: int | None = None) -> list[Any]:
    """``[fn(context, chunk) for chunk in chunks]``, run in parallel.

    Parameters
    ----------
    fn : callable
        A module-level function (it is pickled to the workers) ``fn(context, chunk)``.
    chunks : sequence
        Independent pieces of work (picklable).
    context : object, optional
        Data every chunk needs (picklable); sent to each worker once.
    scheduler : str, optional
        None (local process pool), ``"local-cluster"`` or a Dask scheduler address.
    jobs : int, optional
        Workers of the local pool or the local cluster (default: the CPU count).

    Returns
    -------
    list
        The chunks' results, in the order of ``chunks``.

    Raises
    ------
    calcs.errors.ProjectError
        A bad ``scheduler`` or ``jobs``, Dask not installed, or no connection to the scheduler.
    """
    check_scheduler(scheduler)
    check_jobs(jobs)
    chunks = list(chunks)
    if not chunks:
        return []
    if scheduler is None:
        return _run_local(fn, chunks, context, jobs)
    return _run_dask(fn, chunks, context, scheduler, jobs)


class SweepStore:
    """A folder of price-independent sweep tables, ``<root>/<key>.parquet`` with a SHA-256 beside it.

    A build keeps it next to its stage cache (``<build parent>/.stage-cache/sweeps/``): when only
    prices or carbon factors change, the energy stage re-executes but re-prices the stored table
    instead of simulating every variant again (:func:`calcs.batch.sweep_totals`). An entry whose
    digest does not match is deleted and recomputed; entries are written to a temporary file
    and renamed into place.
    """

    def __init__(self, root) -> None:
        from pathlib import Path

        self.root = Path(root)
        self.reused = 0

    def _paths(self, key: str):
        return self.root / f"{key}.parquet", self.root / f"{key}.sha256"

    def fetch(self, key: str):
        """The stored table, or None when absent or damaged (then removed)."""
        import hashlib

        import pandas as pd

        table, digest = self._paths(key)
        if not (table.is_file() and digest.is_file()):
            return None
        data = table.read_bytes()
        if hashlib.sha256(data).hexdigest() != digest.read_text(encoding="utf-8").strip():
            table.unlink(missing_ok=True)
            digest.unlink(missing_ok=True)
            return None
        import io

        self.reused += 1
        return pd.read_parquet(io.BytesIO(data))

    def put(self, key: str, frame) -> None:
        """Store a table (atomically: temporary files renamed into place)."""
        import hashlib
        import io

        self.root.mkdir(parents=True, exist_ok=True)
        buffer = io.BytesIO()
        frame.to_parquet(buffer, index=False)
        data = buffer.getvalue()
        table, digest = self._paths(key)
        for path, content in ((table, data), (digest, hashlib.sha256(data).hexdigest().encode())):
            tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
            tmp.write_bytes(content)
            os.replace(tmp, path)


def store_from_environment() -> SweepStore | None:
    """The sweep store a build named for this kernel; None when run on its own or with ``--fresh``."""
    folder = os.environ.get(STORE_ENV) or ""
    return SweepStore(folder) if folder else None
