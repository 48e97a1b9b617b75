"""Dask as a ventflux executor (``ventflux.plugin_api.Executor``): the series' items and the survey's vents.

Where:

* ``"threads"``: Dask's threaded scheduler in this process (no start-up; NumPy releases the GIL in the heavy
  loops, so threads help on small manifests);
* ``"local"`` or ``"processes"``: a ``dask.distributed`` cluster on this machine, one single-threaded worker
  process per core (or ``workers``), started and closed with the executor;
* an address (``tcp://host:8786``, ``host:8786``, ``tls://...``): an existing ``dask.distributed`` scheduler.

Why the local workers are set up as they are (measured with ``benchmarks/bench_series_scaling.py``, see the
README): every worker is single-threaded, with NumPy's BLAS/OpenMP pools at one thread, so two processes on
two cores do not fight over them; and the workers' C allocator keeps freed blocks of up to 128 MiB instead
of handing every array above 128 KiB back to the system. ``dask.distributed`` starts workers with
``MALLOC_TRIM_THRESHOLD_=65536`` (to return memory early), which in glibc also switches off the growing mmap
threshold, so each of the estimator's ~1.6 MB temporaries is mapped and unmapped afresh: that alone made a
worker spend about 40 % more CPU time per item than the same code in a plain loop. Memory per worker stays
bounded all the same (the estimator works in chunks of ``estimate.CHUNK_VALUES`` values).
"""

from __future__ import annotations

import os
import re
import warnings
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from typing import Any

#: Allocator settings of local worker processes (glibc; ignored elsewhere): see the module docstring.
#: ``M_MMAP_THRESHOLD`` 32 MiB (glibc's own upper bound for its dynamic threshold) and ``M_TRIM_THRESHOLD``
#: 128 MiB (the retained free memory per worker).
ALLOCATOR_ENV = {"MALLOC_MMAP_THRESHOLD_": str(32 * 2**20), "MALLOC_TRIM_THRESHOLD_": str(128 * 2**20)}
#: One thread per worker for every numerical thread pool (processes are the parallelism).
THREAD_ENV = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}

LOCAL = ("local", "processes")
THREADS = "threads"
_ADDRESS = re.compile(r"^([a-z][a-z0-9+.-]*://)?[A-Za-z0-9_.\-\[\]:]+:\d{1,5}$")


def accepts(where: str) -> bool:
    """Whether ``where`` names a Dask executor: ``local``/``processes``, ``threads`` or a scheduler address."""
    return where in LOCAL or where == THREADS or bool(_ADDRESS.match(where))


def tune_allocator() -> bool:
    """Apply ``ALLOCATOR_ENV`` to this process's glibc allocator at run time (``mallopt``); False if not glibc."""
    import ctypes
    import ctypes.util

    name = ctypes.util.find_library("c")
    if not name or not os.uname().sysname == "Linux":
        return False
    try:
        libc = ctypes.CDLL(name)
        m_trim_threshold, m_mmap_threshold = -1, -3  # glibc malloc.h
        ok = libc.mallopt(m_mmap_threshold, int(ALLOCATOR_ENV["MALLOC_MMAP_THRESHOLD_"]))
        ok &= libc.mallopt(m_trim_threshold, int(ALLOCATOR_ENV["MALLOC_TRIM_THRESHOLD_"]))
        return bool(ok)
    except (OSError, AttributeError):
        return False


class DaskExecutor:
    """Runs ``fn(*args)`` per argument tuple on Dask; results in the order given (``Executor`` protocol)."""

    def __init__(self, name: str, client=None, threads: int | None = None):
        self.name = name
        self.client = client  # None: the threaded scheduler
        self.threads = threads  # threads of the threaded scheduler (default: one per core)

    def share(self, obj):
        """``obj`` sent once to every worker (a future standing for it in task arguments), or ``obj`` itself
        on threads: inputs every task needs (the shared draws, the site) are not serialised per task."""
        if self.client is None:
            return obj
        return self.client.scatter([obj], broadcast=True, hash=False)[0]  # a list: a dict would be split

    def map(self, fn: Callable, arguments: Sequence[tuple],
            on_done: Callable[[int, Any], None] | None = None) -> list:
        if not arguments:
            return []
        if self.client is None:
            import dask

            tasks = [dask.delayed(fn, pure=False)(*a) for a in arguments]
            out = list(dask.compute(*tasks, scheduler="threads", num_workers=self.threads))
            if on_done is not None:
                for i, r in enumerate(out):
                    on_done(i, r)
            return out
        from distributed import as_completed

        futures = [self.client.submit(fn, *a, pure=False) for a in arguments]
        index = {f.key: i for i, f in enumerate(futures)}
        results: list = [None] * len(futures)
        for fut in as_completed(futures):
            i = index[fut.key]
            results[i] = fut.result()
            fut.release()
            if on_done is not None:
                on_done(i, results[i])
        return results


def _quiet_logs() -> None:
    import logging

    # The cluster's own start/stop chatter is not the user's business; errors still show.
    for name in ("distributed", "distributed.nanny", "distributed.scheduler", "distributed.worker"):
        logging.getLogger(name).setLevel(logging.ERROR)


def start_local_cluster(workers: int | None = None):
    """A local ``dask.distributed`` cluster of single-threaded worker processes set up as described above."""
    import dask
    from distributed import LocalCluster

    _quiet_logs()
    n = workers or os.cpu_count() or 1
    environ = {**dask.config.get("distributed.nanny.pre-spawn-environ", {}), **ALLOCATOR_ENV, **THREAD_ENV}
    with dask.config.set({"distributed.nanny.pre-spawn-environ": environ}), warnings.catch_warnings():
        # Without a dashboard the scheduler still serves its health page, on another port when 8787 is taken.
        warnings.filterwarnings("ignore", message="Port .* is already in use")
        return LocalCluster(n_workers=n, threads_per_worker=1, processes=True, dashboard_address=None,
                            silence_logs=40)


@contextmanager
def open_dask(where: str, workers: int | None = None) -> Iterator[DaskExecutor]:
    """A ``DaskExecutor`` for ``where`` (see the module docstring), closed (and its local cluster stopped) on exit."""
    if where == THREADS:
        yield DaskExecutor(THREADS, threads=workers)
        return
    from distributed import Client

    _quiet_logs()
    cluster = start_local_cluster(workers) if where in LOCAL else None
    if cluster is not None:
        client = Client(cluster)
    else:
        try:
            client = Client(where, timeout="20s")
        except OSError as err:
            from ventflux.plugin_api import InputError

            raise InputError("--scheduler", where, f"the address of a running dask.distributed scheduler "
                             f"({str(err).splitlines()[0] if str(err) else type(err).__name__})") from None
    try:
        yield DaskExecutor(f"a local Dask cluster ({len(client.scheduler_info()['workers'])} workers)"
                           if cluster is not None else f"the Dask scheduler at {where}", client)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def executor_info():
    from ventflux.plugin_api import ExecutorInfo

    return ExecutorInfo(name="dask", summary="'local' (a Dask cluster on this machine, one worker process per core), "
                                             "'threads' or a dask.distributed scheduler address (tcp://host:8786)",
                        accepts=accepts, open=open_dask, provider="ventflux-series")
