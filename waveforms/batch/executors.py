"""Where the tasks run: a local process pool (a fresh worker per capture) or a Dask distributed cluster.

Both call `process_capture` and hand each entry to ``collect`` in the main
process as it arrives; a worker that dies becomes an error entry, never an
exception.
"""

from __future__ import annotations

import concurrent.futures as cf
import contextlib
import dataclasses
import importlib
import multiprocessing
import os
import sys
from collections import deque
from collections.abc import Callable, Sequence
from typing import Any

from ..errors import InvalidParameterError
from ..recipe import Recipe
from .task import CaptureTask, crash_entry, process_capture

#: Top-level packages whose already-imported modules the fork server pre-imports.
_PRELOAD_ROOTS = ("waveforms", "numpy", "scipy", "pandas", "pyarrow", "h5py", "matplotlib", "PIL", "jinja2", "tqdm",
                  "threadpoolctl")


def _warm_modules(recipe: Recipe) -> list[str]:
    """Import, here, what the recipe's stages will import; return the module names to pre-load.

    Workers are forked from a server that has imported these once, so a
    fresh process per capture costs a fork, not a fresh import of numpy,
    scipy, pandas and the package.
    """
    from ..io import importers
    from ..recipe import get_stage

    importers()
    for name in recipe.stage_names:
        lib = get_stage(name).library.split(":")[0]
        if lib:
            with contextlib.suppress(ImportError):
                importlib.import_module(lib)
    extras = ["waveforms.analysis", "waveforms.quality", "waveforms.motor.nameplate", "pyarrow.parquet", "threadpoolctl"]
    if "report" in recipe.stage_names:
        extras += ["waveforms.report.plots", "waveforms.report.html", "matplotlib.backends.backend_agg"]
    for extra in extras:
        with contextlib.suppress(ImportError):
            importlib.import_module(extra)
    with contextlib.suppress(ImportError):
        from ..detect import detector_names

        detector_names()  # loads the built-in detector modules
    names = sorted(m for m in list(sys.modules) if m.split(".")[0] in _PRELOAD_ROOTS and "._" not in m
                   and not m.startswith(("numpy.tests", "scipy._lib.tests")))
    return names


#: Variables that set the thread count of BLAS / OpenMP; when the user set any
#: of them, the workers keep what the libraries read from them.
THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


def worker_threads() -> int | None:
    """BLAS / OpenMP threads per worker process: 1, or None (leave as is) when the user set a thread variable.

    The parallelism is one capture per process (``--jobs``); threaded BLAS in
    every process would oversubscribe the cores (common practice, no source).
    """
    return None if any(os.environ.get(k) for k in THREAD_VARIABLES) else 1


def capture_threads(workers: int) -> int:
    """Threads each capture may use when ``workers`` captures run at once: the cores shared out, at least 1."""
    try:
        cores = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # not on every platform
        cores = os.cpu_count() or 1
    return max(1, cores // max(1, workers))


def _init_worker(threads: int | None) -> None:
    """Pool initializer: cap BLAS / OpenMP threads inside this worker (threadpoolctl), nothing else."""
    if threads is not None:
        from threadpoolctl import threadpool_limits

        threadpool_limits(limits=threads)  # kept for the life of the worker


def _mp_context(recipe: Recipe) -> multiprocessing.context.BaseContext:
    """The "forkserver" context; its server (started once per process) pre-imports what the recipe needs."""
    ctx = multiprocessing.get_context("forkserver")
    ctx.set_forkserver_preload(_warm_modules(recipe))
    return ctx


class _Pool:
    """A process pool and the worker processes it started (to end them on Ctrl-C)."""

    def __init__(self, workers: int, recipe: Recipe, fresh_workers: bool) -> None:
        self._before = set(multiprocessing.active_children())
        self.executor = cf.ProcessPoolExecutor(max_workers=workers, mp_context=_mp_context(recipe),
                                               initializer=_init_worker, initargs=(worker_threads(),),
                                               max_tasks_per_child=1 if fresh_workers else None)

    def kill(self) -> None:
        """Stop now: cancel what is queued and end the running workers."""
        # the pool's workers are children of this process started after the pool (multiprocessing.active_children)
        procs = [p for p in multiprocessing.active_children() if p not in self._before]
        for p in procs:
            with contextlib.suppress(Exception):
                p.terminate()
        for p in procs:
            with contextlib.suppress(Exception):
                p.join(timeout=5)
        # only then shut the executor down, waiting for its manager thread: shutting down first (without
        # waiting) raced with max_tasks_per_child=1, whose manager may start a replacement worker meanwhile
        self.executor.shutdown(wait=True, cancel_futures=True)


def run_local(todo: Sequence[CaptureTask], jobs: int, collect: Callable[[dict[str, Any]], None], recipe: Recipe,
               fresh_workers: bool = True) -> None:
    """Run tasks in a process pool, one fresh worker process per capture (unless ``fresh_workers`` is False).

    At most ``jobs`` tasks are in flight.  When the pool breaks (a worker
    killed), the tasks it held are retried alone; one that breaks the pool
    when alone is recorded as an error row.
    """
    if not todo:
        return
    # threads inside each capture (measurement blocks, speed windows) x workers never exceed the cores
    per_task = capture_threads(min(jobs, len(todo)))
    queue: deque[CaptureTask] = deque(dataclasses.replace(t, threads=per_task) for t in todo)
    suspects: deque[CaptureTask] = deque()
    pool: _Pool | None = None
    inflight: dict[cf.Future[dict[str, Any]], tuple[CaptureTask, bool]] = {}
    try:
        while queue or suspects or inflight:
            if pool is None:
                pool = _Pool(min(jobs, len(queue) + len(suspects)) or 1, recipe, fresh_workers)
            if suspects:
                if not inflight:
                    t = suspects.popleft()
                    inflight[pool.executor.submit(process_capture, t)] = (t, True)
            else:
                while queue and len(inflight) < jobs:
                    t = queue.popleft()
                    inflight[pool.executor.submit(process_capture, t)] = (t, False)
            finished, _ = cf.wait(list(inflight), return_when=cf.FIRST_COMPLETED)
            broken = False
            for fut in finished:
                t, alone = inflight.pop(fut)
                try:
                    entry = fut.result()
                except cf.process.BrokenProcessPool:
                    broken = True
                    if alone:
                        collect(crash_entry(t, "the worker process died while analysing this capture "
                                                "(killed, or out of memory?)"))
                    else:
                        suspects.append(t)
                except Exception as e:  # e.g. a result that cannot be sent back
                    collect(crash_entry(t, f"{type(e).__name__}: {e}"))
                else:
                    collect(entry)
            if broken:
                for fut in cf.as_completed(list(inflight)):
                    t, _alone = inflight.pop(fut)
                    try:
                        collect(fut.result())
                    except Exception:
                        suspects.append(t)
                pool.executor.shutdown(wait=False, cancel_futures=True)
                pool = None
    except BaseException:
        if pool is not None:
            pool.kill()
            pool = None
        raise
    finally:
        if pool is not None:
            pool.executor.shutdown(wait=True)


def run_dask(todo: Sequence[CaptureTask], scheduler: Any, collect: Callable[[dict[str, Any]], None]) -> None:
    """Run the same task function on a Dask distributed cluster."""
    if not todo:
        return
    try:
        from distributed import Client, as_completed
    except ImportError:
        raise InvalidParameterError("scheduler given but the 'distributed' package is not installed (pip install 'motor-waveforms[cluster]')") from None
    own = not isinstance(scheduler, Client)
    try:
        client = Client(scheduler) if own else scheduler
    except OSError as e:
        raise InvalidParameterError(f"scheduler {scheduler!r}: cannot connect ({e})") from None
    futures = []
    try:
        futures = [client.submit(process_capture, t, key=f"waveforms-capture-{t.key}-{os.getpid()}-{i}", pure=False)
                   for i, t in enumerate(todo)]
        by_key = {f.key: t for f, t in zip(futures, todo, strict=True)}
        for fut in as_completed(futures):
            t = by_key[fut.key]
            try:
                entry = fut.result()
            except Exception as e:  # e.g. KilledWorker: the capture killed its workers
                entry = crash_entry(t, f"{type(e).__name__}: {e}")
            collect(entry)
            fut.release()
    except BaseException:
        client.cancel(futures)
        raise
    finally:
        if own:
            client.close()
