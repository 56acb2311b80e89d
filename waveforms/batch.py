"""Batch runs: one recipe over a whole archive of captures, in parallel and resumable.

::

    result = run(["archive/"], recipe="triage", out="out/", jobs=2)
    result.summary          # DataFrame, one row per capture (waveforms.summary columns)
    result.events           # DataFrame, every event of every capture

How it works:

* `discover` walks folders (recursively, files whose extension an importer
  claims), expands globs and accepts fsspec URLs (``s3://...``, ``file://...``).
* Each capture is one task, `process_capture`, run in its own worker process
  (a `concurrent.futures.ProcessPoolExecutor` forking a fresh child per
  capture from a pre-loaded server) or on a Dask ``distributed`` cluster.  A
  task never raises: a capture that cannot be analysed comes back as an error
  row with the reason.
* The manifest is one small JSON file per finished capture in
  ``OUT/manifest/``, written atomically as soon as the result arrives, named
  by the file's SHA-256, the recipe fingerprint and the nameplate used.  A
  rerun skips captures whose entry exists (``force=True`` reruns them); an
  interrupted run (Ctrl-C, a killed worker, a killed main process) loses only
  the captures still in progress.
* A worker that dies (killed, out of memory) breaks the process pool; the
  captures it held are retried one at a time, and the one that kills a worker
  on its own becomes an error row.

Captures and the output folder must be reachable from every worker under the
same name: a shared path (NFS, SMB mount) or an fsspec URL.
"""

from __future__ import annotations

import concurrent.futures as cf
import contextlib
import dataclasses
import glob
import hashlib
import importlib
import json
import math
import multiprocessing
import os
import re
import socket
import sys
import tempfile
import time
import traceback
from collections import deque
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import pandas as pd

from .atomic import write_text
from .errors import CaptureReadError, InvalidParameterError, WaveformsError
from .hashing import sha256_file
from .tomlfile import read_toml
from .recipe import Recipe, RunState, load_recipe, run_recipe
from .summary import error_row, events_frame, summary_frame, summary_row, write_summary

MANIFEST_FOLDER = "manifest"
CAPTURES_FOLDER = "captures"
_MANIFEST_FORMAT = "motor-waveforms batch entry"
_GLOB_CHARS = re.compile(r"[*?\[]")
#: Top-level packages whose already-imported modules the fork server pre-imports.
_PRELOAD_ROOTS = ("waveforms", "numpy", "scipy", "pandas", "pyarrow", "h5py", "matplotlib", "PIL", "jinja2", "tqdm")


# -- inputs -------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class InputFile:
    """One capture of the archive.

    Parameters
    ----------
    path : str
        Local path or fsspec URL, as workers will open it.
    name : str
        How it is shown: its path below the folder given, or the file name.
    site : str
        First folder below the folder given, else the file's own folder name.
    """

    path: str
    name: str
    site: str

    @property
    def is_url(self) -> bool:
        return "://" in self.path


def _capture_extensions() -> set[str]:
    from .io import importers

    exts = {e.lower() for imp in importers() for e in imp.extensions}
    return exts or {".h5", ".hdf5", ".csv"}


#: Extensions too generic to take on their own in a folder walk: such a file is
#: taken only when an importer's sniffer recognises it (a site's notes.txt is not a capture).
GENERIC_EXTENSIONS = frozenset({".txt", ".dat"})


def _wanted(p: Path, exts: set[str]) -> bool:
    name = p.name
    if name.startswith(".") or name.endswith(".part") or p.suffix.lower() not in exts:
        return False
    if p.suffix.lower() in GENERIC_EXTENSIONS:
        from .io import importers

        return any(_sniff(imp, p) for imp in importers())
    return True


def _sniff(imp: Any, p: Path) -> bool:
    try:
        return bool(imp.sniff(p))
    except Exception:  # a sniffer must not raise; a broken one means "no"
        return False


def discover(inputs: Sequence[str | os.PathLike[str]], exclude: Sequence[str | os.PathLike[str]] = ()) -> list[InputFile]:
    """The capture files named by folders, globs, files and fsspec URLs, sorted, without duplicates.

    A folder is walked recursively and keeps the files whose extension an
    importer claims (``.h5``, ``.csv``...; a ``.txt`` or ``.dat`` file only
    when an importer recognises its content); a glob or a file named outright
    is taken whatever its extension.  Paths below ``exclude`` (the output folder)
    are left out.

    Raises
    ------
    InvalidParameterError
        For an input that names nothing.
    """
    exts = _capture_extensions()
    skip = [Path(e).resolve() for e in exclude]
    found: dict[str, InputFile] = {}

    def add(path: str, name: str, site: str) -> None:
        if "://" not in path:
            rp = Path(path).resolve()
            if any(rp == s or s in rp.parents for s in skip):
                return
            key = str(rp)
        else:
            key = path
        found.setdefault(key, InputFile(path=path, name=name, site=site))

    for raw in inputs:
        item = os.fspath(raw)
        if "://" in item:
            for f in _discover_url(item, exts):
                add(*f)
            continue
        if _GLOB_CHARS.search(item):
            hits = sorted(glob.glob(item, recursive=True))
            files = [h for h in hits if Path(h).is_file()]
            if not files:
                raise InvalidParameterError(f"{item}: the pattern matches no file")
            for h in files:
                add(h, h, Path(h).resolve().parent.name)
            continue
        p = Path(item)
        if p.is_dir():
            n0 = len(found)
            for f in sorted(p.rglob("*")):
                if f.is_file() and _wanted(f, exts) and not any(part.startswith(".") for part in f.relative_to(p).parts):
                    rel = f.relative_to(p)
                    site = rel.parts[0] if len(rel.parts) > 1 else p.resolve().name
                    add(str(f), rel.as_posix(), site)
            if len(found) == n0 and not any(True for _ in p.rglob("*")):
                raise InvalidParameterError(f"{item}: the folder is empty")
        elif p.is_file():
            add(str(p), p.name, p.resolve().parent.name)
        else:
            raise InvalidParameterError(f"{item}: no such file or folder")
    return sorted(found.values(), key=lambda f: (f.site, f.name, f.path))


def _discover_url(url: str, exts: set[str]) -> list[tuple[str, str, str]]:
    import fsspec

    fs, root = fsspec.core.url_to_fs(url)
    proto = url.split("://", 1)[0]
    if _GLOB_CHARS.search(root):
        paths = [p for p in fs.glob(root) if fs.isfile(p)]
        base = root.split("*", 1)[0].rsplit("/", 1)[0]
    elif fs.isdir(root):
        paths = [p for p in fs.find(root) if Path(p).suffix.lower() in exts]
        base = root.rstrip("/")
    else:
        paths = [root] if fs.exists(root) else []
        base = root.rsplit("/", 1)[0]
    if not paths:
        raise InvalidParameterError(f"{url}: names no capture file")
    out = []
    for p in sorted(paths):
        rel = p[len(base):].lstrip("/") if p.startswith(base) else p.rsplit("/", 1)[-1]
        parts = rel.split("/")
        site = parts[0] if len(parts) > 1 else base.rsplit("/", 1)[-1]
        out.append((f"{proto}://{p}" if not p.startswith(f"{proto}://") else p, rel, site))
    return out


def file_sha256(path: str) -> str:
    """SHA-256 of a local file or an fsspec URL's bytes."""
    if "://" not in path:
        return sha256_file(path)
    import fsspec

    h = hashlib.sha256()
    with fsspec.open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 22), b""):
            h.update(block)
    return h.hexdigest()


# -- nameplates per site ------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class MotorMap:
    """Which nameplate goes with which capture.

    Read from TOML (paths relative to the mapping file)::

        default = "plates/generic_15kw.toml"     # optional

        [[motor]]
        site = "pump-house"                      # exact site name
        nameplate = "plates/pump_22kw.toml"

        [[motor]]
        match = "north-yard/fan*"                # glob on the capture's name
        nameplate = "plates/fan_7kw.toml"

    The first rule that fits wins; then ``default``; else the nameplate stored
    in the capture, if any.
    """

    rules: tuple[tuple[str, str, Any, str], ...]  # (field, pattern, Nameplate, source)
    default: Any = None
    default_source: str = ""

    @classmethod
    def single(cls, path: str | os.PathLike[str]) -> MotorMap:
        from .motor.nameplate import load_nameplate

        return cls(rules=(), default=load_nameplate(path), default_source=os.fspath(path))

    @classmethod
    def load(cls, path: str | os.PathLike[str]) -> MotorMap:
        from .motor.nameplate import load_nameplate

        path = Path(path)
        data, _ = read_toml(path, "motor mapping file")
        for key in data:
            if key not in ("default", "motor"):
                raise CaptureReadError(path, f"key {key}", "unknown key; known keys: ['default', 'motor']")
        rules = []
        items = data.get("motor", [])
        if not isinstance(items, list):
            raise CaptureReadError(path, "key motor", "must be an array of tables [[motor]]")
        for i, item in enumerate(items):
            where = f"motor[{i}]"
            if not isinstance(item, dict):
                raise CaptureReadError(path, f"key {where}", "must be a table")
            extra = sorted(set(item) - {"site", "match", "nameplate"})
            if extra:
                raise CaptureReadError(path, f"key {where}.{extra[0]}", "unknown key; known keys: ['match', 'nameplate', 'site']")
            sel = [k for k in ("site", "match") if k in item]
            if len(sel) != 1 or not isinstance(item[sel[0]], str):
                raise CaptureReadError(path, f"key {where}", "give exactly one of site = \"...\" or match = \"glob\"")
            plate_file = item.get("nameplate")
            if not isinstance(plate_file, str):
                raise CaptureReadError(path, f"key {where}.nameplate", "missing; the nameplate TOML file for these captures")
            full = (path.parent / plate_file)
            rules.append((sel[0], item[sel[0]], load_nameplate(full), str(full)))
        default = data.get("default")
        if default is not None and not isinstance(default, str):
            raise CaptureReadError(path, "key default", f"{default!r} must be a nameplate file name")
        plate = None if default is None else load_nameplate(path.parent / default)
        return cls(rules=tuple(rules), default=plate, default_source="" if default is None else str(path.parent / default))

    def for_input(self, f: InputFile) -> tuple[Any, str]:
        """(Nameplate or None, where it came from) for one capture."""
        import fnmatch

        for field, pattern, plate, source in self.rules:
            if field == "site" and f.site == pattern:
                return plate, source
            if field == "match" and (fnmatch.fnmatchcase(f.name, pattern) or fnmatch.fnmatchcase(f.path, pattern)):
                return plate, source
        return self.default, self.default_source


def _plate_digest(plate: Any) -> str:
    if plate is None:
        return "none"
    d = plate.to_dict()
    d.pop("warnings", None)
    return hashlib.sha256(json.dumps(d, sort_keys=True, default=str).encode()).hexdigest()[:12]


# -- one capture (runs in a worker) ---------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class CaptureTask:
    """Everything a worker needs for one capture (plain, picklable data)."""

    input: InputFile
    sha256: str
    key: str
    recipe: Recipe
    nameplate: dict[str, Any] | None
    nameplate_source: str
    out_dir: str | None
    out_root: str | None


def _safe_name(name: str) -> str:
    s = re.sub(r"[^A-Za-z0-9._-]+", "_", name.replace("/", "__")).strip("._")
    return (s or "capture")[:80]


def capture_folder(f: InputFile, sha256: str) -> str:
    """Folder name (below ``OUT/captures``) of one capture's outputs."""
    return f"{_safe_name(f.name)}-{sha256[:10]}"


@contextlib.contextmanager
def _local_copy(path: str):
    """A local file for ``path``: itself, or a cached download of an fsspec URL."""
    if "://" not in path:
        yield path
        return
    import fsspec

    with tempfile.TemporaryDirectory(prefix="waveforms-") as tmp:
        local = fsspec.open_local(f"simplecache::{path}", simplecache={"cache_storage": tmp})
        yield local


def process_capture(task: CaptureTask) -> dict[str, Any]:
    """Run the recipe on one capture and return its manifest entry; never raises.

    The entry holds the summary ``row`` and the ``events`` (list of records).
    A capture that cannot be analysed gives ``row["status"] == "error"`` and the
    reason in ``row["error"]``: the package's own one-line message for a bad
    input, or the exception type and text (plus the last frame) for anything else.
    """
    t0 = time.perf_counter()
    started = time.time()
    f = task.input
    extra: dict[str, Any] = {"path": f.path, "sha256": task.sha256, "recipe": task.recipe.name,
                             "recipe_hash": task.recipe.fingerprint()[:16]}
    if task.out_dir and task.out_root:
        extra["outputs"] = os.path.relpath(task.out_dir, task.out_root)
    try:
        plate = None
        if task.nameplate is not None:
            from .motor.nameplate import Nameplate

            plate = Nameplate.from_dict({k: v for k, v in task.nameplate.items() if k != "warnings"}, task.nameplate_source)
        with _local_copy(f.path) as local:
            try:
                state = run_recipe(task.recipe, local, nameplate=plate, out_dir=task.out_dir,
                                   nameplate_source=task.nameplate_source, origin=f.path if f.is_url else "")
            except WaveformsError as e:
                if f.is_url:  # name the URL, not the temporary copy
                    raise _renamed(e, local, f.path) from None
                raise
        report = state.outputs.get("html", "")
        if report and task.out_root:
            extra["report"] = os.path.relpath(report, task.out_root)
        extra["elapsed_s"] = time.perf_counter() - t0
        row = summary_row(state, f.name, f.site, extra)
        events = _records(events_frame(state.events))
        _close(state)
    except WaveformsError as e:
        extra["elapsed_s"] = time.perf_counter() - t0
        row, events = error_row(f.name, f.site, str(e), extra), []
    except MemoryError:
        extra["elapsed_s"] = time.perf_counter() - t0
        row, events = error_row(f.name, f.site, "out of memory while analysing this capture", extra), []
    except Exception as e:  # failure isolation: any bug becomes this capture's error row
        tb = traceback.extract_tb(e.__traceback__)
        where = f" (at {Path(tb[-1].filename).name}:{tb[-1].lineno})" if tb else ""
        extra["elapsed_s"] = time.perf_counter() - t0
        row, events = error_row(f.name, f.site, f"{type(e).__name__}: {e}{where}", extra), []
    return {"format": _MANIFEST_FORMAT, "key": task.key, "row": row, "events": events,
            "worker": f"{socket.gethostname()}:{os.getpid()}", "started": started, "finished": time.time()}


class _UrlError(WaveformsError):
    """A capture read through a local copy failed; the message names the URL."""


def _renamed(err: WaveformsError, local: str, url: str) -> WaveformsError:
    return _UrlError(str(err).replace(local, url))


def _close(state: RunState) -> None:
    src = getattr(state.capture, "source", None)
    if hasattr(src, "close"):
        with contextlib.suppress(Exception):
            src.close()


def _records(frame: pd.DataFrame) -> list[dict[str, Any]]:
    recs = frame.to_dict("records")
    return [{k: (None if isinstance(v, float) and not math.isfinite(v) else v) for k, v in r.items()} for r in recs]


# -- the manifest -----------------------------------------------------------------------------
def _entry_path(out: Path, key: str) -> Path:
    return out / MANIFEST_FOLDER / f"{key}.json"


def read_manifest(out: str | os.PathLike[str]) -> dict[str, dict[str, Any]]:
    """Finished entries of an output folder, by key (unreadable entries are ignored: they rerun)."""
    folder = Path(out) / MANIFEST_FOLDER
    entries: dict[str, dict[str, Any]] = {}
    if not folder.is_dir():
        return entries
    for p in folder.glob("*.json"):
        try:
            e = json.loads(p.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue
        if isinstance(e, dict) and e.get("format") == _MANIFEST_FORMAT and e.get("key") == p.stem:
            entries[p.stem] = e
    return entries


def _write_entry(out: Path, entry: dict[str, Any]) -> None:
    write_text(_entry_path(out, entry["key"]), json.dumps(entry, allow_nan=True, default=str))


# -- the run ---------------------------------------------------------------------------------
@dataclasses.dataclass
class BatchResult:
    """Outcome of `run`.

    Attributes
    ----------
    summary : DataFrame
        One row per capture (`waveforms.summary.SUMMARY_COLUMNS`), in input order.
    events : DataFrame
        Every event: ``file``, ``site``, then the event columns.
    n_done, n_skipped, n_failed : int
        Analysed in this run, taken from the manifest, with an error row.
    interrupted : bool
        True when the run was stopped (Ctrl-C) before every capture was done.
    out : Path or None
    files : dict
        ``summary.csv``, ``summary.parquet``, ``index.html`` paths when written.
    """

    summary: pd.DataFrame
    events: pd.DataFrame
    n_done: int = 0
    n_skipped: int = 0
    n_failed: int = 0
    interrupted: bool = False
    out: Path | None = None
    files: dict[str, Path] = dataclasses.field(default_factory=dict)

    @property
    def ok(self) -> bool:
        return self.n_failed == 0 and not self.interrupted

    def cycles(self, file: str) -> pd.DataFrame:
        """The per-cycle table of one capture (by its ``file`` name), read from its output folder.

        Needs an output folder and a recipe whose report stage writes the table
        (``cycles = "parquet"`` or ``"csv"``, the shipped recipes do).
        """
        rows = self.summary[self.summary["file"] == file]
        if rows.empty:
            raise InvalidParameterError(f"{file!r} is not a capture of this run")
        if self.out is None or not rows["outputs"].iloc[0]:
            raise InvalidParameterError(f"{file!r}: no output folder, so no cycle table was kept")
        folder = self.out / rows["outputs"].iloc[0]
        for name, reader in (("cycles.parquet", pd.read_parquet), ("cycles.csv", pd.read_csv)):
            if (folder / name).is_file():
                return reader(folder / name)
        raise InvalidParameterError(f"{file!r}: the recipe wrote no cycle table (report.cycles = 'none'?)")


def _resolve(inputs: Any, recipe: Any, motor: Any, motors: Any, out: Any) -> tuple[Any, list[Any], Any, Path | None, list[Any]]:
    """Recipe, input list, nameplate map, output folder and discovered captures, shared by `run` and `plan`."""
    rec = load_recipe(recipe)
    if isinstance(inputs, (str, os.PathLike)):
        inputs = [inputs]
    mmap = _motor_map(motor, motors)
    out_path = None if out is None else Path(out)
    files = discover(inputs, exclude=[out_path] if out_path is not None else [])
    return rec, inputs, mmap, out_path, files


def run(
    inputs: Sequence[str | os.PathLike[str]] | str | os.PathLike[str],
    recipe: Recipe | str | os.PathLike[str] | None = None,
    out: str | os.PathLike[str] | None = None,
    jobs: int | None = None,
    motor: str | os.PathLike[str] | None = None,
    motors: str | os.PathLike[str] | None = None,
    force: bool = False,
    retry_errors: bool = False,
    scheduler: Any = None,
    progress: bool = False,
    on_result: Callable[[dict[str, Any]], None] | None = None,
    fresh_workers: bool = True,
) -> BatchResult:
    """Run a recipe over an archive of captures.

    Parameters
    ----------
    inputs : path, glob, fsspec URL, or a list of them
    recipe : Recipe, shipped name, file or None (default recipe)
    out : path-like, optional
        Output folder: per-capture outputs in ``captures/``, the manifest, the
        summary files.  Without one nothing is written and nothing resumes.
    jobs : int, optional
        Worker processes; default the recipe's ``batch.jobs``, 0 = CPU count.
    motor : path-like, optional
        One nameplate TOML for every capture.
    motors : path-like, optional
        A mapping of sites / name patterns to nameplates (`MotorMap`).
    force : bool
        Rerun captures already in the manifest.
    retry_errors : bool
        Rerun captures whose manifest entry is an error row.
    scheduler : str or distributed.Client, optional
        Dask scheduler address (or a client); default the recipe's
        ``batch.scheduler``; empty = local worker processes.
    progress : bool
        Show a progress bar on stderr.
    on_result : callable, optional
        Called in the main process with each new entry (after it is saved).
    fresh_workers : bool
        Local runs: a fresh worker process for every capture (nothing carries
        over from one capture to the next).  False reuses each worker for many
        captures: faster (no fork per capture), less isolated.

    Returns
    -------
    BatchResult
    """
    rec, inputs, mmap, out_path, files = _resolve(inputs, recipe, motor, motors, out)
    if not files:
        raise InvalidParameterError(f"no capture files found in {[os.fspath(i) for i in inputs]}")
    n_jobs = rec.batch.get("jobs", 0) if jobs is None else int(jobs)
    if n_jobs < 0:
        raise InvalidParameterError(f"jobs={n_jobs} must be 0 (one per core) or more")
    n_jobs = n_jobs or (os.cpu_count() or 1)
    sched = rec.batch.get("scheduler", "") if scheduler is None else scheduler

    if out_path is not None:
        out_path.mkdir(parents=True, exist_ok=True)
    with _output_lock(out_path):
        done = read_manifest(out_path) if out_path is not None else {}
        tasks, todo, _states = _plan(files, rec, mmap, out_path, done, force, retry_errors, n_jobs)
        keys = [t.key for t in tasks]
        fp = rec.fingerprint()
        n_skipped = len({t.key for t in tasks} - {t.key for t in todo})
        new: dict[str, dict[str, Any]] = {}

        bar = _progress(len(todo), progress)
        n_failed_new = 0

        def collect(entry: dict[str, Any]) -> None:
            nonlocal n_failed_new
            if out_path is not None:
                _write_entry(out_path, entry)
            new[entry["key"]] = entry
            if entry["row"].get("status") == "error":
                n_failed_new += 1
            if bar is not None:
                bar.update(1)
                bar.set_postfix(failed=n_failed_new, refresh=False)
            if on_result is not None:
                on_result(entry)

        interrupted = False
        try:
            if sched:
                _run_dask(todo, sched, collect)
            else:
                _run_local(todo, n_jobs, collect, rec, fresh_workers)
        except KeyboardInterrupt:
            interrupted = True
        finally:
            if bar is not None:
                bar.close()

        entries = {**done, **new}
        rows, ev_frames = [], []
        for t, key in zip(tasks, keys, strict=True):
            e = entries.get(key)
            if e is None:
                continue  # not finished (interrupted)
            row = dict(e["row"])
            row.update(file=t.input.name, site=t.input.site, path=t.input.path)
            rows.append(row)
            if e.get("events"):
                fr = pd.DataFrame.from_records(e["events"])
                fr.insert(0, "site", t.input.site)
                fr.insert(0, "file", t.input.name)
                ev_frames.append(fr)
        summary = summary_frame(rows)
        events = pd.concat(ev_frames, ignore_index=True) if ev_frames else _empty_events()
        written: dict[str, Path] = {}
        if out_path is not None:
            written = write_summary(summary, out_path, title=f"Capture summary: recipe {rec.name}")
            index = {"format": "motor-waveforms batch manifest", "recipe": rec.name, "recipe_fingerprint": fp,
                     "recipe_source": rec.source, "complete": not interrupted,
                     "captures": [{"file": t.input.name, "path": t.input.path, "key": k, "done": k in entries}
                                  for t, k in zip(tasks, keys, strict=True)]}
            write_text(out_path / "manifest.json", json.dumps(index, indent=1))
        n_failed = int((summary["status"] == "error").sum()) if len(summary) else 0
        return BatchResult(summary=summary, events=events, n_done=len(new), n_skipped=n_skipped, n_failed=n_failed,
                           interrupted=interrupted, out=out_path, files=written)


def _plan(files: Sequence[InputFile], rec: Recipe, mmap: MotorMap, out_path: Path | None,
          done: dict[str, dict[str, Any]], force: bool, retry_errors: bool, n_jobs: int,
          ) -> tuple[list[CaptureTask], list[CaptureTask], list[str]]:
    """Every capture's task, the tasks to run, and what will happen to each capture."""
    hashes = _hash_all([f.path for f in files], n_jobs)
    fp = rec.fingerprint()
    tasks: list[CaptureTask] = []
    todo: list[CaptureTask] = []
    states: list[str] = []
    seen: set[str] = set()
    for f, sha in zip(files, hashes, strict=True):
        plate, plate_src = mmap.for_input(f)
        key = f"{sha[:32]}-{fp[:12]}-{_plate_digest(plate)[:8]}"
        cap_dir = None if out_path is None else str(out_path / CAPTURES_FOLDER / capture_folder(f, sha))
        t = CaptureTask(input=f, sha256=sha, key=key, recipe=rec, nameplate=None if plate is None else plate.to_dict(),
                        nameplate_source=plate_src, out_dir=cap_dir, out_root=None if out_path is None else str(out_path))
        tasks.append(t)
        prior = done.get(key)
        failed = prior is not None and prior["row"].get("status") == "error"
        fresh = prior is None or force or prior.get("retry", False) or (retry_errors and failed)
        if key in seen:
            states.append("same content as an earlier file: analysed once")
        elif fresh:
            todo.append(t)
            seen.add(key)
            states.append("to run")
        else:
            states.append("failed before: skipped (--retry-errors reruns it)" if failed else "done: skipped")
    return tasks, todo, states


def plan(
    inputs: Sequence[str | os.PathLike[str]] | str | os.PathLike[str],
    recipe: Recipe | str | os.PathLike[str] | None = None,
    out: str | os.PathLike[str] | None = None,
    motor: str | os.PathLike[str] | None = None,
    motors: str | os.PathLike[str] | None = None,
    force: bool = False,
    retry_errors: bool = False,
) -> pd.DataFrame:
    """What `run` would do, without doing it: one row per capture (``file``, ``site``, ``path``,
    ``sha256``, ``nameplate``, ``plan``).  Nothing is written."""
    rec, inputs, mmap, out_path, files = _resolve(inputs, recipe, motor, motors, out)
    done = read_manifest(out_path) if out_path is not None else {}
    tasks, _todo, states = _plan(files, rec, mmap, out_path, done, force, retry_errors, os.cpu_count() or 1)
    return pd.DataFrame({
        "file": [t.input.name for t in tasks], "site": [t.input.site for t in tasks],
        "path": [t.input.path for t in tasks], "sha256": [t.sha256 for t in tasks],
        "nameplate": [t.nameplate_source for t in tasks], "plan": states,
    })


def _motor_map(motor: str | os.PathLike[str] | None, motors: str | os.PathLike[str] | None) -> MotorMap:
    if motor is not None and motors is not None:
        raise InvalidParameterError("give either motor (one nameplate for all) or motors (a mapping), not both")
    if motor is not None:
        return MotorMap.single(motor)
    return MotorMap.load(motors) if motors is not None else MotorMap(rules=())


LOCK_FILE = ".batch.lock"


@contextlib.contextmanager
def _output_lock(out: Path | None):
    """One batch run per output folder: a lock file holding host and pid (a stale one is taken over)."""
    if out is None:
        yield
        return
    lock = out / LOCK_FILE
    me = f"{socket.gethostname()}:{os.getpid()}"
    for _attempt in range(2):
        try:
            fd = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            try:
                host, pid = lock.read_text(encoding="utf-8").strip().rsplit(":", 1)
            except (OSError, ValueError):
                host, pid = "", "0"
            if host == socket.gethostname() and not _alive(int(pid)):
                lock.unlink(missing_ok=True)  # left by a run that was killed
                continue
            raise InvalidParameterError(
                f"{out}: another batch run ({host}, pid {pid}) is writing this output folder; "
                f"wait for it, use another --out, or delete {lock} if that run is gone") from None
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(me)
        break
    try:
        yield
    finally:
        with contextlib.suppress(OSError):
            if lock.read_text(encoding="utf-8").strip() == me:
                lock.unlink()


def _alive(pid: int) -> bool:
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _empty_events() -> pd.DataFrame:
    fr = events_frame([])
    fr.insert(0, "site", pd.Series(dtype=object))
    fr.insert(0, "file", pd.Series(dtype=object))
    return fr


def _hash_all(paths: Sequence[str], n_threads: int) -> list[str]:
    def one(p: str) -> str:
        try:
            return file_sha256(p)
        except OSError as e:
            # an unreadable file still gets a row: key it by its path, it will fail in the worker
            return "unreadable-" + hashlib.sha256(f"{p}:{e}".encode()).hexdigest()

    with cf.ThreadPoolExecutor(max_workers=max(1, min(8, n_threads))) as ex:
        return list(ex.map(one, paths))


def _progress(total: int, enabled: bool) -> Any:
    if not enabled:
        return None
    from tqdm import tqdm

    return tqdm(total=total, desc="captures", unit="file", file=sys.stderr, dynamic_ncols=True,
                postfix={"failed": 0}, smoothing=0.1)


# -- executors -------------------------------------------------------------------------------
def _warm_modules(recipe: Recipe) -> list[str]:
    """Import, here, what the recipe's stages will import; return the module names to pre-load.

    Workers are forked from a server that has imported these once, so a
    fresh process per capture costs a fork, not a fresh import of numpy,
    scipy, pandas and the package.
    """
    from .io import importers
    from .recipe import get_stage

    importers()
    for name in recipe.stage_names:
        lib = get_stage(name).library.split(":")[0]
        if lib:
            with contextlib.suppress(ImportError):
                importlib.import_module(lib)
    extras = ["waveforms.analysis", "waveforms.quality", "waveforms.motor.nameplate", "pyarrow.parquet"]
    if "report" in recipe.stage_names:
        extras += ["waveforms.report.plots", "waveforms.report.html", "matplotlib.backends.backend_agg"]
    for extra in extras:
        with contextlib.suppress(ImportError):
            importlib.import_module(extra)
    with contextlib.suppress(ImportError):
        from .detect import detector_names

        detector_names()  # loads the built-in detector modules
    names = sorted(m for m in list(sys.modules) if m.split(".")[0] in _PRELOAD_ROOTS and "._" not in m
                   and not m.startswith(("numpy.tests", "scipy._lib.tests")))
    return names + ["waveforms._batch_warmup"]  # last: runs the chain once in the server


#: Worker processes use one BLAS / OpenMP thread each: the parallelism is one
#: capture per process (--jobs), and threaded BLAS in every process would
#: oversubscribe the cores (common practice, no source).
_WORKER_ENV = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


def _mp_context(recipe: Recipe) -> multiprocessing.context.BaseContext:
    """The "forkserver" context, its server started (once per process) warm and with one BLAS thread."""
    import multiprocessing.forkserver as fs

    ctx = multiprocessing.get_context("forkserver")
    ctx.set_forkserver_preload(_warm_modules(recipe))
    saved = {k: os.environ.get(k) for k in _WORKER_ENV}
    try:
        for k, v in _WORKER_ENV.items():
            if saved[k] is None:  # a value the user set is kept
                os.environ[k] = v
        fs.ensure_running()  # the server inherits this environment; ours is restored below
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
    return ctx


def _crash_entry(task: CaptureTask, why: str) -> dict[str, Any]:
    f = task.input
    row = error_row(f.name, f.site, why, {"path": f.path, "sha256": task.sha256, "recipe": task.recipe.name,
                                          "recipe_hash": task.recipe.fingerprint()[:16]})
    # "retry": the failure says nothing about the file itself, so a rerun tries again
    return {"format": _MANIFEST_FORMAT, "key": task.key, "row": row, "events": [], "retry": True}


def _run_local(todo: Sequence[CaptureTask], jobs: int, collect: Callable[[dict[str, Any]], None], recipe: Recipe,
               fresh_workers: bool = True) -> None:
    """Run tasks in a process pool, one fresh worker process per capture (unless ``fresh_workers`` is False).

    At most ``jobs`` tasks are in flight.  When the pool breaks (a worker
    killed), the tasks it held are retried alone; one that breaks the pool
    when alone is recorded as an error row.
    """
    if not todo:
        return
    queue: deque[CaptureTask] = deque(todo)
    suspects: deque[CaptureTask] = deque()
    pool: cf.ProcessPoolExecutor | None = None
    inflight: dict[cf.Future[dict[str, Any]], tuple[CaptureTask, bool]] = {}
    try:
        while queue or suspects or inflight:
            if pool is None:
                pool = cf.ProcessPoolExecutor(max_workers=min(jobs, len(queue) + len(suspects)) or 1,
                                              mp_context=_mp_context(recipe),
                                              max_tasks_per_child=1 if fresh_workers else None)
            if suspects:
                if not inflight:
                    t = suspects.popleft()
                    inflight[pool.submit(process_capture, t)] = (t, True)
            else:
                while queue and len(inflight) < jobs:
                    t = queue.popleft()
                    inflight[pool.submit(process_capture, t)] = (t, False)
            finished, _ = cf.wait(list(inflight), return_when=cf.FIRST_COMPLETED)
            broken = False
            for fut in finished:
                t, alone = inflight.pop(fut)
                try:
                    entry = fut.result()
                except cf.process.BrokenProcessPool:
                    broken = True
                    if alone:
                        collect(_crash_entry(t, "the worker process died while analysing this capture "
                                                "(killed, or out of memory?)"))
                    else:
                        suspects.append(t)
                except Exception as e:  # e.g. a result that cannot be sent back
                    collect(_crash_entry(t, f"{type(e).__name__}: {e}"))
                else:
                    collect(entry)
            if broken:
                for fut in cf.as_completed(list(inflight)):
                    t, _alone = inflight.pop(fut)
                    try:
                        collect(fut.result())
                    except Exception:
                        suspects.append(t)
                pool.shutdown(wait=False, cancel_futures=True)
                pool = None
    except BaseException:
        if pool is not None:
            _kill_pool(pool)
            pool = None
        raise
    finally:
        if pool is not None:
            pool.shutdown(wait=True)


def _kill_pool(pool: cf.ProcessPoolExecutor) -> None:
    """Stop a pool now: cancel what is queued and end the running workers (Ctrl-C)."""
    procs = list(getattr(pool, "_processes", {}).values())
    pool.shutdown(wait=False, cancel_futures=True)
    for p in procs:
        with contextlib.suppress(Exception):
            p.terminate()
    for p in procs:
        with contextlib.suppress(Exception):
            p.join(timeout=5)


def _run_dask(todo: Sequence[CaptureTask], scheduler: Any, collect: Callable[[dict[str, Any]], None]) -> None:
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
                entry = _crash_entry(t, f"{type(e).__name__}: {e}")
            collect(entry)
            fut.release()
    except BaseException:
        client.cancel(futures)
        raise
    finally:
        if own:
            client.close()


# -- one capture, for notebooks --------------------------------------------------------------------
@dataclasses.dataclass
class CaptureResult:
    """Pandas views of one capture's run (see `run_one`)."""

    summary: pd.Series
    events: pd.DataFrame
    cycles: pd.DataFrame | None
    speed: pd.DataFrame | None
    state: RunState


def run_one(
    capture: Any,
    recipe: Recipe | str | os.PathLike[str] | None = None,
    nameplate: Any = None,
    out_dir: str | os.PathLike[str] | None = None,
) -> CaptureResult:
    """Run a recipe on one capture in this process and return pandas objects.

    Errors are raised (not turned into rows) so a notebook shows them.
    """
    state = run_recipe(recipe, capture, nameplate=nameplate, out_dir=out_dir)
    name = Path(state.source).name
    rec = load_recipe(recipe)
    row = summary_row(state, name, Path(state.source).resolve().parent.name if "://" not in state.source else "",
                      {"path": state.source, "recipe": rec.name, "recipe_hash": rec.fingerprint()[:16],
                       "report": state.outputs.get("html", ""), "sha256": getattr(state.capture.provenance, "sha256", "")})
    return CaptureResult(summary=summary_frame([row]).iloc[0], events=state.events_frame(), cycles=state.cycles,
                         speed=state.speed, state=state)

