"""Run independent pieces of a calculation on a local process pool or on a Dask cluster.

Used by the energy stage's sensitivity and uncertainty batches and by ``freerun screen``: the
work is cut into chunks that do not depend on each other, :func:`map_chunks` runs
``fn(context, chunk)`` for every chunk and returns the results in the order of the chunks, so
the numbers are the same however the chunks were run.

Where the chunks run:

* ``scheduler=None`` (default): a local process pool of ``jobs`` workers (default: the CPU
  count); one chunk, or ``jobs=1``, runs in this process. The shared ``context`` is pickled once
  and unpickled once per worker. A stage may start the pool ahead (:func:`start_workers`), so
  the workers' start-up and imports overlap with its wait for earlier stages.
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

__all__ = ["JOBS_ENV", "LOCAL_CLUSTER", "SCHEDULER_ENV", "STORE_ENV", "THREADS_ENV", "LocalWorkers", "SweepStore",
           "check_jobs", "check_scheduler", "describe", "from_environment", "map_chunks", "start_workers",
           "store_from_environment"]

#: ``scheduler`` value that starts a Dask LocalCluster on this machine.
LOCAL_CLUSTER = "local-cluster"
#: Environment variables a build sets for its stage kernels.
SCHEDULER_ENV = "FREERUN_SCHEDULER"
JOBS_ENV = "FREERUN_JOBS"
#: Folder of stored price-independent sweep tables (set by a build unless ``--fresh``).
STORE_ENV = "FREERUN_SWEEP_STORE"

#: Threads of the compiled loops in one process (read by :mod:`calcs.thermal`); the pool's
#: workers set it to 1.
THREADS_ENV = "FREERUN_THREADS"

_ADDRESS = re.compile(r"^[a-z]+://\S+$|^[\w.-]+:\d+$")


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


_CONTEXTS: dict[int, Any] = {}  # inside a local worker: the shared context of the current map, by token
_TOKENS = iter(range(1, 1 << 62))


def _start_worker(preload: Sequence[str]) -> None:
    import importlib

    os.environ[THREADS_ENV] = "1"  # the pool's processes are the parallelism: one thread each
    for module in preload:
        importlib.import_module(module)


def _call(fn: Callable[[Any, Any], Any], token: int, blob: bytes, chunk: Any) -> Any:
    if token not in _CONTEXTS:
        import pickle

        _CONTEXTS.clear()
        _CONTEXTS[token] = pickle.loads(blob)
    return fn(_CONTEXTS[token], chunk)


def _ready() -> int:
    return os.getpid()


def _pool_context():
    # fork is the cheapest start, but forking a process that runs other threads (a notebook
    # kernel does) can deadlock the child: start those workers from a clean server process.
    if threading.active_count() > 1 and "forkserver" in multiprocessing.get_all_start_methods():
        return multiprocessing.get_context("forkserver")
    return multiprocessing.get_context()


def _stop_forkserver() -> None:
    # A notebook kernel shut down gracefully (Jupyter, nbval; a build's kernels are killed at
    # once) signals its remaining child processes one after another, waiting between signals;
    # the server process and multiprocessing's resource tracker ignore the first signals and
    # held the kernel's end for about 2.6 s. multiprocessing has no public call to stop them;
    # without the private ones they simply end with the kernel.
    from multiprocessing import forkserver, resource_tracker

    for helper in (getattr(forkserver, "_forkserver", None), getattr(resource_tracker, "_resource_tracker", None)):
        stop = getattr(helper, "_stop", None)
        if stop is not None:
            stop()


class LocalWorkers:
    """A local process pool, started before its work arrives (see :func:`start_workers`).

    Its workers import the ``preload`` modules as they start (when the workers are forked from a
    server process, the server imports them once and every worker inherits them), so a stage can
    start the pool before it waits for its inputs and find it ready. :meth:`map` sends the shared
    context once per map (pickled once; each worker unpickles it once).
    """

    def __init__(self, jobs: int | None = None, preload: Sequence[str] = ()) -> None:
        check_jobs(jobs)
        self.jobs = jobs or os.cpu_count() or 1
        context = _pool_context()
        self._forkserver = context.get_start_method() == "forkserver"
        if self._forkserver and preload:
            context.set_forkserver_preload(list(preload))
        self._pool = ProcessPoolExecutor(max_workers=self.jobs, mp_context=context, initializer=_start_worker,
                                         initargs=(tuple(preload),))
        self._used = False
        # start every worker now, from a thread: launching the first worker waits for the server
        # process to import ``preload`` (about a second), which the caller need not wait for
        self._starter = threading.Thread(target=self._start, name="freerun-workers-start", daemon=True)
        self._starter.start()

    def _start(self) -> None:
        self._warm = [self._pool.submit(_ready) for _ in range(self.jobs)]

    def map(self, fn: Callable[[Any, Any], Any], chunks: Sequence[Any], context: Any = None) -> list[Any]:
        """``[fn(context, chunk) for chunk in chunks]`` on the pool's workers, in the order of ``chunks``."""
        import pickle

        self._used = True
        self._starter.join()
        token, blob = next(_TOKENS), pickle.dumps(context, protocol=pickle.HIGHEST_PROTOCOL)
        futures = [self._pool.submit(_call, fn, token, blob, chunk) for chunk in chunks]
        return [future.result() for future in futures]

    def close(self) -> None:
        """Stop the workers (idempotent).

        A pool that was never given work (the stage found its sweep in the store) is stopped
        at once rather than waited for while its workers are still importing.
        """
        self._starter.join()
        if not self._used:
            for process in list((getattr(self._pool, "_processes", None) or {}).values()):
                process.terminate()
        self._pool.shutdown(wait=True, cancel_futures=True)
        if self._forkserver:
            _stop_forkserver()

    def __enter__(self) -> LocalWorkers:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def start_workers(scheduler: str | None = None, jobs: int | None = None,
                  preload: Sequence[str] = ()) -> LocalWorkers | None:
    """Start the local process pool that :func:`map_chunks` will use, ahead of the work.

    Returns None where there is nothing to start here: a Dask ``scheduler`` (its workers are the
    cluster's) or ``jobs=1`` (the chunks then run in this process). ``preload``: modules the
    workers import as they start (for a stage: the calculation modules its chunks call).
    """
    check_scheduler(scheduler)
    check_jobs(jobs)
    if scheduler is not None or (jobs or os.cpu_count() or 1) == 1:
        return None
    return LocalWorkers(jobs, preload)


def _run_local(fn, chunks, context, jobs, workers):
    if workers is not None:
        return workers.map(fn, chunks, context)
    if max(1, min(jobs or os.cpu_count() or 1, len(chunks))) == 1:
        return [fn(context, chunk) for chunk in chunks]
    with LocalWorkers(min(jobs or os.cpu_count() or 1, len(chunks))) as pool:
        return pool.map(fn, chunks, context)


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
               scheduler: str | None = None, jobs: int | None = None,
               workers: LocalWorkers | None = None) -> list[Any]:
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
    workers : LocalWorkers, optional
        A local pool started earlier (:func:`start_workers`); used when ``scheduler`` is None.

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
        return _run_local(fn, chunks, context, jobs, workers)
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
