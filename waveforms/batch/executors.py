"""Where the tasks run: local worker processes (a fresh one per capture, or a pool) or a Dask distributed cluster.

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
import select
import signal
import sys
import threading
import time
from collections import deque
from collections.abc import Callable, Sequence
from multiprocessing.connection import Connection
from multiprocessing.connection import wait as mp_wait
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
    extras = ["waveforms.analysis", "waveforms.quality", "waveforms.motor.nameplate", "pyarrow.parquet", "threadpoolctl",
              # a trend log found among the inputs switches to the trend recipe in the worker
              "waveforms.io.trend", "waveforms.trends.stages", "waveforms.trends.analysis", "waveforms.trends.detect",
              "waveforms.trends.result", "waveforms.trends.report"]
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


def _init_worker(threads: int | None, main_pid: int | None = None, result_fd: int | None = None) -> None:
    """Worker set-up: ignore Ctrl-C (the main process ends its workers), watch the main process, cap BLAS threads.

    A terminal's Ctrl-C reaches the whole process group; the workers leave it
    to the main process, which stops them itself (no traceback from each).
    The watch ends this worker as soon as the main process is gone (killed,
    even with SIGKILL), so no worker outlives it and writes on.
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if main_pid is not None:
        threading.Thread(target=_watch_main, args=(main_pid, result_fd), name="waveforms-main-watch", daemon=True).start()
    if threads is not None:
        from threadpoolctl import threadpool_limits

        threadpool_limits(limits=threads)  # kept for the life of the worker


def _main_gone(pid: int) -> bool:
    """True when process ``pid`` has ended (gone, or a zombie nobody reaped yet)."""
    try:
        with open(f"/proc/{pid}/stat", "rb") as fh:
            return fh.read().rsplit(b")", 1)[-1].split()[0] in (b"Z", b"X")
    except FileNotFoundError:
        return True
    except OSError:  # no /proc: ask the process table
        try:
            os.kill(pid, 0)
        except ProcessLookupError:
            return True
        except OSError:
            return False
        return False


def _watch_main(main_pid: int, result_fd: int | None, every_s: float = 0.25) -> None:
    """Worker thread: end this process at once when the main process is gone (``os._exit``, nothing flushed)."""
    poller = None
    if result_fd is not None and hasattr(select, "poll"):
        poller = select.poll()
        # the write end of the result pipe reports POLLERR once the main process (its reader) is gone
        poller.register(result_fd, select.POLLERR | select.POLLHUP)
    while True:
        if poller is not None:
            events = poller.poll(every_s * 1000)
            if any(ev & (select.POLLERR | select.POLLHUP) for _fd, ev in events):
                os._exit(_MAIN_GONE_EXIT)
            if any(ev & select.POLLNVAL for _fd, ev in events):
                poller = None  # the result was sent and the pipe closed: watch the process alone
        else:
            time.sleep(every_s)
        if _main_gone(main_pid):
            os._exit(_MAIN_GONE_EXIT)


#: Exit status of a worker that ended itself because the main process was gone.
_MAIN_GONE_EXIT = 75


def _mp_context(recipe: Recipe) -> multiprocessing.context.BaseContext:
    """The "forkserver" context; its server (started once per process) pre-imports what the recipe needs."""
    ctx = multiprocessing.get_context("forkserver")
    ctx.set_forkserver_preload(_warm_modules(recipe))
    return ctx


def _fresh_worker(task: CaptureTask, conn: Connection, threads: int | None, main_pid: int) -> None:
    """Body of a one-capture worker process: analyse ``task``, send ``("entry", entry)`` or ``("crash", why)``."""
    _init_worker(threads, main_pid, conn.fileno())
    try:
        msg: tuple[str, Any] = ("entry", process_capture(task))
    except BaseException as e:  # process_capture never raises; a bug or a signal still gives a row
        msg = ("crash", f"{type(e).__name__}: {e}")
    try:
        conn.send(msg)
    except Exception as e:  # e.g. a result that cannot be pickled
        with contextlib.suppress(Exception):
            conn.send(("crash", f"the result could not be sent back ({type(e).__name__}: {e})"))
    finally:
        conn.close()


_DIED = "the worker process died while analysing this capture (killed, or out of memory?)"


def _run_fresh(queue: deque[CaptureTask], jobs: int, collect: Callable[[dict[str, Any]], None], recipe: Recipe) -> None:
    """One new process per capture, at most ``jobs`` at once, each with a pipe for its one result.

    No pool and no manager thread: the main process starts, waits for and
    ends every worker itself, so stopping (Ctrl-C, SIGTERM) cannot race with a
    pool replacing a worker.  A worker that dies is that capture's error row.
    """
    ctx = _mp_context(recipe)
    threads = worker_threads()
    running: dict[Connection, tuple[multiprocessing.process.BaseProcess, CaptureTask]] = {}
    try:
        while queue or running:
            while queue and len(running) < jobs:
                t = queue.popleft()
                reader, writer = ctx.Pipe(duplex=False)
                proc = ctx.Process(target=_fresh_worker, args=(t, writer, threads, os.getpid()),
                                   name=f"waveforms-worker-{t.key[:12]}", daemon=True)
                running[reader] = (proc, t)  # listed before it starts: a stop in between still ends it
                try:
                    proc.start()
                finally:
                    writer.close()
            sentinels = {p.sentinel: r for r, (p, _t) in running.items()}
            ready = mp_wait(list(running) + list(sentinels))
            done = {r for r in ready if r in running} | {sentinels[s] for s in ready if s in sentinels}
            for reader in [r for r in running if r in done]:
                proc, t = running.pop(reader)
                entry = _receive(reader, proc, t)
                collect(entry)
    except BaseException:
        _end([p for p, _t in running.values()])
        for r in running:
            r.close()
        raise


def _receive(reader: Connection, proc: multiprocessing.process.BaseProcess, t: CaptureTask) -> dict[str, Any]:
    """The entry a finished (or dead) worker sent, or its crash entry; the worker is then joined."""
    entry: dict[str, Any] | None = None
    try:
        if reader.poll():
            kind, payload = reader.recv()
            entry = payload if kind == "entry" else crash_entry(t, payload)
    except (EOFError, OSError):  # died while sending
        entry = None
    finally:
        reader.close()
    proc.join(timeout=10)
    if proc.is_alive():  # sent its result but does not end: stop it
        _end([proc])
    return entry if entry is not None else crash_entry(t, _DIED)


def _end(procs: Sequence[multiprocessing.process.BaseProcess], grace_s: float = 5.0) -> None:
    """Terminate the processes, wait for them, kill what is left."""
    for p in procs:
        with contextlib.suppress(Exception):
            p.terminate()
    deadline = time.monotonic() + grace_s
    for p in procs:
        with contextlib.suppress(Exception):
            p.join(timeout=max(0.0, deadline - time.monotonic()))
    for p in procs:
        with contextlib.suppress(Exception):
            if p.is_alive():
                p.kill()
                p.join(timeout=grace_s)


class _Pool:
    """A process pool of reused workers and the processes it started (to end them on Ctrl-C)."""

    def __init__(self, workers: int, recipe: Recipe) -> None:
        # no max_tasks_per_child: a pool replacing workers from its manager thread races with stopping it
        self.executor = cf.ProcessPoolExecutor(max_workers=workers, mp_context=_mp_context(recipe),
                                               initializer=_init_worker, initargs=(worker_threads(), os.getpid()))

    def kill(self) -> None:
        """Stop now: cancel what is queued and end the running workers."""
        # end the workers first, then wait for the manager thread (it sees them gone and stops); without
        # max_tasks_per_child it never starts a replacement meanwhile
        procs = list((getattr(self.executor, "_processes", None) or {}).values())
        _end(procs)
        self.executor.shutdown(wait=True, cancel_futures=True)


def run_local(todo: Sequence[CaptureTask], jobs: int, collect: Callable[[dict[str, Any]], None], recipe: Recipe,
               fresh_workers: bool = True) -> None:
    """Run tasks in local worker processes: a fresh process per capture (unless ``fresh_workers`` is False).

    At most ``jobs`` tasks are in flight.  With reused workers (a process
    pool), when the pool breaks (a worker killed) the tasks it held are
    retried alone; one that breaks the pool when alone is recorded as an
    error row.
    """
    if not todo:
        return
    # threads inside each capture (measurement blocks, speed windows) x workers never exceed the cores
    per_task = capture_threads(min(jobs, len(todo)))
    queue: deque[CaptureTask] = deque(dataclasses.replace(t, threads=per_task) for t in todo)
    if fresh_workers:
        _run_fresh(queue, max(1, jobs), collect, recipe)
        return
    suspects: deque[CaptureTask] = deque()
    pool: _Pool | None = None
    inflight: dict[cf.Future[dict[str, Any]], tuple[CaptureTask, bool]] = {}
    try:
        while queue or suspects or inflight:
            if pool is None:
                pool = _Pool(min(jobs, len(queue) + len(suspects)) or 1, recipe)
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
                        collect(crash_entry(t, _DIED))
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
                # a broken pool's manager thread has ended its workers; wait for it before the next pool
                pool.executor.shutdown(wait=True, cancel_futures=True)
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
